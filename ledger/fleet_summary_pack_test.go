package ledger

import (
	"encoding/json"
	"reflect"
	"testing"
	"time"
	"unicode/utf8"
)

// FuzzPackReasons: a fleet summary's reasons read back exactly as written,
// whatever their texts (one rule part, several, none, nested brackets).
func FuzzPackReasons(f *testing.F) {
	f.Add("hold: Felicity ratio below its limit (dive 1): 0.22 ≤ 0.95 [rule felicity-below-limit; basis: b; source: s]", "watch: x [rule a] [rule b]", "")
	f.Add(" [rule ", "[rule x]", "plain")
	f.Fuzz(func(t *testing.T, a, b, c string) {
		// JSON, the summary's and the live view's alike, writes invalid
		// UTF-8 as U+FFFD: texts are compared as JSON would give them.
		for _, s := range []string{a, b, c} {
			if !utf8.ValidString(s) {
				t.Skip("not UTF-8")
			}
		}
		at := time.Date(2026, 6, 28, 9, 30, 0, 0, time.UTC)
		in := []Reason{{Kind: "flag", Code: "r1", State: "hold", Text: a, At: &at}, {Kind: "flag", Code: "r2", State: "watch", Text: b}, {Kind: "decision", State: "fit", NoGo: true, Text: c}, {Kind: "flag", Text: a}}
		rs, tails := packReasons(in)
		js, err := json.Marshal(summaryDoc{Reasons: rs, Tails: tails})
		if err != nil {
			t.Fatal(err)
		}
		var d summaryDoc
		if err := json.Unmarshal(js, &d); err != nil {
			t.Fatal(err)
		}
		out, err := unpackReasons(d.Reasons, d.Tails)
		if err != nil {
			t.Fatal(err)
		}
		for i := range in {
			if in[i].Text != out[i].Text || in[i].Kind != out[i].Kind || in[i].Code != out[i].Code || in[i].State != out[i].State || in[i].NoGo != out[i].NoGo ||
				!reflect.DeepEqual(in[i].At == nil, out[i].At == nil) || (in[i].At != nil && !in[i].At.Equal(*out[i].At)) {
				t.Fatalf("reason %d: wrote %+v, read %+v", i, in[i], out[i])
			}
		}
	})
}

// TestUnpackRefusesBadTail: a stored reason naming a rule part that is
// not there is an error (the row is not used), never a shortened text.
func TestUnpackRefusesBadTail(t *testing.T) {
	for _, tail := range []int{-1, 2} {
		if _, err := unpackReasons([]storedReason{{Head: "hold: x", Tail: tail}}, []string{" [rule a]"}); err == nil {
			t.Errorf("tail %d of 1 was accepted", tail)
		}
	}
}
