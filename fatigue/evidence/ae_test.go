package evidence

import (
	"math"
	"strings"
	"testing"

	"pgregory.net/rapid"
)

// aeDive is a 40 MPa dive for the emission tests: 100 s at the surface, a
// 400 s descent (p = (t − 100 s)/10 MPa per s, so a hit at pressure P on
// the descent is at t = 100 + 10·P s), 600 s at depth, a 400 s ascent,
// 100 s at the surface. Phases finds the hold from 480 s (38 MPa on the
// descent) to 1120 s (38 MPa on the ascent): 640 s.
func aeDive() (Profile, Phase) {
	p := dive{SurfaceS: 100, DescentS: 400, HoldS: 600, AscentS: 400, AfterS: 100, PeakMPa: 40}.profile()
	ph, err := Phases(p, 0)
	if err != nil {
		panic(err)
	}
	return p, ph
}

// descentHits returns one hit on the descent at each pressure (MPa).
func descentHits(amp, energy float64, mpa ...float64) []Hit {
	hs := make([]Hit, len(mpa))
	for i, v := range mpa {
		hs[i] = Hit{TimeS: 100 + 10*v, Channel: 1, AmplitudeDB: amp, Energy: energy}
	}
	return hs
}

// holdHits returns, for each of the hold's four 160 s windows, that many
// hits spread in the window.
func holdHits(amp float64, perWindow ...int) []Hit {
	var hs []Hit
	for w, n := range perWindow {
		for j := range n {
			hs = append(hs, Hit{TimeS: 480 + 160*float64(w) + 5 + float64(j), Channel: 2, AmplitudeDB: amp, Energy: 100})
		}
	}
	return hs
}

func join(parts ...[]Hit) []Hit {
	var out []Hit
	for _, p := range parts {
		out = append(out, p...)
	}
	return out
}

func TestAEDivePhases(t *testing.T) {
	_, ph := aeDive()
	if ph.HoldStartS != 480 || ph.HoldEndS != 1120 {
		t.Fatalf("hold %g–%g s, want 480–1120 s (worked in aeDive)", ph.HoldStartS, ph.HoldEndS)
	}
}

