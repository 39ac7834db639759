package ledger

import (
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/google/uuid"

	"hulltally/ledger/logfile"
)

// encodeCanon is decodeCanon's inverse, for tests that forge records.
func encodeCanon(fs []canonField) []byte {
	c := &canon{}
	for _, f := range fs {
		switch f.tag {
		case 's':
			c.str(f.s)
		case 'b':
			c.bytes([]byte(f.s))
		case 'i', 't':
			c.tag(f.tag)
			c.b = binary.BigEndian.AppendUint64(c.b, uint64(f.i))
		case 'f':
			c.f64(f.f)
		case 'u':
			c.uuid(f.u)
		case 'n', 'T', 'F':
			c.tag(f.tag)
		case 'l':
			c.strs(f.l)
		}
	}
	return c.b
}

// ForgeAssessmentCyclic returns an assessment's canonical bytes with the
// cyclic damage of its first component's first dive multiplied by scale
// (an operator recording smaller damage), and the figure before and
// after. Test helper, for the bundle tests of package ledger_test.
func ForgeAssessmentCyclic(b []byte, scale float64) ([]byte, float64, float64, error) {
	fs, err := decodeCanon(b)
	if err != nil {
		return nil, 0, 0, err
	}
	// kind, id, hull, revision, kind, config hash, config, reason, actor,
	// time, columns; component, basis, factor, curve, rupture, dives;
	// dive id, cyclic, sustained.
	const at = 18
	if len(fs) <= at || fs[0].s != "assessment" || fs[at].tag != 'f' || fs[at-1].tag != 'u' {
		return nil, 0, 0, errors.New("not an assessment with a dive")
	}
	old := fs[at].f
	fs[at].f = old * scale
	return encodeCanon(fs), old, fs[at].f, nil
}

func TestEncodeCanonRoundTrip(t *testing.T) {
	a := &assessmentHead{id: uuid.New(), hull: uuid.New(), revision: 1, kind: "dive", configHash: []byte{1, 2}, configJSON: "{}", reason: "r", actor: "a", at: now()}
	cols := []compDamage{{component: "shell", basis: "lame", factor: -5.5, curve: "c", dives: []uuid.UUID{uuid.New()}, cyclic: []float64{1e-6}, sustained: []float64{0}}}
	b := assessmentCanon(a, cols)
	fs, err := decodeCanon(b)
	if err != nil {
		t.Fatal(err)
	}
	if string(encodeCanon(fs)) != string(b) {
		t.Fatal("encodeCanon(decodeCanon(b)) != b")
	}
	f, old, got, err := ForgeAssessmentCyclic(b, 0.5)
	if err != nil || old != 1e-6 || got != 5e-7 || len(f) != len(b) {
		t.Fatalf("forge: %v %v %v", old, got, err)
	}
}

// TestCheckHitRows: the hit rows are checked against the record's count
// and digest; a changed, removed or reordered hit is refused.
func TestCheckHitRows(t *testing.T) {
	hits := []logfile.Hit{
		{TimeNS: 1e9, Channel: 1, AmplitudeDB: 50, Energy: 1.5, Counts: 3, DurationUS: 100, RiseUS: 10},
		{TimeNS: 2e9, Channel: 2, AmplitudeDB: 60, Energy: 2.5, Counts: 4, DurationUS: 110, RiseUS: 12, Event: logfile.EventLeadBreak},
		{TimeNS: 3e9, Channel: 1, AmplitudeDB: 45, Energy: 0.5, Counts: 1, DurationUS: 90, RiseUS: 8},
	}
	rows := func(hs []logfile.Hit, seqs ...int32) []byte {
		var b []byte
		for i := range hs {
			b = hitBytes(b, seqs[i], &hs[i])
		}
		return b
	}
	good := rows(hits, 0, 1, 2)
	sum := func(b []byte) []byte { s := sha256.Sum256(b); return s[:] }
	if n, why := checkHitRows(good, 3, sum(good)); why != "" || n != 3 {
		t.Fatalf("good rows: %d %q", n, why)
	}
	if n, why := checkHitRows([]byte{}, 0, sum(nil)); why != "" || n != 0 {
		t.Fatalf("no hits: %d %q", n, why)
	}
	louder := append([]logfile.Hit(nil), hits...)
	louder[1].AmplitudeDB = 40 // a quieter hit: the hull looks better
	swapped := rows(hits, 1, 0, 2)
	for _, c := range []struct {
		name   string
		data   []byte
		n      int64
		digest []byte
		reason string
	}{
		{"a hit changed", rows(louder, 0, 1, 2), 3, sum(good), "do not match the SHA-256"},
		{"a hit removed, digest kept", rows(hits[:2], 0, 1), 3, sum(good), "do not match the SHA-256"},
		{"a hit removed, digest forged, count kept", rows(hits[:2], 0, 1), 3, sum(rows(hits[:2], 0, 1)), "counts 3"},
		{"seq out of order", swapped, 3, sum(swapped), "not in order"},
		{"cut short", good[:len(good)-9], 3, sum(good[:len(good)-9]), "cut short"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if _, why := checkHitRows(c.data, c.n, c.digest); !strings.Contains(why, c.reason) {
				t.Fatalf("want %q, got %q", c.reason, why)
			}
		})
	}
}

func TestAgrees(t *testing.T) {
	for _, c := range []struct {
		a, b float64
		want bool
	}{
		{0, 0, true}, {1e-6, 1e-6 * (1 + 1e-12), true}, {1e-6, 2e-6, false}, {0, 1e-300, false},
		{math.NaN(), math.NaN(), false}, {1e-6, 1e-6 * (1 + 1e-8), false},
	} {
		if got := agrees(c.a, c.b); got != c.want {
			t.Errorf("agrees(%g, %g) = %v", c.a, c.b, got)
		}
	}
}
