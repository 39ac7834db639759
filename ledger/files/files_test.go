package files

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

// prompt is how long a refusal may take: it must not wait on a writer or
// read a device.
const prompt = 2 * time.Second

func mkfifo(t *testing.T, dir string) string {
	t.Helper()
	p := filepath.Join(dir, "fifo")
	if err := syscall.Mkfifo(p, 0o600); err != nil {
		t.Skipf("no FIFO on this system: %v", err)
	}
	return p
}

func mksock(t *testing.T, dir string) string {
	t.Helper()
	p := filepath.Join(dir, "s")
	ln, err := net.Listen("unix", p)
	if err != nil {
		t.Skipf("no Unix socket: %v", err)
	}
	t.Cleanup(func() { ln.Close() })
	return p
}

func TestOpenRegularRefusesAdversarial(t *testing.T) {
	dir := t.TempDir()
	fifo := mkfifo(t, dir)
	sock := mksock(t, dir)
	linkZero := filepath.Join(dir, "zero-link")
	if err := os.Symlink("/dev/zero", linkZero); err != nil {
		t.Fatal(err)
	}
	linkFifo := filepath.Join(dir, "fifo-link")
	if err := os.Symlink(fifo, linkFifo); err != nil {
		t.Fatal(err)
	}
	sub := filepath.Join(dir, "sub")
	if err := os.Mkdir(sub, 0o700); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name, path, says string
	}{
		{"FIFO without a writer", fifo, "FIFO"},
		{"link to a FIFO", linkFifo, "FIFO"},
		{"/dev/zero", "/dev/zero", "character device"},
		{"/dev/null", "/dev/null", "character device"},
		{"link to /dev/zero", linkZero, "character device"},
		{"folder", sub, "folder"},
		{"socket", sock, "socket"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := os.Stat(c.path); err != nil {
				t.Skipf("%s: %v", c.path, err)
			}
			start := time.Now()
			done := make(chan error, 1)
			go func() {
				f, err := OpenRegular(context.Background(), c.path)
				if f != nil {
					f.Close()
				}
				done <- err
			}()
			select {
			case err := <-done:
				if !errors.Is(err, ErrNotRegular) || !strings.Contains(err.Error(), c.says) || !strings.Contains(err.Error(), c.path) {
					t.Fatalf("err = %v, want ErrNotRegular naming %q and the path", err, c.says)
				}
			case <-time.After(prompt):
				t.Fatalf("OpenRegular(%s) still blocked after %v", c.path, prompt)
			}
			if d := time.Since(start); d > prompt {
				t.Fatalf("took %v", d)
			}
			// ReadAllLimited refuses the same, as promptly.
			if _, err := ReadAllLimited(context.Background(), c.path, 1<<20); !errors.Is(err, ErrNotRegular) {
				t.Fatalf("ReadAllLimited: err = %v, want ErrNotRegular", err)
			}
		})
	}
}

// TestOpenCheckedRefuses covers a file swapped between OpenRegular's check
// and its open: the check on the open descriptor refuses it, promptly.
func TestOpenCheckedRefuses(t *testing.T) {
	dir := t.TempDir()
	for _, p := range []string{mkfifo(t, dir), "/dev/zero", dir} {
		done := make(chan error, 1)
		go func() {
			f, err := openChecked(p)
			if f != nil {
				f.Close()
			}
			done <- err
		}()
		select {
		case err := <-done:
			if !errors.Is(err, ErrNotRegular) {
				t.Errorf("%s: err = %v, want ErrNotRegular", p, err)
			}
		case <-time.After(prompt):
			t.Fatalf("%s: open blocked", p)
		}
	}
}

func TestOpenRegularAccepts(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "dive.csv")
	want := []byte("t,depth_m\n0,0\n")
	if err := os.WriteFile(p, want, 0o600); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "link.csv")
	if err := os.Symlink(p, link); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{p, link} {
		f, err := OpenRegular(context.Background(), path)
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		got, err := io.ReadAll(f)
		f.Close()
		if err != nil || !bytes.Equal(got, want) {
			t.Fatalf("%s: %q %v", path, got, err)
		}
	}
	if _, err := OpenRegular(context.Background(), filepath.Join(dir, "missing")); !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("missing file: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := OpenRegular(ctx, p); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled: %v", err)
	}
}

