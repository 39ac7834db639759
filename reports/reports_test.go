package reports_test

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/synth"
	"hulltally/reports"
)

var srv *ledgertest.Server

func TestMain(m *testing.M) { os.Exit(ledgertest.Main(m, &srv)) }

func pdftotext(t *testing.T, path string) string {
	t.Helper()
	bin, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("SKIP PDF content checks: pdftotext is not installed (Debian: apt-get install poppler-utils; .ci/run installs it)")
	}
	out, err := exec.Command(bin, "-layout", path, "-").Output()
	if err != nil {
		t.Fatalf("pdftotext %s: %v", path, err)
	}
	return string(out)
}

func squash(s string) string { return strings.Join(strings.Fields(s), " ") }

func TestHullReport(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 6, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for _, serial := range []string{"CSC-ORN-01", "CSC-VES-02", "CSC-QUI-03"} {
		path := filepath.Join(dir, serial+".pdf")
		w, err := reports.Write(ctx, l, reports.KindHull, serial, path, time.Now())
		if err != nil {
			t.Fatal(err)
		}
		text := pdftotext(t, path)
		if dir := os.Getenv("HULLTALLY_REPORT_DUMP"); dir != "" {
			b, _ := os.ReadFile(path)
			_ = os.WriteFile(filepath.Join(dir, serial+".pdf"), b, 0o644)
		}
		if len(w.Unprintable) != 0 || w.Warning != "" {
			t.Errorf("%s: unprintable characters %v: %s", serial, w.Unprintable, w.Warning)
		}
		h, _ := l.Hull(ctx, serial)
		f, err := l.FitnessAt(ctx, h, w.GeneratedAt)
		if err != nil {
			t.Fatal(err)
		}
		flat := squash(text)
		for _, want := range []string{serial, "STATUS: " + strings.ToUpper(f.Status), squash(reports.Caution), "page 1 of", w.Fingerprint,
			// Limit lines from the shipped rules, found by measure.
			"watch and hold levels of rule damage-against-allowable in force",
			"watch and hold levels of rule felicity-below-limit in force",
			// Symbols print as written, not spelled out.
			"ASTM E1049-85 §5.4.4", "watch ≥ 0.5; hold ≥ 1"} {
			if !strings.Contains(flat, squash(want)) {
				t.Errorf("%s: report lacks %q", serial, want)
			}
		}
		// The damage figures are the ones hull show --json gives.
		for _, c := range f.Damage.Components {
			for _, v := range []ledger.Num{c.CyclicDamage, c.SustainedDamage} {
				if s := fmt.Sprintf("%.3e", float64(v)); !strings.Contains(text, s) {
					t.Errorf("%s: component %s damage %s not in the report", serial, c.Name, s)
				}
			}
		}
		// The first page states the implosion at the rated depth with its
		// caution; on hold the remaining life is void, never a figure.
		page1 := squash(strings.SplitN(text, "\f", 2)[0])
		for _, want := range []string{"Implosion hazard at the rated depth", "kg of TNT", squash(reports.ImplosionCaution)} {
			if !strings.Contains(page1, want) {
				t.Errorf("%s: page 1 lacks %q", serial, want)
			}
		}
		if f.Status == "hold" && (!strings.Contains(page1, "Remaining life VOID:") || strings.Contains(page1, "dives (governed by")) {
			t.Errorf("%s on hold: remaining life is not void on page 1", serial)
		}
		m, err := reports.BuildHull(ctx, l, serial, w.GeneratedAt)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range m.Basis.Curves {
			if c.Kind == "S-N" && (c.Environment == "" || strings.Contains(c.Environment, "not stated")) {
				t.Errorf("%s: curve %s has no environment in the report's basis: %q", serial, c.Name, c.Environment)
			}
		}
		if fd := m.Hulls[0].FelicityDives; len(fd) > 0 {
			if !strings.Contains(flat, "Felicity dives: cumulative hits against pressure") {
				t.Errorf("%s: %d Felicity dives but no section", serial, len(fd))
			}
			for _, d := range fd {
				if d.Level == "" && (d.Ratio == nil || *d.Ratio >= 1) {
					t.Errorf("%s: dive %s drawn as a Felicity dive without a flag or a ratio below 1", serial, d.Dive)
				}
			}
		}
		// pdftotext separates pages with form feeds.
		if n := strings.Count(text, "\f"); n != w.Pages || n < 4 {
			t.Errorf("%s: %d pages in the text, %d written", serial, n, w.Pages)
		}
		v, err := reports.Verify(ctx, l, path)
		if err != nil || !v.OK {
			t.Fatalf("%s: fresh report does not verify: %v %+v", serial, err, v)
		}
	}
}

