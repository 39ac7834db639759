package evidence

import (
	"math"
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