func TestReadAllLimited(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, n int) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, bytes.Repeat([]byte("x"), n), 0o600); err != nil {
			t.Fatal(err)
		}
		return p
	}
	cancelled, cancel := context.WithCancel(context.Background())
	cancel()
	cases := []struct {
		name string
		path string
		max  int64
		ctx  context.Context
		n    int
		err  error
	}{
		{"one byte over the limit", write("over", 1025), 1024, context.Background(), 0, ErrTooLarge},
		{"far over the limit", write("far", 1<<20), 1024, context.Background(), 0, ErrTooLarge},
		{"cancelled", write("c", 10), 1024, cancelled, 0, context.Canceled},
		{"exactly at the limit", write("at", 1024), 1024, context.Background(), 1024, nil},
		{"empty", write("empty", 0), 1024, context.Background(), 0, nil},
		{"zero limit, empty file", write("empty0", 0), 0, context.Background(), 0, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b, err := ReadAllLimited(c.ctx, c.path, c.max)
			if c.err != nil {
				if !errors.Is(err, c.err) || b != nil {
					t.Fatalf("got %d bytes, err %v; want %v", len(b), err, c.err)
				}
				if c.err == ErrTooLarge && !strings.Contains(err.Error(), fmt.Sprint(c.max)) {
					t.Fatalf("error does not state the limit: %v", err)
				}
				return
			}
			if err != nil || len(b) != c.n {
				t.Fatalf("got %d bytes, err %v; want %d", len(b), err, c.n)
			}
		})
	}
}

// slow is an endless reader, like a very long stream.
type endless struct{ reads int }

func (e *endless) Read(p []byte) (int, error) {
	e.reads++
	return len(p), nil
}

func TestReaderStopsOnCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	src := &endless{}
	r := NewReader(ctx, src)
	buf := make([]byte, 4096)
	for i := 0; i < 5; i++ {
		if _, err := r.Read(buf); err != nil {
			t.Fatal(err)
		}
	}
	cancel()
	n, err := r.Read(buf)
	if n != 0 || !errors.Is(err, context.Canceled) {
		t.Fatalf("after cancel: n=%d err=%v", n, err)
	}
	if src.reads != 5 {
		t.Fatalf("the source was read after cancel: %d reads", src.reads)
	}
	// A copy of an endless stream ends once the context is cancelled.
	ctx2, cancel2 := context.WithTimeout(context.Background(), 50*time.Millisecond)
	defer cancel2()
	done := make(chan error, 1)
	go func() { _, err := io.Copy(io.Discard, NewReader(ctx2, &endless{})); done <- err }()
	select {
	case err := <-done:
		if !errors.Is(err, context.DeadlineExceeded) {
			t.Fatalf("copy ended with %v", err)
		}
	case <-time.After(prompt):
		t.Fatal("copy of an endless stream did not stop on cancel")
	}
}

func listDir(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range es {
		names = append(names, e.Name())
	}
	return names
}

var errDiskFull = errors.New("no space left on device (simulated)")

func TestWriteAtomicAdversarial(t *testing.T) {
	old := []byte("%PDF-1.4 the report as issued\n")
	cases := []struct {
		name  string
		setup func(t *testing.T, dir, dest string) // makes dest
		write func(io.Writer) error
		err   error
	}{
		{"error mid-write (a full disk)", func(t *testing.T, dir, dest string) {},
			func(w io.Writer) error {
				if _, err := w.Write([]byte("%PDF-1.4 half a new rep")); err != nil {
					return err
				}
				return errDiskFull
			}, errDiskFull},
		{"panic mid-write", func(t *testing.T, dir, dest string) {},
			func(w io.Writer) error { w.Write([]byte("partial")); panic("render failed") }, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			dest := filepath.Join(dir, "report.pdf")
			if err := os.WriteFile(dest, old, 0o644); err != nil {
				t.Fatal(err)
			}
			c.setup(t, dir, dest)
			func() {
				defer func() { recover() }()
				err := WriteAtomic(dest, c.write, 0o644)
				if !errors.Is(err, c.err) {
					t.Errorf("err = %v, want %v", err, c.err)
				}
			}()
			got, err := os.ReadFile(dest)
			if err != nil || !bytes.Equal(got, old) {
				t.Fatalf("old file changed: %q %v", got, err)
			}
			if names := listDir(t, dir); len(names) != 1 {
				t.Fatalf("temporary files left behind: %v", names)
			}
		})
	}
}

