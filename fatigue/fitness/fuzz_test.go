package fitness

import (
	"math"
	"os"
	"testing"
	"time"
)

// FuzzParseRules checks that ParseRules never panics, and that a rule set
// it accepts validates and evaluates without panicking, flags every hull
// with unknown damage and never lets a dive beyond the rating pass.
func FuzzParseRules(f *testing.F) {
	if data, err := os.ReadFile("../../configs/rules.yaml"); err == nil {
		f.Add(data)
	}
	f.Add([]byte(""))
	f.Add([]byte("rules: [{id: a, title: t, measure: damage_ratio, hold: {when: at_or_above, at: 1}}]"))
	f.Add([]byte("rules: [{id: a, hold: {at: .nan}}]"))
	f.Add([]byte("&a [*a]"))
	f.Add([]byte("rules:\n  - watch: {when: below, at: -1}\n---\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		rs, err := ParseRules(data)
		if err != nil {
			if rs != nil {
				t.Fatal("rules returned with an error")
			}
			return
		}
		if err := rs.Validate(); err != nil {
			t.Fatalf("accepted rules do not validate: %v", err)
		}
		h := HullFacts{Now: time.Unix(1e9, 0), RatedDepthM: 100,
			Dives: []DiveFacts{{ID: "d", Start: time.Unix(1e9-3600, 0), MaxDepthM: 150, Channels: []string{"c"}}}}
		fs := Evaluate(rs, h)
		var damage, depth bool
		for _, fl := range fs {
			if r, ok := rs.Find(fl.Rule); ok {
				damage = damage || r.Measure == MeasureDamageRatio
				depth = depth || (r.Measure == MeasureDepthRatio && fl.Level == LevelHold)
			}
			if !fl.Missing && math.IsNaN(fl.Value) {
				t.Fatalf("NaN value without Missing: %v", fl)
			}
		}
		if !damage || !depth {
			t.Fatalf("unknown damage flagged %v, beyond rating held %v: %v", damage, depth, fs)
		}
		c := Clear(Status(fs, nil, Records{}, h.Now), h, Plan{DepthM: 10}, rs)
		if c.Go {
			t.Fatal("cleared a hull with unknown damage")
		}
	})
}
