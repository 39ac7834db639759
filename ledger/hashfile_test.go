package ledger

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"
	"time"

	"hulltally/ledger/files"
)

// TestHashFileStopsOnCancel: hashing a very long file (a sparse 64 GiB
// file, minutes of reading) stops promptly once the run is cancelled, and
// a device is refused before any byte is read.
func TestHashFileStopsOnCancel(t *testing.T) {
	big := filepath.Join(t.TempDir(), "huge.csv")
	f, err := os.Create(big)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(64 << 30); err != nil {
		f.Close()
		t.Skipf("SKIP: no sparse file here: %v", err)
	}
	f.Close()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Millisecond)
	defer cancel()
	start := time.Now()
	_, n, err := hashFile(ctx, big)
	if took := time.Since(start); took > 2*time.Second {
		t.Fatalf("hash stopped after %v (%d bytes)", took, n)
	}
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Fatalf("err = %v, want the deadline", err)
	}
	if _, _, err := hashFile(context.Background(), "/dev/zero"); !errors.Is(err, files.ErrNotRegular) {
		t.Fatalf("/dev/zero: %v", err)
	}
}