func TestOnsetAndFelicity(t *testing.T) {
	p, ph := aeDive()
	// DefaultOnsetCriterion(30): increments of 3 MPa (10 % of 30 MPa),
	// more than 5 hits, 45 dB_AE floor (from memory / common practice).
	hitsCrit := DefaultOnsetCriterion(30)
	energyCrit := OnsetCriterion{Measure: MeasureEnergy, IncrementMPa: 3, Threshold: 1000, MinAmplitudeDB: 45}
	background := descentHits(60, 50, 2, 5, 8, 11) // one hit in four increments
	faint := descentHits(40, 50, 13.1, 13.2, 13.3, 13.4, 13.5, 13.6, 13.7, 13.8, 13.9, 14.0)
	burst24 := descentHits(55, 80, 24.1, 24.2, 24.3, 24.4, 24.5, 24.6, 24.7)
	atHold := holdHits(70, 10, 10, 10, 10)

	f := func(v float64) *float64 { return &v }
	tests := []struct {
		name      string
		hits      []Hit
		c         OnsetCriterion
		prevMax   float64
		wantOnset *float64
		wantRatio *float64
		wantEval  bool
		wantBeyon bool
		reason    string
	}{
		// 7 hits in 24–27 MPa, the first increment with ≥ 6: onset 24 MPa;
		// 24/30 = 0.8 (the 10 faint hits at 40 dB and the hold hits do not
		// count).
		{"onset below previous peak", join(background, faint, burst24, atHold), hitsCrit, 30, f(24), f(0.8), true, true, "at or below"},
		// 5 hits at 33.5 MPa: fewer than 6; no onset, dive to 40 > 30.
		{"beyond previous, no early emission", join(background, descentHits(60, 50, 33.5, 33.5, 33.5, 33.5, 33.5), atHold), hitsCrit, 30, nil, nil, true, true, "Kaiser behaviour held"},
		// 6 hits at 33.2 MPa: increment 33–36; 33/30 = 1.1.
		{"onset above previous peak", join(background, descentHits(60, 50, 33.2, 33.2, 33.2, 33.2, 33.2, 33.2)), hitsCrit, 30, f(33), f(1.1), true, true, "above the previous"},
		// Previous maximum 50 MPa (proof test), dive to 40: no onset.
		{"quiet dive below previous peak", background, DefaultOnsetCriterion(50), 50, nil, nil, false, false, "stayed at or below"},
		// First dive, no proof test: onset found, ratio not evaluated.
		{"first dive", join(background, burst24), hitsCrit, 0, f(24), nil, false, false, "first dive"},
		// Energy 300 per hit: 15–18 MPa holds 3 (900 < 1000), 18–21 holds 4
		// (1200 ≥ 1000): onset 18 MPa; 18/30 = 0.6.
		{"energy measure", join(descentHits(60, 300, 15.5, 16, 16.5), descentHits(60, 300, 18.5, 19, 19.5, 20)), energyCrit, 30, f(18), f(0.6), true, true, "at or below"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			press := PressureAt(p, tt.hits)
			on, err := Onset(tt.hits, press, ph, tt.c)
			if err != nil {
				t.Fatal(err)
			}
			if !sameFloatPtr(on.OnsetMPa, tt.wantOnset, 1e-9) {
				t.Fatalf("onset %v, want %v (increments %+v)", fp(on.OnsetMPa), fp(tt.wantOnset), on.Increments)
			}
			fr := Felicity(on.OnsetMPa, tt.prevMax, ph.PeakMPa)
			if !sameFloatPtr(fr.Ratio, tt.wantRatio, 1e-9) || fr.Evaluated != tt.wantEval || fr.BeyondPrevious != tt.wantBeyon {
				t.Fatalf("felicity %+v ratio %v, want ratio %v evaluated %v beyond %v", fr, fp(fr.Ratio), fp(tt.wantRatio), tt.wantEval, tt.wantBeyon)
			}
			if !strings.Contains(fr.Reason, tt.reason) {
				t.Fatalf("reason %q, want it to contain %q", fr.Reason, tt.reason)
			}
		})
	}
}

func sameFloatPtr(a, b *float64, tol float64) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	return math.Abs(*a-*b) <= tol
}

func fp(v *float64) any {
	if v == nil {
		return "nil"
	}
	return *v
}

func TestOnsetErrors(t *testing.T) {
	p, ph := aeDive()
	hits := descentHits(60, 1, 5)
	press := PressureAt(p, hits)
	good := DefaultOnsetCriterion(30)
	tests := []struct {
		name  string
		c     OnsetCriterion
		press []float64
		want  string
	}{
		{"unknown measure", OnsetCriterion{Measure: "counts", IncrementMPa: 1, Threshold: 1}, press, "neither"},
		{"zero increment", DefaultOnsetCriterion(0), press, "increment"},
		{"zero threshold", OnsetCriterion{Measure: MeasureHits, IncrementMPa: 1}, press, "threshold"},
		{"pressures mismatch", good, nil, "pressures for"},
		{"NaN pressure", good, []float64{math.NaN()}, "NaN"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := Onset(hits, tt.press, ph, tt.c); err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("error %v, want one containing %q", err, tt.want)
			}
		})
	}
}

