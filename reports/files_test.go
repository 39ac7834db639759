package reports_test

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"hulltally/ledger/demo"
	"hulltally/ledger/files"
	"hulltally/reports"
)

// TestWriteAndVerifyFiles: a report is never written through a symbolic
// link nor onto anything but a regular file, a refused write registers no
// report, and Verify reads only regular files, refusing a device or FIFO
// at once.
func TestWriteAndVerifyFiles(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 2, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	issued := func() int64 {
		var n int64
		if err := l.Pool().QueryRow(ctx, "SELECT count(*) FROM issued_reports").Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	dir := t.TempDir()
	precious := filepath.Join(dir, "precious")
	orig := []byte("not a report\n")
	if err := os.WriteFile(precious, orig, 0o600); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "link.pdf")
	if err := os.Symlink(precious, link); err != nil {
		t.Fatal(err)
	}
	fifo := filepath.Join(dir, "r.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	refused := []struct {
		name, path string
		is         error
	}{
		{"symbolic link", link, files.ErrSymlink},
		{"folder", dir, files.ErrNotRegular},
		{"FIFO", fifo, files.ErrNotRegular},
	}
	for _, c := range refused {
		before := issued()
		_, err := reports.Write(ctx, l, reports.KindHull, "CSC-QUI-03", c.path, time.Now())
		if !errors.Is(err, c.is) {
			t.Errorf("Write to %s: err = %v, want %v", c.name, err, c.is)
		}
		if n := issued(); n != before {
			t.Errorf("Write to %s: a refused report was registered (%d -> %d)", c.name, before, n)
		}
	}
	if b, _ := os.ReadFile(precious); !bytes.Equal(b, orig) {
		t.Fatalf("written through the link: %q", b)
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*.tmp-*")); len(left) != 0 {
		t.Fatalf("temporary files left: %v", left)
	}

	// A report replaced in place: the new one verifies.
	path := filepath.Join(dir, "r.pdf")
	for i := 0; i < 2; i++ {
		if _, err := reports.Write(ctx, l, reports.KindHull, "CSC-QUI-03", path, time.Now()); err != nil {
			t.Fatal(err)
		}
	}
	if v, err := reports.Verify(ctx, l, path); err != nil || !v.OK {
		t.Fatalf("verify %v %+v", err, v)
	}

	for _, p := range []string{"/dev/zero", fifo, dir} {
		start := time.Now()
		v, err := reports.Verify(ctx, l, p)
		if !errors.Is(err, files.ErrNotRegular) || v != nil {
			t.Errorf("Verify %s: %+v %v, want ErrNotRegular", p, v, err)
		}
		if d := time.Since(start); d > 2*time.Second {
			t.Errorf("Verify %s took %v", p, d)
		}
	}
}
