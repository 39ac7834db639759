package ledger_test

import (
	"context"
	"errors"
	"io"
	"strings"
	"testing"

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
