package stream

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"hulltally/fatigue/rainflow"
)

// A dive drained part by part while it streams (what a long record's
// ingest does to stay in bounded memory) gives, parts and residue joined
// in order, exactly the cycles of the same dive counted without draining.
// The adversarial cases: a drain after every block (parts of one cycle),
// a threshold never reached (nothing drained), and a record cut off at
// depth (its closing cycle is added at Finish, after the drains).
func TestDrainedPartsAreTheWhole(t *testing.T) {
	for _, atLeast := range []int{0, 1, 7, 500, 1 << 30} {
		for seed := uint64(1); seed <= 8; seed++ {
			for _, cut := range []bool{false, true} {
				r := rand.New(rand.NewPCG(seed, 11))
				n := 1 + r.IntN(6000)
				ts, ps, e1 := make([]float64, n), make([]float64, n), make([]float64, n)
				x, y := 0.0, 0.0
				for i := range ts {
					ts[i] = float64(i) * 0.5
					x += 0.3 * r.NormFloat64()
					y += 20 * r.NormFloat64()
					ps[i], e1[i] = math.Abs(x), y
				}
				if cut {
					ps[0], ps[n-1] = 5+ps[0], 7+ps[n-1]
				} else {
					ps[0], ps[n-1] = 0, 0
				}
				whole := NewDive(cfg, []string{"a"})
				parts := NewDive(cfg, []string{"a"})
				got := make([][]rainflow.Cycle, 2)
				drained := 0
				for i := 0; i < n; {
					j := min(n, i+1+r.IntN(200))
					whole.Add(ts[i:j], ps[i:j], [][]float64{e1[i:j]}, nil)
					parts.Add(ts[i:j], ps[i:j], [][]float64{e1[i:j]}, nil)
					parts.Drain(atLeast, func(s int, cs []rainflow.Cycle) {
						if len(cs) < max(atLeast, 1) {
							t.Fatalf("drained %d cycles of series %d, below the threshold %d", len(cs), s, atLeast)
						}
						drained += len(cs)
						got[s] = append(got[s], cs...)
					})
					i = j
				}
				w, p := whole.Finish(), parts.Finish()
				got[0] = append(got[0], p.Pressure...)
				got[1] = append(got[1], p.Strain[0]...)
				if !reflect.DeepEqual(got[0], w.Pressure) || !reflect.DeepEqual(got[1], w.Strain[0]) {
					t.Fatalf("threshold %d seed %d cut %v: drained parts and residue (%d, %d cycles) differ from the whole count (%d, %d)",
						atLeast, seed, cut, len(got[0]), len(got[1]), len(w.Pressure), len(w.Strain[0]))
				}
				if atLeast == 1<<30 && drained != 0 {
					t.Fatalf("a threshold never reached drained %d cycles", drained)
				}
				if atLeast == 1 && len(w.Pressure) > 10 && drained == 0 {
					t.Fatalf("threshold 1 drained nothing from %d cycles", len(w.Pressure))
				}
				if !reflect.DeepEqual(p.Holds, w.Holds) {
					t.Fatalf("threshold %d seed %d: draining changed the time at pressure", atLeast, seed)
				}
			}
		}
	}
}
