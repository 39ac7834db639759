package inforce

import (
	"reflect"
	"testing"

	"hulltally/fatigue/damage"
)

type col = Column[string]

// The expected values below are worked by hand from the rule: a dive's
// damage is the newest assessment's that covers it.
func TestInForce(t *testing.T) {
	d := func(c, s float64) damage.Damage { return damage.Damage{Cyclic: c, Sustained: s} }
	tests := []struct {
		name       string
		dives      []string
		comps      []string
		newest     [][]col
		wantDamage []map[string]damage.Damage
		wantUsed   [][]bool
		wantFrom   []int
	}{{
		name:  "re-assessment supersedes the logging assessments",
		dives: []string{"a", "b"},
		comps: []string{"shell"},
		newest: [][]col{
			{{Component: "shell", Dives: []string{"a", "b"}, Cyclic: []float64{3, 6}, Sustained: []float64{0.3, 0.6}}}, // re-assessed, DFF 3
			{{Component: "shell", Dives: []string{"b"}, Cyclic: []float64{2}, Sustained: []float64{0.2}}},
			{{Component: "shell", Dives: []string{"a"}, Cyclic: []float64{1}, Sustained: []float64{0.1}}},
		},
		wantDamage: []map[string]damage.Damage{{"shell": d(3, 0.3)}, {"shell": d(6, 0.6)}},
		wantUsed:   [][]bool{{true}, {false}, {false}},
		wantFrom:   []int{0, 0},
	}, {
		// Adversarial: an old assessment with a smaller figure for a dive
		// must not replace the newer, larger one.
		name:  "an older smaller figure never wins",
		dives: []string{"a"},
		comps: []string{"shell"},
		newest: [][]col{
			{{Component: "shell", Dives: []string{"a"}, Cyclic: []float64{0.5}, Sustained: []float64{0}}},
			{{Component: "shell", Dives: []string{"a"}, Cyclic: []float64{0.01}, Sustained: []float64{0}}},
		},
		wantDamage: []map[string]damage.Damage{{"shell": d(0.5, 0)}},
		wantUsed:   [][]bool{{true}, {false}},
		wantFrom:   []int{0},
	}, {
		// The newest assessment of a dive covers only the components it
		// has: a dive claimed by it takes nothing from an older one.
		name:  "claim is per dive, not per component",
		dives: []string{"a"},
		comps: []string{"shell", "cap"},
		newest: [][]col{
			{{Component: "shell", Dives: []string{"a"}, Cyclic: []float64{1}, Sustained: []float64{0}}},
			{{Component: "cap", Dives: []string{"a"}, Cyclic: []float64{9}, Sustained: []float64{0}}},
		},
		wantDamage: []map[string]damage.Damage{{"shell": d(1, 0)}},
		wantUsed:   [][]bool{{true}, {false}},
		wantFrom:   []int{0},
	}, {
		name:  "void dive and removed component ignored, uncovered dive empty",
		dives: []string{"a", "c"},
		comps: []string{"shell"},
		newest: [][]col{
			{
				{Component: "ring", Dives: []string{"a"}, Cyclic: []float64{7}, Sustained: []float64{0}},
				{Component: "shell", Dives: []string{"a", "void"}, Cyclic: []float64{2, 8}, Sustained: []float64{0.5, 0}},
			},
		},
		wantDamage: []map[string]damage.Damage{{"shell": d(2, 0.5)}, {}},
		wantUsed:   [][]bool{{false, true}},
		wantFrom:   []int{0, -1},
	}}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			gotDamage, gotUsed := InForce(tc.dives, tc.comps, tc.newest)
			if !reflect.DeepEqual(gotDamage, tc.wantDamage) {
				t.Errorf("damage %v, want %v", gotDamage, tc.wantDamage)
			}
			if !reflect.DeepEqual(gotUsed, tc.wantUsed) {
				t.Errorf("used %v, want %v", gotUsed, tc.wantUsed)
			}
			c := New(tc.dives, tc.comps)
			for _, a := range tc.newest {
				c.Claim(a)
			}
			if !reflect.DeepEqual(c.From(), tc.wantFrom) {
				t.Errorf("from %v, want %v", c.From(), tc.wantFrom)
			}
		})
	}
}
