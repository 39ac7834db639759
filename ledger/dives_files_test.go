package ledger_test

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/files"
)

// TestLogDiveRefusesNonRegular: a data-logger "file" that is a device,
// FIFO or folder is refused at once as an input error, before anything
// is read or stored (`dive log /dev/zero` would otherwise hash forever,
// and a FIFO without a writer would hang).
func TestLogDiveRefusesNonRegular(t *testing.T) {
	l := newLedger(t, 0)
	dir := t.TempDir()
	fifo := filepath.Join(dir, "logger.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	good := writeFile(t, "d.csv", goodDive)
	cases := []struct{ name, samples, ae string }{
		{"samples /dev/zero", "/dev/zero", ""},
		{"samples FIFO without a writer", fifo, ""},
		{"samples a folder", dir, ""},
		{"hits /dev/zero", good, "/dev/zero"},
		{"hits FIFO without a writer", good, fifo},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			before := rowCounts(t, l)
			start := time.Now()
			_, err := l.LogDive(context.Background(), ledger.LogRequest{Hull: serial, Samples: c.samples, AE: c.ae})
			if d := time.Since(start); d > 5*time.Second {
				t.Fatalf("refusal took %v", d)
			}
			var ie *ledger.InputError
			if !errors.As(err, &ie) || !errors.Is(err, files.ErrNotRegular) {
				t.Fatalf("err = %v, want an input error for a non-regular file", err)
			}
			if after := rowCounts(t, l); after["dives"] != before["dives"] || after["reading_blocks"] != before["reading_blocks"] {
				t.Fatalf("rows stored: %v -> %v", before, after)
			}
		})
	}
}

// TestLogDiveStopsOnCancel: a cancelled run (Ctrl-C, SIGTERM) stops a long
// hash and parse promptly, stores nothing, and is reported as a
// cancellation, not as a fault of the file.
func TestLogDiveStopsOnCancel(t *testing.T) {
	l := newLedger(t, 0)
	big := filepath.Join(t.TempDir(), "long.csv")
	if err := os.WriteFile(big, []byte(synthCSV(600000)), 0o644); err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	for _, after := range []time.Duration{0, 5 * time.Millisecond, 40 * time.Millisecond} {
		ctx, cancel := context.WithCancel(context.Background())
		if after == 0 {
			cancel()
		} else {
			time.AfterFunc(after, cancel)
		}
		start := time.Now()
		d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: big, Start: &t0})
		took := time.Since(start)
		cancel()
		if err == nil {
			// The machine finished before the cancel: nothing to check,
			// but the dive must then be whole.
			if d.Samples != 600000 {
				t.Fatalf("after %v: dive finished with %d samples", after, d.Samples)
			}
			t.Logf("after %v: the dive was logged before the cancel", after)
			continue
		}
		var ie *ledger.InputError
		if errors.As(err, &ie) {
			t.Fatalf("after %v: cancellation reported as an input error: %v", after, err)
		}
		// While reading the files the error wraps context.Canceled; once
		// the database has it, the driver may report a closed connection.
		t.Logf("after %v: stopped in %v: %v", after, took, err)
		if took > after+3*time.Second {
			t.Fatalf("after %v: stopping took %v", after, took)
		}
		if n := rowCounts(t, l)["dives"]; n != 0 {
			t.Fatalf("after %v: %d dives stored", after, n)
		}
	}
}