func TestHoldEmission(t *testing.T) {
	p, ph := aeDive()
	def := DefaultHoldCriterion()
	tests := []struct {
		name       string
		hits       []Hit
		c          HoldCriterion
		wantHits   int
		wantWin    []int
		wantDecays bool
		wantQuiet  bool
		wantEval   bool
		reason     string
	}{
		// last window 1 ≤ QuietHits 2.
		{"decaying to quiet", holdHits(60, 10, 5, 3, 1), def, 19, []int{10, 5, 3, 1}, true, false, true, "at most 2"},
		// last 9 ≤ 0.5 × 20 = 10.
		{"decaying by half", holdHits(60, 20, 15, 12, 9), def, 56, []int{20, 15, 12, 9}, true, false, true, "against 20"},
		// last 5 > 0.5 × 8 = 4 and > 2.
		{"not decaying", holdHits(60, 8, 6, 6, 5), def, 25, []int{8, 6, 6, 5}, false, false, true, "does not decay"},
		// rising emission at depth.
		{"rising", holdHits(60, 2, 4, 6, 8), def, 20, []int{2, 4, 6, 8}, false, false, true, "does not decay"},
		// 4 hits < MinHits 5; descent hits and faint hold hits do not count.
		{"quiet hold", join(descentHits(60, 1, 10, 20, 30), holdHits(60, 1, 1, 1, 1), holdHits(30, 9, 9, 9, 9)), def, 4, []int{1, 1, 1, 1}, true, true, true, "quiet hold"},
		{"zero criterion", holdHits(60, 8, 6, 6, 5), HoldCriterion{}, 0, nil, false, false, false, "not evaluated"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := HoldEmission(tt.hits, PressureAt(p, tt.hits), ph, tt.c)
			if r.Evaluated != tt.wantEval || r.Hits != tt.wantHits || r.Decays != tt.wantDecays || r.Quiet != tt.wantQuiet {
				t.Fatalf("hold %+v, want hits %d decays %v quiet %v evaluated %v", r, tt.wantHits, tt.wantDecays, tt.wantQuiet, tt.wantEval)
			}
			for i, n := range tt.wantWin {
				if r.PerWindow[i] != n {
					t.Fatalf("windows %v, want %v", r.PerWindow, tt.wantWin)
				}
			}
			if !strings.Contains(r.Reason, tt.reason) {
				t.Fatalf("reason %q, want it to contain %q", r.Reason, tt.reason)
			}
			if r.Hits > 0 && (r.MinPressureMPa < 38 || r.MaxPressureMPa > 40) {
				t.Fatalf("hold hits at %g–%g MPa, want within 38–40 MPa", r.MinPressureMPa, r.MaxPressureMPa)
			}
		})
	}
}

func TestDefaultK(t *testing.T) {
	// Table for FRP vessels, ASME BPVC Section V Article 11 (from memory).
	tests := []struct{ n, k int }{
		{0, -1}, {15, -1}, {16, 1}, {20, 5}, {75, 60}, {76, 60}, {100, 80}, {1000, 800}, {1001, 801}, {5000, 4800},
	}
	for _, tt := range tests {
		if got := DefaultK(tt.n); got != tt.k {
			t.Errorf("DefaultK(%d) = %d, want %d", tt.n, got, tt.k)
		}
	}
}

