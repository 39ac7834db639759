package stream

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// cfg is a plain configuration for the tests: gates 0.05 MPa and 5 µε,
// bins of 0.5 MPa, no merging, surface within 0.05 MPa, gaps over 60 s,
// coarse over 10 s, cut-off legs at 0.01 MPa/s.
var cfg = Config{GateMPa: 0.05, GateUE: 5, HoldBinMPa: 0.5, SurfaceToleranceMPa: 0.05, MaxGapS: 60, MaxIntervalS: 10, CutLegMPaPerS: 0.01}

// feedDive adds the samples in random blocks of 1 to maxBlock samples.
func feedDive(d *Dive, r *rand.Rand, maxBlock int, t, p []float64, e [][]float64, temp []float64) {
	for i := 0; i < len(t); {
		j := min(len(t), i+1+r.IntN(maxBlock))
		es := make([][]float64, len(e))
		for g := range e {
			es[g] = e[g][i:j]
		}
		var tp []float64
		if temp != nil {
			tp = temp[i:j]
		}
		d.Add(t[i:j], p[i:j], es, tp)
		i = j
	}
}

// The streaming count, fed in random blocks, gives the cycles that the
// batch count of fatigue/rainflow gives on the whole series, bit for bit:
// for a record from and to the surface, the series itself; for a record
// cut off at depth, the series closed to the surface at both ends (0
// before and after), which is what counting it whole means.
func TestDiveEqualsBatch(t *testing.T) {
	for seed := uint64(1); seed <= 20; seed++ {
		for _, cut := range []bool{false, true} {
			r := rand.New(rand.NewPCG(seed, 3))
			n := 1 + r.IntN(5000)
			ts, ps, e1, e2 := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
			x, y := 0.0, 0.0
			for i := range ts {
				ts[i] = float64(i) * 0.5
				x += 0.3 * r.NormFloat64()
				y += 20 * r.NormFloat64()
				ps[i], e1[i], e2[i] = math.Abs(x), y, -y/2
			}
			if cut {
				ps[0], ps[n-1] = 5+ps[0], 7+ps[n-1]
			} else {
				ps[0], ps[n-1] = 0, 0
			}
			d := NewDive(cfg, []string{"a", "b"})
			feedDive(d, r, 300, ts, ps, [][]float64{e1, e2}, nil)
			got := d.Finish()
			closed := ps
			if cut {
				closed = append(append([]float64{0}, ps...), 0)
			}
			want := rainflow.Count(nil, closed, cfg.GateMPa)
			if !reflect.DeepEqual(got.Pressure, want) {
				t.Fatalf("seed %d cut %v: pressure %d cycles, batch %d", seed, cut, len(got.Pressure), len(want))
			}
			for g, e := range [][]float64{e1, e2} {
				if w := rainflow.Count(nil, e, cfg.GateUE); !reflect.DeepEqual(got.Strain[g], w) {
					t.Fatalf("seed %d gauge %d: %d cycles, batch %d", seed, g, len(got.Strain[g]), len(w))
				}
			}
			// The time at pressure is the batch histogram of the same
			// samples, plus, when cut, the legs at the peak.
			h := assess.NewHoldHistogram(cfg.HoldBinMPa)
			h.Add(ts, ps)
			if cut {
				peak := 0.0
				for _, v := range ps {
					peak = math.Max(peak, v)
				}
				// The two legs are summed first, then added to the last time.
				h.Add([]float64{ts[n-1] + (ps[0]/cfg.CutLegMPaPerS + ps[n-1]/cfg.CutLegMPaPerS)}, []float64{peak})
			}
			if w := h.Holds(0); !reflect.DeepEqual(got.Holds, w) {
				t.Fatalf("seed %d cut %v: holds %v, batch %v", seed, cut, got.Holds, w)
			}
		}
	}
}

// totalAt sums the counts of the cycles of range r.
func totalAt(cs []rainflow.Cycle, r float64) float64 {
	s := 0.0
	for _, c := range cs {
		if c.Range == r {
			s += c.Count
		}
	}
	return s
}

// A record cut off below the surface counts its largest cycle whole (two
// half cycles 0 → peak → 0), not as the half its samples alone show, and
// charges each unrecorded leg, |p|/0.01 MPa/s, at the dive's peak. Hand
// worked: bins of 0.5 MPa are charged at their upper edge, each interval
// at its higher end.
func TestCutOffRecord(t *testing.T) {
	tests := []struct {
		name      string
		t, p      []float64
		peak      float64
		codes     []string
		wantHolds []assess.Hold
	}{
		// Descends 0 → 30 and stops at 30: intervals 10 s at 15 and 20 s
		// at 30; the ascent 30/0.01 = 3000 s at 30.
		{"end cut", []float64{0, 10, 20, 30}, []float64{0, 15, 30, 30}, 30, []string{FindingCutEnd},
			[]assess.Hold{{LevelMPa: 15, Seconds: 10}, {LevelMPa: 30, Seconds: 3020}}},
		// Starts at 20, reaches 30, surfaces: 20 s at 30 recorded; the
		// descent 20/0.01 = 2000 s at the peak 30.
		{"start cut", []float64{0, 10, 20}, []float64{20, 30, 0}, 30, []string{FindingCutStart},
			[]assess.Hold{{LevelMPa: 30, Seconds: 2020}}},
		// Both ends: 10 → 40 → 20, 20 s at 40 recorded, legs 1000 s and
		// 2000 s at 40.
		{"both cut", []float64{0, 10, 20}, []float64{10, 40, 20}, 40, []string{FindingCutStart, FindingCutEnd},
			[]assess.Hold{{LevelMPa: 40, Seconds: 3020}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			d := NewDive(cfg, nil)
			for i := range tt.t { // one sample a block
				d.Add(tt.t[i:i+1], tt.p[i:i+1], nil, nil)
			}
			got := d.Finish()
			if c := totalAt(got.Pressure, tt.peak); c != 1 {
				t.Errorf("cycles %+v: %v counted at the peak range %v, want 1 whole", got.Pressure, c, tt.peak)
			}
			if !reflect.DeepEqual(got.Holds, tt.wantHolds) {
				t.Errorf("holds %+v, want %+v", got.Holds, tt.wantHolds)
			}
			if c := codes(d.Quality().Findings()); !reflect.DeepEqual(c, tt.codes) {
				t.Errorf("findings %v, want %v", c, tt.codes)
			}
		})
	}
}

// A record at the surface at both ends is not cut: no leg is charged and
// its cycle is the samples' own.
func TestWholeRecordNotCharged(t *testing.T) {
	d := NewDive(cfg, nil)
	d.Add([]float64{0, 10, 20, 30}, []float64{0.05, 30, 30, 0}, nil, nil)
	got := d.Finish()
	want := []assess.Hold{{LevelMPa: 30, Seconds: 30}}
	if !reflect.DeepEqual(got.Holds, want) || len(d.Quality().Findings()) != 0 {
		t.Fatalf("holds %+v findings %v", got.Holds, d.Quality().Findings())
	}
	// 0.05 → 30 → 0: two half cycles, ranges 29.95 and 30.
	if len(got.Pressure) != 2 || got.Pressure[0].Range != 30-0.05 || got.Pressure[1].Range != 30 {
		t.Fatalf("cycles %+v", got.Pressure)
	}
}