func TestVerifyFails(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	dd := t.TempDir()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: dd, DivesPerHull: 4, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "r.pdf")
	if _, err := reports.Write(ctx, l, reports.KindHull, "CSC-QUI-03", path, time.Now()); err != nil {
		t.Fatal(err)
	}
	fleet := filepath.Join(t.TempDir(), "f.pdf")
	if _, err := reports.Write(ctx, l, reports.KindFleet, "fleet", fleet, time.Now()); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{path, fleet} {
		if v, err := reports.Verify(ctx, l, p); err != nil || !v.OK {
			t.Fatalf("fresh: %v %+v", err, v)
		}
	}
	// The file altered: one byte of its content changed.
	b, _ := os.ReadFile(path)
	altered := filepath.Join(t.TempDir(), "altered.pdf")
	b2 := append([]byte(nil), b...)
	i := strings.Index(string(b2), "stream\n") + 100
	b2[i] ^= 0x20
	os.WriteFile(altered, b2, 0o644)
	v, err := reports.Verify(ctx, l, altered)
	if err != nil || v.OK || !strings.Contains(v.Reason, "altered") {
		t.Fatalf("altered file: %v %+v", err, v)
	}
	// A dive logged since: the report no longer matches the ledger.
	lat := -37.6
	samples := filepath.Join(dd, "CSC-QUI-03", "dive-001.csv")
	again, _ := os.ReadFile(samples)
	newFile := filepath.Join(t.TempDir(), "later.csv")
	os.WriteFile(newFile, []byte(strings.Replace(string(again), "2026-03", "2026-09", -1)), 0o644)
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: "CSC-QUI-03", Samples: newFile, Latitude: &lat}); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{path, fleet} {
		v, err = reports.Verify(ctx, l, p)
		if err != nil || v.OK || !strings.Contains(v.Reason, "records were added") {
			t.Fatalf("after a new dive (%s): %v %+v", p, err, v)
		}
	}
	// Not a report at all.
	junk := filepath.Join(t.TempDir(), "junk.pdf")
	os.WriteFile(junk, []byte("%PDF-1.4\nnothing\n"), 0o644)
	if v, err := reports.Verify(ctx, l, junk); err != nil || v.OK {
		t.Fatalf("junk: %v %+v", err, v)
	}
}

func TestDiveSheet(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 3, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	ds, err := l.Dives(ctx, "CSC-ORN-01")
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "d.pdf")
	w, err := reports.Write(ctx, l, reports.KindDive, ds[1].ID.String(), path, time.Now())
	if err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("HULLTALLY_REPORT_DUMP"); dir != "" {
		b, _ := os.ReadFile(path)
		_ = os.WriteFile(filepath.Join(dir, "dive.pdf"), b, 0o644)
	}
	text := squash(pdftotext(t, path))
	for _, want := range []string{ds[1].ID.String(), "Damage added", "Pressure cycles", "Evidence", "Reference pressure", "Acoustic emission per channel",
		"Gauge problems and missing evidence", "Data quality of the record", squash(reports.Caution)} {
		if !strings.Contains(text, want) {
			t.Errorf("dive sheet lacks %q", want)
		}
	}
	if v, err := reports.Verify(ctx, l, w.Path); err != nil || !v.OK {
		t.Fatalf("dive sheet: %v %+v", err, v)
	}
}

// TestReportSeesRecordJustMade: a report written in the same second as a
// record (an inspection just entered) is built at a moment after it, so
// the record counts; cut to the second, the moment fell before it and the
// hull's status ignored the inspection.
func TestReportSeesRecordJustMade(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: t.TempDir(), DivesPerHull: 2, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 3; i++ {
		in, err := l.RecordInspection(ctx, "CSC-QUI-03", ledger.Inspection{At: time.Now().Add(-time.Hour), Method: "visual", Findings: "none", Result: "pass"})
		if err != nil {
			t.Fatal(err)
		}
		w, err := reports.Write(ctx, l, reports.KindHull, "CSC-QUI-03", filepath.Join(t.TempDir(), "q.pdf"), time.Now())
		if err != nil {
			t.Fatal(err)
		}
		if w.GeneratedAt.Before(in.RecordedAt) {
			t.Fatalf("report moment %s is before the inspection recorded at %s", w.GeneratedAt.Format(time.RFC3339Nano), in.RecordedAt.Format(time.RFC3339Nano))
		}
		if v, err := reports.Verify(ctx, l, w.Path); err != nil || !v.OK {
			t.Fatalf("report does not verify: %v %+v", err, v)
		}
	}
}

// TestReportAtOneSnapshot: a report built inside a ledger snapshot reads
// nothing outside it. A dive logged (and committed) while the snapshot is
// open must change neither the figures nor the chain head the
// fingerprint names; outside the snapshot the same report sees it. A
// report read from several moments would mix a new chain head with old
// figures, or the reverse.
func TestReportAtOneSnapshot(t *testing.T) {
	l := srv.Open(t)
	ctx := context.Background()
	dir := t.TempDir()
	if _, err := demo.Run(ctx, l, demo.Options{Dir: dir, DivesPerHull: 2, SampleHz: 0.1}); err != nil {
		t.Fatal(err)
	}
	at := time.Now().UTC()
	var inside1, inside2 string
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		m, err := reports.BuildHull(ctx, s, "CSC-QUI-03", at)
		if err != nil {
			return err
		}
		if inside1, err = m.Fingerprint(); err != nil {
			return err
		}
		// A dive of the hull, logged and committed outside the snapshot.
		d := synth.Dive{Start: time.Date(2026, 11, 20, 8, 0, 0, 0, time.UTC), SampleHz: 0.2, Latitude: -37.6, MaxDepthM: 500,
			DescentMPS: 1, AscentMPS: 1, BottomS: 600, SurfaceS: 120, DepthNoiseM: 0.05}
		p := filepath.Join(dir, "late.csv")
		f, err := os.Create(p)
		if err != nil {
			return err
		}
		if _, err := d.Write(f, nil, 7); err != nil {
			return err
		}
		f.Close()
		lat := -37.6
		if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: "CSC-QUI-03", Samples: p, Latitude: &lat}); err != nil {
			return err
		}
		m, err = reports.BuildHull(ctx, s, "CSC-QUI-03", at)
		if err != nil {
			return err
		}
		inside2, err = m.Fingerprint()
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if inside1 != inside2 {
		t.Fatalf("a report inside one snapshot changed when a dive was committed outside it: %s → %s", inside1, inside2)
	}
	m, err := reports.BuildHull(ctx, l, "CSC-QUI-03", at)
	if err != nil {
		t.Fatal(err)
	}
	if after, _ := m.Fingerprint(); after == inside1 {
		t.Fatalf("outside the snapshot the report does not see the new dive (fingerprint %s unchanged)", after)
	}
}