func TestHistoricIndexAndSeverity(t *testing.T) {
	// Worked example (arithmetic by hand): 20 hits, S_i = i for i = 1..20
	// in time order.
	//   N = 20 → K = N − 15 = 5 (DefaultK, from memory).
	//   Σ_{i=1..20} S_i = 20·21/2 = 210; Σ_{i=6..20} S_i = 210 − (1+…+5) = 195.
	//   H = N/(N−K) · 195/210 = (20/15)·(195/210) = 780/630 = 26/21 = 1.238095…
	//   Severity, J = 10: the 10 largest are 11..20, Σ = 155, mean 15.5.
	ramp := make([]Hit, 20)
	for i := range ramp {
		ramp[i] = Hit{TimeS: float64(i), AmplitudeDB: 60, Energy: float64(i + 1)}
	}
	// Same hits given out of time order: the index follows time.
	shuffled := append([]Hit(nil), ramp...)
	for i, j := 0, len(shuffled)-1; i < j; i, j = i+3, j-2 {
		shuffled[i], shuffled[j] = shuffled[j], shuffled[i]
	}
	// 100 hits of equal strength: K = 80; H = 100/20 · 20/100 = 1.
	flat := make([]Hit, 100)
	for i := range flat {
		flat[i] = Hit{TimeS: float64(i), Energy: 7}
	}
	// A custom K of 10 on the ramp: Σ_{i=11..20} = 155; H = 20/10 · 155/210
	// = 310/210 = 1.476190….
	k10 := func(int) int { return 10 }

	tests := []struct {
		name    string
		hits    []Hit
		k       func(int) int
		wantH   float64
		wantHOK bool
		j       int
		wantS   float64
		wantSOK bool
	}{
		{"worked example", ramp, nil, 26.0 / 21, true, 0, 15.5, true},
		{"out of time order", shuffled, DefaultK, 26.0 / 21, true, 10, 15.5, true},
		{"equal strengths", flat, nil, 1, true, 10, 7, true},
		{"custom K, J = 5", ramp, k10, 310.0 / 210, true, 5, 18, true},     // (16+…+20)/5 = 90/5 = 18
		{"15 hits: not computed", ramp[:15], nil, 0, false, 0, 10.5, true}, // top 10 of 1..15: 6..15, mean 10.5
		{"9 hits: no severity", ramp[:9], nil, 0, false, 0, 0, false},
		{"K = N: not computed", ramp, func(n int) int { return n }, 0, false, 20, 10.5, true}, // mean of 1..20
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h, ok := HistoricIndex(tt.hits, tt.k)
			if ok != tt.wantHOK || math.Abs(h-tt.wantH) > 1e-12 {
				t.Errorf("H = %v, %v; want %v, %v", h, ok, tt.wantH, tt.wantHOK)
			}
			s, ok := Severity(tt.hits, tt.j)
			if ok != tt.wantSOK || math.Abs(s-tt.wantS) > 1e-12 {
				t.Errorf("severity = %v, %v; want %v, %v", s, ok, tt.wantS, tt.wantSOK)
			}
		})
	}
}

func TestFilterAmplitude(t *testing.T) {
	hs := []Hit{{AmplitudeDB: 40}, {AmplitudeDB: 45}, {AmplitudeDB: 70}}
	if got := FilterAmplitude(hs, 45); len(got) != 2 || got[0].AmplitudeDB != 45 {
		t.Fatalf("FilterAmplitude = %+v, want the 45 and 70 dB hits", got)
	}
}

func TestPressureAtExamples(t *testing.T) {
	p := Profile{TimeS: []float64{0, 10, 20}, Pressure: []float64{0, 5, 1}}
	hits := []Hit{{TimeS: -5}, {TimeS: 0}, {TimeS: 4}, {TimeS: 10}, {TimeS: 15}, {TimeS: 25}}
	// Linear interpolation by hand: 4 s → 0 + 5·4/10 = 2; 15 s → 5 − 4·0.5 = 3.
	want := []float64{0, 0, 2, 5, 3, 1}
	got := PressureAt(p, hits)
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-12 {
			t.Fatalf("PressureAt = %v, want %v", got, want)
		}
	}
	if PressureAt(Profile{}, hits) != nil {
		t.Fatal("PressureAt on an empty profile, want nil")
	}
}

func TestPressureAtProperties(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		n := rapid.IntRange(1, 60).Draw(t, "n")
		p := Profile{TimeS: make([]float64, n), Pressure: make([]float64, n)}
		tm := rapid.Float64Range(-100, 100).Draw(t, "t0")
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := range n {
			if i > 0 {
				tm += rapid.Float64Range(1e-3, 100).Draw(t, "dt")
			}
			p.TimeS[i] = tm
			v := rapid.Float64Range(-1, 120).Draw(t, "p")
			p.Pressure[i] = v
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		hits := make([]Hit, rapid.IntRange(0, 40).Draw(t, "hits"))
		for i := range hits {
			hits[i].TimeS = rapid.Float64Range(p.TimeS[0]-50, p.TimeS[n-1]+50).Draw(t, "ht")
		}
		for i, v := range PressureAt(p, hits) {
			if !(v >= lo && v <= hi) {
				t.Fatalf("pressure %v at %v s outside the profile's range [%v, %v]", v, hits[i].TimeS, lo, hi)
			}
		}
		at := make([]Hit, n)
		for i := range at {
			at[i].TimeS = p.TimeS[i]
		}
		for i, v := range PressureAt(p, at) {
			if v != p.Pressure[i] {
				t.Fatalf("pressure %v at sample time %v s, want the sample's %v", v, p.TimeS[i], p.Pressure[i])
			}
		}
	})
}

