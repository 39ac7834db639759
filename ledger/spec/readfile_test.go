package spec

import (
	"bytes"
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"hulltally/ledger/files"
)

func TestReadFile(t *testing.T) {
	dir := t.TempDir()
	example, err := os.ReadFile("../../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		t.Fatal(err)
	}
	fifo := filepath.Join(dir, "hull.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	// Over the limit: the example padded with a YAML comment to 1 MiB + 1.
	big := filepath.Join(dir, "big.yaml")
	pad := append([]byte("#"), bytes.Repeat([]byte("x"), MaxFileBytes+1-len(example)-2)...)
	if err := os.WriteFile(big, append(append(example, pad...), '\n'), 0o600); err != nil {
		t.Fatal(err)
	}
	// At the limit: the same, one byte shorter, is read and parsed.
	atLimit := filepath.Join(dir, "at-limit.yaml")
	if err := os.WriteFile(atLimit, append(append(example, pad[:len(pad)-1]...), '\n'), 0o600); err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(dir, "hull.yaml")
	if err := os.WriteFile(good, example, 0o600); err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "bad.yaml")
	if err := os.WriteFile(bad, bytes.Replace(example, []byte("wall_thickness_m: 0.09"), []byte("wall_thickness_m: 1e-300"), 1), 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name, path string
		is         error  // errors.Is target, nil for none
		says       string // substring of the error
	}{
		{"/dev/zero", "/dev/zero", files.ErrNotRegular, "character device"},
		{"FIFO without a writer", fifo, files.ErrNotRegular, "FIFO"},
		{"folder", dir, files.ErrNotRegular, "folder"},
		{"over 1 MiB", big, files.ErrTooLarge, "1048576"},
		{"missing", filepath.Join(dir, "nope.yaml"), fs.ErrNotExist, "nope.yaml"},
		{"invalid spec names the file", bad, nil, bad + ": hull spec"},
		{"at the limit", atLimit, nil, ""},
		{"example", good, nil, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			start := time.Now()
			h, err := ReadFile(context.Background(), c.path)
			if d := time.Since(start); d > 2*time.Second {
				t.Fatalf("took %v", d)
			}
			if c.says == "" {
				if err != nil || h.Serial != "EX-C4000-01" {
					t.Fatalf("%v %+v", err, h)
				}
				return
			}
			if err == nil || h != nil || !strings.Contains(err.Error(), c.says) || (c.is != nil && !errors.Is(err, c.is)) {
				t.Fatalf("err = %v, want %v saying %q", err, c.is, c.says)
			}
		})
	}
}
