package reports_test

import (
	"context"
	"crypto/sha256"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/reports"
)

// TestEarlierReportsStillVerify: corrections, voids and hull revisions
// gained recorded_by in their JSON, which the report fingerprint hashes.
// A report issued before carries the fingerprint of the records' earlier
// shape: it must still verify against an unchanged ledger, and the
// earlier shape must differ from today's only by those fields. The
// adversarial case: any other fingerprint is refused.
func TestEarlierReportsStillVerify(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 4, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	ds, err := l.Dives(ctx, "CSC-QUI-03")
	if err != nil || len(ds) < 2 {
		t.Fatalf("dives: %v %d", err, len(ds))
	}
	id := ds[len(ds)-1].ID.String()
	if _, err := l.CorrectDive(ctx, id, "site", "North Bank", "typed wrong", ""); err != nil {
		t.Fatal(err)
	}
	if _, err := l.VoidDive(ctx, id, "logged to the wrong hull", ""); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "dive.pdf")
	w, err := reports.Write(ctx, l, reports.KindDive, id, path, time.Now())
	if err != nil {
		t.Fatal(err)
	}
	m, err := reports.Build(ctx, l, reports.KindDive, id, w.GeneratedAt)
	if err != nil {
		t.Fatal(err)
	}
	fp, earlier, err := m.Fingerprints()
	if err != nil || fp != w.Fingerprint || earlier == "" || earlier == fp {
		t.Fatalf("fingerprints %s / %s (written %s): %v", fp, earlier, w.Fingerprint, err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		fingerprint string
		ok          bool
	}{{earlier, true}, {strings.Repeat("ab", 32), false}} {
		// The same report as an earlier version would have issued it.
		old := []byte(strings.ReplaceAll(string(b), fp, c.fingerprint))
		p := filepath.Join(t.TempDir(), "old.pdf")
		if err := os.WriteFile(p, old, 0o644); err != nil {
			t.Fatal(err)
		}
		sum := sha256.Sum256(old)
		if err := l.RegisterReport(ctx, ledger.IssuedReport{FileSHA256: sum[:], Kind: reports.KindDive, Subject: id, Fingerprint: c.fingerprint, GeneratedAt: w.GeneratedAt, Pages: w.Pages}); err != nil {
			t.Fatal(err)
		}
		v, err := reports.Verify(ctx, l, p)
		if err != nil || v.OK != c.ok {
			t.Fatalf("a report with fingerprint %s: %+v %v, want ok %v", c.fingerprint, v, err, c.ok)
		}
	}
}