func TestWriteAtomicRefusesSymlink(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "precious")
	orig := []byte("do not overwrite\n")
	if err := os.WriteFile(target, orig, 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ name, link string }{
		{"link to an existing file", target},
		{"dangling link", filepath.Join(dir, "not-yet")},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dest := filepath.Join(dir, fmt.Sprintf("report%d.pdf", i))
			if err := os.Symlink(c.link, dest); err != nil {
				t.Fatal(err)
			}
			called := false
			err := WriteAtomic(dest, func(w io.Writer) error { called = true; _, err := w.Write([]byte("new")); return err }, 0o644)
			if !errors.Is(err, ErrSymlink) || called {
				t.Fatalf("err = %v (write called %v), want ErrSymlink before writing", err, called)
			}
			if got, _ := os.ReadFile(target); !bytes.Equal(got, orig) {
				t.Fatalf("link target changed: %q", got)
			}
			if _, err := os.Lstat(filepath.Join(dir, "not-yet")); !errors.Is(err, fs.ErrNotExist) {
				t.Fatalf("dangling link's target was created: %v", err)
			}
			if st, err := os.Lstat(dest); err != nil || st.Mode()&fs.ModeSymlink == 0 {
				t.Fatalf("the link itself was replaced: %v %v", st, err)
			}
		})
	}
}

func TestWriteAtomicRefusesNonRegular(t *testing.T) {
	dir := t.TempDir()
	sub := filepath.Join(dir, "sub")
	if err := os.Mkdir(sub, 0o700); err != nil {
		t.Fatal(err)
	}
	fifo := mkfifo(t, dir)
	for _, dest := range []string{sub, fifo, "/dev/null"} {
		err := WriteAtomic(dest, func(w io.Writer) error { return nil }, 0o644)
		if !errors.Is(err, ErrNotRegular) {
			t.Errorf("%s: err = %v, want ErrNotRegular", dest, err)
		}
	}
	if st, err := os.Lstat("/dev/null"); err == nil && st.Mode()&fs.ModeCharDevice == 0 {
		t.Fatalf("/dev/null was replaced: %v", st.Mode())
	}
}

func TestWriteAtomicReplaces(t *testing.T) {
	dir := t.TempDir()
	dest := filepath.Join(dir, "report.pdf")
	// A hard link elsewhere to the old file keeps the old content: the
	// new file replaces the name, it is not written into the old inode.
	if err := os.WriteFile(dest, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	other := filepath.Join(dir, "other-name")
	if err := os.Link(dest, other); err != nil {
		t.Fatal(err)
	}
	old := syscall.Umask(0o022)
	defer syscall.Umask(old)
	if err := WriteAtomic(dest, func(w io.Writer) error { _, err := w.Write([]byte("new report")); return err }, 0o666); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(dest); string(got) != "new report" {
		t.Fatalf("dest = %q", got)
	}
	if got, _ := os.ReadFile(other); string(got) != "old" {
		t.Fatalf("hard link written through: %q", got)
	}
	st, err := os.Stat(dest)
	if err != nil || st.Mode().Perm() != 0o644 {
		t.Fatalf("mode %v (umask 022 must apply to 0666): %v", st.Mode().Perm(), err)
	}
	if names := listDir(t, dir); len(names) != 2 {
		t.Fatalf("temporary files left: %v", names)
	}
}

func TestWriteAtomicConcurrent(t *testing.T) {
	dir := t.TempDir()
	dest := filepath.Join(dir, "dive-001.csv")
	const n = 16
	var wg sync.WaitGroup
	errs := make(chan error, n)
	for i := 0; i < n; i++ {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			body := bytes.Repeat([]byte{byte('a' + i)}, 64<<10)
			errs <- WriteAtomic(dest, func(w io.Writer) error { _, err := w.Write(body); return err }, 0o644)
		}(i)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		if err != nil {
			t.Fatal(err)
		}
	}
	got, err := os.ReadFile(dest)
	if err != nil || len(got) != 64<<10 || !bytes.Equal(got, bytes.Repeat(got[:1], len(got))) {
		t.Fatalf("the file is not one writer's whole output: %d bytes, %v", len(got), err)
	}
	if names := listDir(t, dir); len(names) != 1 {
		t.Fatalf("temporary files left: %v", names)
	}
}

func TestAtomicAbortAfterCommit(t *testing.T) {
	dir := t.TempDir()
	dest := filepath.Join(dir, "x")
	a, err := NewAtomic(dest, 0o600)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(filepath.Base(a.Name()), ".x.tmp-") || filepath.Dir(a.Name()) != dir {
		t.Fatalf("temporary name %s", a.Name())
	}
	a.Write([]byte("ok"))
	if err := a.Commit(); err != nil {
		t.Fatal(err)
	}
	a.Abort()
	if got, _ := os.ReadFile(dest); string(got) != "ok" {
		t.Fatalf("%q", got)
	}
	if err := a.Commit(); err == nil {
		t.Fatal("second commit accepted")
	}
}
