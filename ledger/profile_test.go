package ledger

import (
	"encoding/json"
	"math"
	"testing"

	"hulltally/configs"
	"hulltally/fatigue/seawater"
	"hulltally/fatigue/stream"
	"hulltally/ledger/logfile"
)

// The decimator, the counting and the quality watch are tested in
// fatigue/stream; here the ledger's own part: the logged load column
// turned into gauge pressure, nanosecond time stamps into seconds from the
// first sample, and the columns handed on in the right places.
func TestDiveCounterConversion(t *testing.T) {
	const lat = 45.0
	// One reading a second at 0, then at depth, then back at the surface:
	// each is its own 1 s window of the profile.
	tests := []struct {
		name string
		load logfile.Column
		vals []float64
		want []float64 // gauge pressure, MPa, worked by hand
	}{
		{"gauge pressure in bar", logfile.Column{Kind: logfile.KindLoad, Load: logfile.LoadPressureGauge, ToMPa: 0.1},
			[]float64{0, 100, 0}, []float64{0, 10, 0}},
		// 101.325 kPa absolute is the standard atmosphere, 0 gauge.
		{"absolute pressure in kPa", logfile.Column{Kind: logfile.KindLoad, Load: logfile.LoadPressureAbsolute, ToMPa: 1e-3},
			[]float64{101.325, 10101.325, 101.325}, []float64{0, 10, 0}},
		// Depth through the seawater table, at whole metres equal to the
		// direct formula of fatigue/seawater.
		{"depth in metres", logfile.Column{Kind: logfile.KindLoad, Load: logfile.LoadDepth},
			[]float64{0, 1000, 0}, []float64{0, seawater.DepthToMPa(1000, lat), 0}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			l := &Ledger{fat: &fatigueEnv{gateMPa: 0.05, gateUE: 5, binMPa: 0.5},
				cfg: &configs.Config{Ingest: configs.Ingest{SurfaceToleranceMPa: 0.05, MaxGapS: 60, MaxIntervalS: 10, CutLegMPaPerS: 0.01}}}
			cols := []logfile.Column{{Kind: logfile.KindTime}, tt.load, {Kind: logfile.KindStrain, Gauge: "g1"}, {Kind: logfile.KindTemp}}
			c := l.newDiveCounter(cols, 1, lat, nil)
			const t0 = int64(1_700_000_000_000_000_000)
			data := [][]float64{nil, tt.vals, {0, -300, 0}, {20, 4, 19}}
			// Two blocks: the first sample, then the rest.
			for _, r := range [][2]int{{0, 1}, {1, 3}} {
				ns := []int64{}
				for i := r[0]; i < r[1]; i++ {
					ns = append(ns, t0+int64(i)*1e9)
				}
				c.add(ns, func(k int) []float64 { return data[k][r[0]:r[1]] })
			}
			ss, holds, err := c.finish()
			if err != nil {
				t.Fatal(err)
			}
			p := c.profile
			if p.step != 1 || len(p.TimeS) != 3 || len(p.gauges) != 1 || p.gauges[0] != "g1" {
				t.Fatalf("profile step %v, %d points, gauges %v", p.step, len(p.TimeS), p.gauges)
			}
			for i := range tt.want {
				if p.TimeS[i] != float64(i) || math.Abs(p.Press[i]-tt.want[i]) > 1e-12 || p.Strain[0][i] != data[2][i] {
					t.Errorf("point %d: t %v p %v e %v, want %v %v %v", i, p.TimeS[i], p.Press[i], p.Strain[0][i], float64(i), tt.want[i], data[2][i])
				}
			}
			// 0 → P → 0: two half cycles of range P (the residue), and the
			// strain's two half cycles of 300 µε.
			if len(ss) != 2 || ss[0].name != "pressure" || ss[1].name != "strain:g1" || ss[1].unit != "microstrain" {
				t.Fatalf("series %+v", ss)
			}
			for _, s := range []struct {
				got []float64
				r   float64
			}{{ranges(ss[0]), tt.want[1]}, {ranges(ss[1]), 300}} {
				if len(s.got) != 2 || math.Abs(s.got[0]-s.r) > 1e-12 || math.Abs(s.got[1]-s.r) > 1e-12 {
					t.Errorf("ranges %v, want two of %v", s.got, s.r)
				}
			}
			// Two 1 s intervals, each charged at its higher end, P: 2 s in
			// the bin whose upper edge is the first multiple of 0.5 at or
			// above P (10.5 MPa for the absolute column, whose P comes out
			// 2e-15 above 10 in float64).
			if len(holds) != 1 || holds[0].Seconds != 2 || holds[0].LevelMPa != math.Ceil(p.Press[1]/0.5)*0.5 {
				t.Errorf("holds %+v", holds)
			}
			if f := c.quality.findings(); len(f) != 0 {
				t.Errorf("findings %+v", f)
			}
			// Surface temperature 20 °C before, 19 °C after (4 °C at depth).
			if b, a, ok := c.quality.surfaceTemps(); !ok || b != 20 || a != 19 {
				t.Errorf("surface temps %v %v %v", b, a, ok)
			}
		})
	}
}

func ranges(s series) []float64 {
	var out []float64
	for _, c := range s.cycles {
		out = append(out, c.Range)
	}
	return out
}

// The finding codes and the JSON of a finding stay as the ledger stored
// them.
func TestFindingAliases(t *testing.T) {
	if FindingGap != "gap_at_depth" || FindingCutStart != stream.FindingCutStart {
		t.Fatal("finding codes changed")
	}
	b, err := json.Marshal(Finding{Code: FindingCoarse, Detail: "x"})
	if err != nil || string(b) != `{"code":"coarse_sampling","detail":"x"}` {
		t.Fatalf("%s %v", b, err)
	}
}
