package ledger_test

import (
	"context"
	"crypto/sha256"
	"errors"
	"os"
	"strings"
	"testing"

	"hulltally/ledger"
)

// TestSamplesDigestIsChecked: a samples digest given with a log request
// (the service's, computed as it spools an upload) spares the hash pass
// but is not taken on its word. The adversarial cases: the digest of a
// dive already recorded given with other samples (it must not answer
// "already recorded" and leave the new dive unrecorded), and a wrong
// digest for new samples (nothing may be stored).
func TestSamplesDigestIsChecked(t *testing.T) {
	ctx := context.Background()
	l := newLedger(t, 0) // with the example hull
	digest := func(path string) *ledger.FileDigest {
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		s := sha256.Sum256(b)
		return &ledger.FileDigest{SHA256: s[:], Size: int64(len(b))}
	}
	first := writeFile(t, "d1.csv", goodDive)
	d1, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: first, SamplesDigest: digest(first)})
	if err != nil || d1.Duplicate {
		t.Fatalf("with its own digest: %+v %v", d1, err)
	}
	second := writeFile(t, "d2.csv", strings.ReplaceAll(goodDive, "2026-05-01", "2026-05-03"))
	before := rowCounts(t, l)
	for name, dg := range map[string]*ledger.FileDigest{
		"the first dive's digest": digest(first),
		"a made-up digest":        {SHA256: make([]byte, 32), Size: 10},
		"the right hash, another size": func() *ledger.FileDigest {
			d := digest(second)
			d.Size++
			return d
		}(),
	} {
		d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: second, SamplesDigest: dg})
		var ie *ledger.InputError
		if err == nil || !errors.As(err, &ie) {
			t.Errorf("%s: %+v %v; want refused as input", name, d, err)
		}
		if after := rowCounts(t, l); after["dives"] != before["dives"] || after["reading_blocks"] != before["reading_blocks"] {
			t.Fatalf("%s: something was stored: %v -> %v", name, before, after)
		}
	}
	d2, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: second, SamplesDigest: digest(second)})
	if err != nil || d2.Duplicate || d2.ID == d1.ID {
		t.Fatalf("the second dive with its own digest: %+v %v", d2, err)
	}
	again, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: second, SamplesDigest: digest(second)})
	if err != nil || !again.Duplicate || again.ID != d2.ID {
		t.Fatalf("the second dive again: %+v %v", again, err)
	}
}
