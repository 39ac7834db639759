// Package files holds hulltally's careful input and output helpers: what a
// careful Unix tool does with the paths it is given.
//
// Inputs (data-logger files, hull specifications, reports to verify) are
// read only from regular files: a FIFO, a device such as /dev/zero, a
// folder or a socket is refused at once, without blocking and without
// reading from it, because such an input either never ends, blocks
// forever or is not the file the user meant. Files read whole are read to
// a stated limit, and long streams stop promptly when their context is
// cancelled (Ctrl-C, SIGTERM).
//
// Outputs (reports, demo files) are written to a temporary file with a
// unique name in the destination's folder, synced to disk and renamed into
// place: the old file stays byte-identical on any error (a full disk, a
// failed render, a cancelled run), readers never see half a file, two
// writers never collide on a temporary name, and nothing is ever written
// through a symbolic link at the destination.
package files

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"syscall"
)

// ErrNotRegular is returned (wrapped) for an input that is not a regular
// file: a folder, FIFO, device, socket or anything else.
var ErrNotRegular = errors.New("not a regular file")

// ErrTooLarge is returned (wrapped) by ReadAllLimited when the file holds
// more than the limit.
var ErrTooLarge = errors.New("file too large")

// ErrSymlink is returned (wrapped) by WriteAtomic and NewAtomic when the
// destination is a symbolic link: hulltally does not write through links.
var ErrSymlink = errors.New("destination is a symbolic link")

// kind names a file mode's type for error messages.
func kind(m fs.FileMode) string {
	switch {
	case m.IsDir():
		return "a folder"
	case m&fs.ModeNamedPipe != 0:
		return "a FIFO (named pipe)"
	case m&fs.ModeCharDevice != 0:
		return "a character device"
	case m&fs.ModeDevice != 0:
		return "a block device"
	case m&fs.ModeSocket != 0:
		return "a socket"
	case m&fs.ModeSymlink != 0:
		return "a symbolic link"
	case m&fs.ModeIrregular != 0:
		return "an irregular file"
	}
	return "not a regular file"
}

func notRegular(path string, m fs.FileMode) error {
	return fmt.Errorf("%s is %s, not a regular file: %w", path, kind(m), ErrNotRegular)
}

// OpenRegular opens path for reading and refuses anything that is not a
// regular file (symbolic links are followed to their target, as any Unix
// tool does). It never blocks on a FIFO without a writer and never reads
// from a device: the path is checked before opening, and opened with
// O_NONBLOCK and O_NOCTTY and checked again on the open descriptor, so a
// file swapped between the check and the open is refused too. The
// descriptor is returned in ordinary blocking mode. ctx is checked before
// opening.
func OpenRegular(ctx context.Context, path string) (*os.File, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if !st.Mode().IsRegular() {
		return nil, notRegular(path, st.Mode())
	}
	return openChecked(path)
}

// openChecked opens path without blocking and refuses, on the open
// descriptor, anything but a regular file: the guard against a file
// swapped after OpenRegular's first check.
func openChecked(path string) (*os.File, error) {
	var fd int
	var err error
	for {
		fd, err = syscall.Open(path, syscall.O_RDONLY|syscall.O_NONBLOCK|syscall.O_NOCTTY|syscall.O_CLOEXEC, 0)
		if err != syscall.EINTR {
			break
		}
	}
	if err != nil {
		return nil, &fs.PathError{Op: "open", Path: path, Err: err}
	}
	var sys syscall.Stat_t
	if err := syscall.Fstat(fd, &sys); err != nil {
		syscall.Close(fd)
		return nil, &fs.PathError{Op: "fstat", Path: path, Err: err}
	}
	if sys.Mode&syscall.S_IFMT != syscall.S_IFREG {
		syscall.Close(fd)
		return nil, notRegular(path, modeOf(sys.Mode))
	}
	if err := syscall.SetNonblock(fd, false); err != nil {
		syscall.Close(fd)
		return nil, &fs.PathError{Op: "open", Path: path, Err: err}
	}
	return os.NewFile(uintptr(fd), path), nil
}

// modeOf turns a raw st_mode type into a FileMode type for messages.
func modeOf(m uint32) fs.FileMode {
	switch m & syscall.S_IFMT {
	case syscall.S_IFDIR:
		return fs.ModeDir
	case syscall.S_IFIFO:
		return fs.ModeNamedPipe
	case syscall.S_IFCHR:
		return fs.ModeDevice | fs.ModeCharDevice
	case syscall.S_IFBLK:
		return fs.ModeDevice
	case syscall.S_IFSOCK:
		return fs.ModeSocket
	case syscall.S_IFLNK:
		return fs.ModeSymlink
	}
	return fs.ModeIrregular
}

