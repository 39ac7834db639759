package ledger_test

import (
	"context"
	"errors"
	"io"
	"strings"
	"testing"
	"time"

	"hulltally/ledger"
)

// TestLogDiveUpload: a dive streamed into the parse (ledger.Upload, the
// service's way) is recorded as the same file logged from disk would be,
// and the adversarial cases store nothing: the same samples again (known
// to be a duplicate only at the end), a stream cut off midway (a dropped
// connection), and something after the samples that is not a hits file.
func TestLogDiveUpload(t *testing.T) {
	ctx := context.Background()
	lat := 45.0
	fromDisk := newLedger(t, 0)
	want, err := fromDisk.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive), AE: writeFile(t, "h.csv", goodHits), Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}

	l := newLedger(t, 0)
	hits := writeFile(t, "h.csv", goodHits)
	rests := 0
	upload := func(r io.Reader, rest func() (string, error)) (*ledger.Dive, error) {
		return l.LogDive(ctx, ledger.LogRequest{Hull: serial, Latitude: &lat, Upload: &ledger.Upload{Samples: r, Name: "d.csv", Rest: rest}})
	}
	got, err := upload(strings.NewReader(goodDive), func() (string, error) { rests++; return hits, nil })
	if err != nil || got.Duplicate {
		t.Fatalf("upload: %+v %v", got, err)
	}
	if rests != 1 || got.SourceSHA256 != want.SourceSHA256 || got.Samples != want.Samples || got.AEHits != want.AEHits || got.Blocks != want.Blocks ||
		got.MaxPressureMPa != want.MaxPressureMPa || got.Source != want.Source || got.AESource != want.AESource {
		t.Fatalf("upload recorded\n%+v\nwant as from disk\n%+v", got, want)
	}
	before := rowCounts(t, l)

	again, err := upload(strings.NewReader(goodDive), func() (string, error) { return hits, nil })
	if err != nil || !again.Duplicate || again.ID != got.ID {
		t.Fatalf("the same upload again: %+v %v", again, err)
	}
	dropped := errors.New("connection reset")
	cut := io.MultiReader(strings.NewReader(goodDive[:len(goodDive)/2]), errReader{dropped})
	if d, err := upload(cut, nil); !errors.Is(err, dropped) {
		t.Fatalf("a stream cut off: %+v %v", d, err)
	}
	extra := errors.New("part \"lat\" after the samples")
	if d, err := upload(strings.NewReader(strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-02")), func() (string, error) { return "", extra }); !errors.Is(err, extra) {
		t.Fatalf("something after the samples: %+v %v", d, err)
	}
	if after := rowCounts(t, l); !equalCounts(before, after) {
		t.Fatalf("refused uploads stored something: %v -> %v", before, after)
	}
	if res, err := l.Verify(ctx); err != nil || !res.OK {
		t.Fatalf("verify: %+v %v", res, err)
	}
}

type errReader struct{ err error }

func (e errReader) Read([]byte) (int, error) { return 0, e.err }

func equalCounts(a, b map[string]int64) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

// TestUploadHoldsNoHullLock: a slow or stalled upload takes the hull's
// dive lock only once its samples are read, so another dive of the same
// hull (from a file, or the command line) is not held up by it; and the
// stalled one, cut off, stores nothing.
func TestUploadHoldsNoHullLock(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	pr, pw := io.Pipe()
	done := make(chan error, 1)
	go func() {
		_, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Upload: &ledger.Upload{Samples: pr, Name: "slow.csv"}})
		done <- err
	}()
	half := strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-07")
	if _, err := io.WriteString(pw, half[:len(half)/2]); err != nil {
		t.Fatal(err)
	}
	quick, cancel := context.WithTimeout(ctx, 20*time.Second)
	defer cancel()
	d, err := l.LogDive(quick, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil || d.Duplicate {
		t.Fatalf("a dive of the same hull while an upload stalls: %+v %v", d, err)
	}
	pw.CloseWithError(errors.New("connection reset"))
	if err := <-done; err == nil {
		t.Fatal("the cut-off upload was stored")
	}
	if n := rowCounts(t, l)["dives"]; n != 1 {
		t.Fatalf("%d dives, want the one from the file", n)
	}
}

// TestRefusedUploadAnsweredAsFile: samples the parse refuses are still
// answered as the same file from disk would be when they are a dive
// already recorded (here, on the hull's earlier spec, which had a gauge
// the new revision drops): "already recorded", not a refusal.
func TestRefusedUploadAnsweredAsFile(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	sp := exampleSpec(t)
	var kept = sp.Gauges[:0]
	for _, g := range sp.Gauges {
		if g.Name != "hoop1" {
			kept = append(kept, g)
		}
	}
	sp.Gauges = kept
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{Revise: true, Reason: "gauge hoop1 removed"}); err != nil {
		t.Fatal(err)
	}
	fromFile, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d.csv", goodDive)})
	if err != nil || !fromFile.Duplicate || fromFile.ID != d.ID {
		t.Fatalf("the file again: %+v %v", fromFile, err)
	}
	up, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Upload: &ledger.Upload{Samples: strings.NewReader(goodDive), Name: "d.csv"}})
	if err != nil || !up.Duplicate || up.ID != d.ID {
		t.Fatalf("the same samples uploaded again: %+v %v, want already recorded as from the file", up, err)
	}
	// Samples never recorded that the parse refuses: the refusal stands.
	other := strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-09")
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Upload: &ledger.Upload{Samples: strings.NewReader(other), Name: "e.csv"}}); err == nil || !strings.Contains(err.Error(), "hoop1") {
		t.Fatalf("new samples with a gauge the spec dropped: %v", err)
	}
}

// TestDivesPageCountsVoidDives: a page of dives counts every dive of the
// hull, void ones too, so that none is out of reach of the pages.
func TestDivesPageCountsVoidDives(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0)
	d1, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d1.csv", goodDive)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "d2.csv", strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-02"))}); err != nil {
		t.Fatal(err)
	}
	if _, err := l.VoidDive(ctx, d1.ID.String(), "logged to the wrong hull", ""); err != nil {
		t.Fatal(err)
	}
	page, total, err := l.DivesPage(ctx, serial, 1, 1)
	if err != nil || total != 2 || len(page) != 1 || page[0].ID != d1.ID || !page[0].Voided {
		t.Fatalf("the second page of one: %+v, total %d, %v; want the void first dive, of 2", page, total, err)
	}
}