func TestHoldCriterionValidate(t *testing.T) {
	mod := func(f func(c *HoldCriterion)) HoldCriterion {
		c := DefaultHoldCriterion()
		f(&c)
		return c
	}
	tests := []struct {
		name string
		c    HoldCriterion
		want string // "" for valid
	}{
		{"default", DefaultHoldCriterion(), ""},
		{"one window", mod(func(c *HoldCriterion) { c.Windows = 1 }), "windows"},
		{"fraction above 1", mod(func(c *HoldCriterion) { c.DecayFraction = 1.5 }), "decay fraction"},
		{"negative quiet hits", mod(func(c *HoldCriterion) { c.QuietHits = -1 }), "quiet hits"},
		{"negative minimum", mod(func(c *HoldCriterion) { c.MinHits = -1 }), "minimum hits"},
		{"NaN floor", mod(func(c *HoldCriterion) { c.MinAmplitudeDB = math.NaN() }), "NaN"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.c.Validate()
			if (tt.want == "") != (err == nil) || (err != nil && !strings.Contains(err.Error(), tt.want)) {
				t.Fatalf("Validate = %v, want %q", err, tt.want)
			}
		})
	}
}

func TestOnsetSurfaceHits(t *testing.T) {
	// Hits before the first sample and at slightly negative gauge pressure
	// (surface noise) count in the first increment, 0–3 MPa: 6 hits there
	// give an onset at 0 MPa (ratio 0 against 30 MPa: emission from the
	// start calls for evaluation).
	p := Profile{TimeS: []float64{0, 10, 20, 30}, Pressure: []float64{-0.01, 0, 30, 0}}
	ph, err := Phases(p, 0)
	if err != nil {
		t.Fatal(err)
	}
	hits := []Hit{{TimeS: -5, AmplitudeDB: 50}, {TimeS: 0, AmplitudeDB: 50}, {TimeS: 1, AmplitudeDB: 50},
		{TimeS: 2, AmplitudeDB: 50}, {TimeS: 10, AmplitudeDB: 50}, {TimeS: 10.5, AmplitudeDB: 50}}
	on, err := Onset(hits, PressureAt(p, hits), ph, DefaultOnsetCriterion(30))
	if err != nil {
		t.Fatal(err)
	}
	if on.OnsetMPa == nil || *on.OnsetMPa != 0 || on.CountedHits != 6 || on.Increments[0].Hits != 6 {
		t.Fatalf("onset %+v, want 0 MPa from 6 hits in the first increment", on)
	}
}

func TestFelicityCases(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	tests := []struct {
		name                 string
		onset                *float64
		prev, peak           float64
		wantRatio            *float64
		wantEval, wantBeyond bool
	}{
		// 20/30 = 0.6667: emission below the previous peak on a dive that
		// stayed below it is still evidence.
		{"onset on a shallower dive", f(20), 30, 25, f(20.0 / 30), true, false},
		// onset exactly at the previous maximum: 30/30 = 1.
		{"onset at previous max", f(30), 30, 35, f(1), true, true},
		{"negative previous max", f(10), -1, 20, nil, false, false},
		// dive peak equal to the previous max is not beyond it.
		{"peak equals previous, no onset", nil, 30, 30, nil, false, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := Felicity(tt.onset, tt.prev, tt.peak)
			if !sameFloatPtr(r.Ratio, tt.wantRatio, 1e-12) || r.Evaluated != tt.wantEval || r.BeyondPrevious != tt.wantBeyond || r.Reason == "" {
				t.Fatalf("Felicity = %+v (ratio %v), want ratio %v evaluated %v beyond %v", r, fp(r.Ratio), fp(tt.wantRatio), tt.wantEval, tt.wantBeyond)
			}
		})
	}
}