// ReadAllLimited reads a regular file whole (see OpenRegular), refusing
// with ErrTooLarge one that holds more than max bytes; the check is on the
// bytes actually read, not only on the size the file reports, so a file
// that grows while it is read is refused too. ctx is honoured between
// reads.
func ReadAllLimited(ctx context.Context, path string, max int64) ([]byte, error) {
	if max < 0 {
		return nil, fmt.Errorf("reading %s: negative limit %d", path, max)
	}
	f, err := OpenRegular(ctx, path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	tooLarge := func() error {
		return fmt.Errorf("%s holds more than %d bytes, the limit for this kind of file: %w", path, max, ErrTooLarge)
	}
	var hint int64 = 512
	if st, err := f.Stat(); err == nil {
		if st.Size() > max {
			return nil, tooLarge()
		}
		hint = st.Size() + 1
	}
	buf := make([]byte, 0, min(hint, max+1))
	w := &limitedBuffer{b: buf}
	_, err = io.Copy(w, io.LimitReader(NewReader(ctx, f), max+1))
	if err != nil {
		return nil, fmt.Errorf("reading %s: %w", path, err)
	}
	if int64(len(w.b)) > max {
		return nil, tooLarge()
	}
	return w.b, nil
}

type limitedBuffer struct{ b []byte }

func (l *limitedBuffer) Write(p []byte) (int, error) {
	l.b = append(l.b, p...)
	return len(p), nil
}

// Reader is an io.Reader that checks its context before every read, so a
// long stream (hashing or parsing a large data-logger file) stops
// promptly once the context is cancelled; the error is then ctx.Err().
type Reader struct {
	ctx context.Context
	r   io.Reader
}

// NewReader wraps r so that every Read first checks ctx.
func NewReader(ctx context.Context, r io.Reader) *Reader { return &Reader{ctx: ctx, r: r} }

// Read implements io.Reader.
func (r *Reader) Read(p []byte) (int, error) {
	if err := r.ctx.Err(); err != nil {
		return 0, err
	}
	return r.r.Read(p)
}

// Atomic is a file being written for an atomic replace: write to it, then
// Commit to rename it into place, or Abort to remove it. Abort after
// Commit does nothing, so `defer a.Abort()` is the usual pattern.
type Atomic struct {
	f    *os.File
	path string
	done bool
}

// NewAtomic starts writing path: it refuses a destination that is a
// symbolic link (ErrSymlink) or exists and is not a regular file
// (ErrNotRegular), and creates a temporary file with a unique name in the
// destination's folder (so concurrent writers never collide, and the
// rename stays within one file system). The file is created with perm,
// subject to the umask, as os.WriteFile would.
func NewAtomic(path string, perm fs.FileMode) (*Atomic, error) {
	if err := checkDest(path); err != nil {
		return nil, err
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	for try := 0; ; try++ {
		var r [8]byte
		if _, err := rand.Read(r[:]); err != nil {
			return nil, fmt.Errorf("writing %s: %w", path, err)
		}
		tmp := filepath.Join(dir, "."+base+".tmp-"+hex.EncodeToString(r[:]))
		f, err := os.OpenFile(tmp, os.O_WRONLY|os.O_CREATE|os.O_EXCL|syscall.O_NOFOLLOW, perm)
		if err == nil {
			return &Atomic{f: f, path: path}, nil
		}
		if !errors.Is(err, fs.ErrExist) || try >= 100 {
			return nil, fmt.Errorf("writing %s: %w", path, err)
		}
	}
}

func checkDest(path string) error {
	st, err := os.Lstat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("writing %s: %w", path, err)
	case st.Mode()&fs.ModeSymlink != 0:
		return fmt.Errorf("writing %s: %w; hulltally does not write through links: give the link's target or remove the link", path, ErrSymlink)
	case !st.Mode().IsRegular():
		return fmt.Errorf("writing %s: %w", path, notRegular(path, st.Mode()))
	}
	return nil
}

// Write implements io.Writer on the temporary file.
func (a *Atomic) Write(p []byte) (int, error) { return a.f.Write(p) }

// Name is the temporary file's path.
func (a *Atomic) Name() string { return a.f.Name() }

// Commit syncs the temporary file to disk, closes it and renames it into
// place (the rename replaces the destination's directory entry: a link
// created there meanwhile is replaced, never written through), then syncs
// the folder so the rename itself survives a power loss. On any error
// before the rename the temporary file is removed and the destination is
// untouched.
func (a *Atomic) Commit() error {
	if a.done {
		return fmt.Errorf("writing %s: already committed or aborted", a.path)
	}
	a.done = true
	tmp := a.f.Name()
	err := a.f.Sync()
	if e := a.f.Close(); err == nil {
		err = e
	}
	if err == nil {
		err = checkDest(a.path)
	}
	if err == nil {
		err = os.Rename(tmp, a.path)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", a.path, err)
	}
	if err := syncDir(filepath.Dir(a.path)); err != nil {
		return fmt.Errorf("writing %s: syncing its folder: %w", a.path, err)
	}
	return nil
}

// Abort removes the temporary file; the destination is untouched. It does
// nothing after Commit.
func (a *Atomic) Abort() {
	if a.done {
		return
	}
	a.done = true
	a.f.Close()
	os.Remove(a.f.Name())
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return err
	}
	defer d.Close()
	if err := d.Sync(); err != nil && !errors.Is(err, syscall.EINVAL) && !errors.Is(err, syscall.ENOTSUP) {
		return err
	}
	return nil
}

// WriteAtomic writes path through write, atomically: see NewAtomic and
// Atomic.Commit. If write returns an error (or panics) the temporary file
// is removed and the old file at path, if any, is left byte-identical.
func WriteAtomic(path string, write func(io.Writer) error, perm fs.FileMode) error {
	a, err := NewAtomic(path, perm)
	if err != nil {
		return err
	}
	defer a.Abort()
	if err := write(a); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return a.Commit()
}
