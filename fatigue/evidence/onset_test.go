package evidence

import (
	"math"
	"strings"
	"testing"

	"pgregory.net/rapid"
)

func TestOnsetSlidingWindow(t *testing.T) {
	p, ph := aeDive()
	// DefaultOnsetCriterion(30): windows of 3 MPa (10 % of 30 MPa), 6 hits
	// ("more than 5"), 45 dB_AE floor (from memory / common practice).
	c := DefaultOnsetCriterion(30)
	f := func(v float64) *float64 { return &v }
	tests := []struct {
		name        string
		hits        []Hit
		c           OnsetCriterion
		wantOnset   *float64
		wantHits    int // in the first significant window
		wantDensest int
		wantStart   *float64
		wantCounted int
	}{
		// Adversarial: ten 60 dB hits within 2.2–3.9 MPa (1.7 MPa, a 5.7 %
		// rise) straddling the 3 MPa edge of a fixed 10 % bin, five each
		// side. Fixed bins would see 5 and 5, neither more than 5; the
		// window at 2.2 MPa holds all ten.
		{"ten hits in a 6 % rise across a bin edge", descentHits(60, 50, 2.2, 2.4, 2.6, 2.8, 2.95, 3.05, 3.3, 3.5, 3.7, 3.9), c, f(2.2), 10, 10, f(2.2), 10},
		// Six hits spanning exactly one window (10 to 13 MPa): the upper
		// edge is inside, so significant at 10 MPa.
		{"six hits spanning exactly the window", descentHits(60, 50, 10, 10.5, 11, 11.5, 12, 13), c, f(10), 6, 6, f(10), 6},
		// Control: the sixth hit 0.01 MPa beyond the window: at most 5 in
		// any 3 MPa rise, no onset.
		{"six hits spanning more than the window", descentHits(60, 50, 10, 10.5, 11, 11.5, 12, 13.01), c, nil, 0, 5, f(10), 6},
		// One lone hit at 5 MPa, then six in 7–9.5 MPa: the window at 5 holds
		// 5, 7, 7.5, 8 (4); the first significant one starts at the first hit
		// of the cluster, 7 MPa.
		{"onset at the cluster's first hit", descentHits(60, 50, 5, 7, 7.5, 8, 8.5, 9, 9.5), c, f(7), 6, 6, f(7), 7},
		// Hold hits and faint descent hits never count.
		{"hold and faint hits", join(holdHits(70, 10, 10, 10, 10), descentHits(40, 50, 13.1, 13.2, 13.3, 13.4, 13.5, 13.6)), c, nil, 0, 0, nil, 0},
		// Energy 300 per hit: 15.5, 16, 16.5 and 18.5 lie within 3 MPa of
		// 15.5: 1200 ≥ 1000, onset 15.5 MPa (fixed bins of 15–18 and 18–21
		// would give 900 and an onset at 18).
		{"energy across a bin edge", join(descentHits(60, 300, 15.5, 16, 16.5), descentHits(60, 300, 18.5, 19, 19.5, 20)),
			OnsetCriterion{Measure: MeasureEnergy, IncrementMPa: 3, Threshold: 1000, MinAmplitudeDB: 45}, f(15.5), 4, 4, f(15.5), 7},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			on, err := Onset(tt.hits, PressureAt(p, tt.hits), ph, tt.c)
			if err != nil {
				t.Fatal(err)
			}
			if !sameFloatPtr(on.OnsetMPa, tt.wantOnset, 1e-9) || on.OnsetHits != tt.wantHits {
				t.Fatalf("onset %v with %d hits, want %v with %d (%s)", fp(on.OnsetMPa), on.OnsetHits, fp(tt.wantOnset), tt.wantHits, on.Reason)
			}
			if on.DensestHits != tt.wantDensest || !sameFloatPtr(on.DensestStartMPa, tt.wantStart, 1e-9) || on.CountedHits != tt.wantCounted {
				t.Fatalf("densest %d at %v, counted %d; want %d at %v, counted %d", on.DensestHits, fp(on.DensestStartMPa), on.CountedHits, tt.wantDensest, fp(tt.wantStart), tt.wantCounted)
			}
			if on.WindowMPa != tt.c.IncrementMPa || on.Reason == "" {
				t.Fatalf("window %g, reason %q", on.WindowMPa, on.Reason)
			}
		})
	}
}

// onsetPhase puts every hit in the descent.
var onsetPhase = Phase{HoldStartS: 1e9, HoldEndS: 2e9}

// gridHits draws hits on a grid of 1/64 MPa (exact in binary), so that
// shifting them keeps every difference exact.
func gridHits(t *rapid.T) ([]Hit, []float64) {
	n := rapid.IntRange(0, 30).Draw(t, "n")
	hits := make([]Hit, n)
	pr := make([]float64, n)
	for i := range hits {
		pr[i] = float64(rapid.IntRange(0, 64*20).Draw(t, "p")) / 64
		hits[i] = Hit{TimeS: float64(i), AmplitudeDB: 60, Energy: float64(rapid.IntRange(0, 100).Draw(t, "e"))}
	}
	return hits, pr
}

func TestOnsetShiftInvariance(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		hits, pr := gridHits(t)
		c := OnsetCriterion{
			Measure:        rapid.SampledFrom([]string{MeasureHits, MeasureEnergy}).Draw(t, "measure"),
			IncrementMPa:   float64(rapid.IntRange(1, 64*5).Draw(t, "w")) / 64,
			Threshold:      float64(rapid.IntRange(1, 8).Draw(t, "thr")),
			MinAmplitudeDB: 45,
		}
		if c.Measure == MeasureEnergy {
			c.Threshold *= 50
		}
		shift := float64(rapid.IntRange(0, 64*30).Draw(t, "shift")) / 64
		moved := make([]float64, len(pr))
		for i, v := range pr {
			moved[i] = v + shift
		}
		a, err := Onset(hits, pr, onsetPhase, c)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Onset(hits, moved, onsetPhase, c)
		if err != nil {
			t.Fatal(err)
		}
		if (a.OnsetMPa == nil) != (b.OnsetMPa == nil) {
			t.Fatalf("shift %g MPa changed significance: %v → %v", shift, fp(a.OnsetMPa), fp(b.OnsetMPa))
		}
		if a.OnsetMPa != nil && (*b.OnsetMPa != *a.OnsetMPa+shift || a.OnsetHits != b.OnsetHits) {
			t.Fatalf("shift %g MPa: onset %v (%d hits) → %v (%d hits)", shift, *a.OnsetMPa, a.OnsetHits, *b.OnsetMPa, b.OnsetHits)
		}
		if a.DensestHits != b.DensestHits || a.MaxWindowEnergy != b.MaxWindowEnergy {
			t.Fatalf("shift %g MPa: densest %d/%g → %d/%g", shift, a.DensestHits, a.MaxWindowEnergy, b.DensestHits, b.MaxWindowEnergy)
		}
	})
}

func TestOnsetWindowsAtHitsSuffice(t *testing.T) {
	// Brute force over windows starting anywhere on a grid of 1/128 MPa
	// (finer than the hits' grid): the most hits in any window equals
	// DensestHits, and significance agrees.
	rapid.Check(t, func(t *rapid.T) {
		hits, pr := gridHits(t)
		w := float64(rapid.IntRange(1, 64*5).Draw(t, "w")) / 64
		thr := rapid.IntRange(1, 8).Draw(t, "thr")
		c := OnsetCriterion{Measure: MeasureHits, IncrementMPa: w, Threshold: float64(thr), MinAmplitudeDB: 45}
		on, err := Onset(hits, pr, onsetPhase, c)
		if err != nil {
			t.Fatal(err)
		}
		best := 0
		for a := -w; a <= 21; a += 1.0 / 128 {
			n := 0
			for _, v := range pr {
				if v >= a && v <= a+w {
					n++
				}
			}
			best = max(best, n)
		}
		if best != on.DensestHits || (best >= thr) != (on.OnsetMPa != nil) {
			t.Fatalf("brute force densest %d, Onset %d (onset %v, threshold %d)", best, on.DensestHits, fp(on.OnsetMPa), thr)
		}
	})
}

func TestOnsetAndFelicity(t *testing.T) {
	p, ph := aeDive()
	hitsCrit := DefaultOnsetCriterion(30)
	background := descentHits(60, 50, 2, 5, 8, 11) // at most 2 hits in any 3 MPa rise
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
		wantLB    *float64
		wantEval  bool
		wantBeyon bool
		reason    string
	}{
		// Adversarial: a quiet dive that stayed below the previous maximum
		// (50 MPa proof, dive to 40) is not evaluated, never a pass; it
		// shows the ratio is at least 40/50 = 0.8.
		{"quiet dive below previous peak", background, DefaultOnsetCriterion(50), 50, nil, nil, f(0.8), false, false, "not evaluated"},
		// First dive, no proof test: onset found, ratio and bound nil.
		{"first dive", join(background, burst24), hitsCrit, 0, f(24.1), nil, nil, false, false, "first dive"},
		// 7 hits within 24.1–24.7 MPa: onset 24.1; 24.1/30 = 0.80333.
		{"onset below previous peak", join(background, faint, burst24, atHold), hitsCrit, 30, f(24.1), f(24.1 / 30), nil, true, true, "at or below"},
		// 5 hits at 33.5 MPa: no onset, dive to 40 > 30: bound 40/30.
		{"beyond previous, no early emission", join(background, descentHits(60, 50, 33.5, 33.5, 33.5, 33.5, 33.5), atHold), hitsCrit, 30, nil, nil, f(40.0 / 30), true, true, "Kaiser behaviour held"},
		// 6 hits at 33.2 MPa: 33.2/30 = 1.10667.
		{"onset above previous peak", join(background, descentHits(60, 50, 33.2, 33.2, 33.2, 33.2, 33.2, 33.2)), hitsCrit, 30, f(33.2), f(33.2 / 30), nil, true, true, "above the previous"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			on, err := Onset(tt.hits, PressureAt(p, tt.hits), ph, tt.c)
			if err != nil {
				t.Fatal(err)
			}
			if !sameFloatPtr(on.OnsetMPa, tt.wantOnset, 1e-9) {
				t.Fatalf("onset %v, want %v (%s)", fp(on.OnsetMPa), fp(tt.wantOnset), on.Reason)
			}
			fr := Felicity(on.OnsetMPa, tt.prevMax, ph.PeakMPa)
			if !sameFloatPtr(fr.Ratio, tt.wantRatio, 1e-9) || !sameFloatPtr(fr.LowerBound, tt.wantLB, 1e-9) || fr.Evaluated != tt.wantEval || fr.BeyondPrevious != tt.wantBeyon {
				t.Fatalf("felicity %+v ratio %v bound %v, want ratio %v bound %v evaluated %v beyond %v", fr, fp(fr.Ratio), fp(fr.LowerBound), fp(tt.wantRatio), fp(tt.wantLB), tt.wantEval, tt.wantBeyon)
			}
			if !strings.Contains(fr.Reason, tt.reason) {
				t.Fatalf("reason %q, want it to contain %q", fr.Reason, tt.reason)
			}
		})
	}
}

func TestFelicityCases(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	tests := []struct {
		name                 string
		onset                *float64
		prev, peak           float64
		wantRatio, wantLB    *float64
		wantEval, wantBeyond bool
	}{
		// Adversarial: no onset on a dive below the previous maximum is not
		// a pass: ratio nil, not evaluated, bound 25/30 = 0.8333.
		{"quiet shallower dive", nil, 30, 25, nil, f(25.0 / 30), false, false},
		// Dive peak equal to the previous maximum is not beyond it: bound 1,
		// not evaluated.
		{"peak equals previous, no onset", nil, 30, 30, nil, f(1), false, false},
		{"no reference", nil, 0, 25, nil, nil, false, false},
		{"negative previous max", f(10), -1, 20, nil, nil, false, false},
		// 20/30 = 0.6667: emission below the previous peak on a dive that
		// stayed below it is still evidence.
		{"onset on a shallower dive", f(20), 30, 25, f(20.0 / 30), nil, true, false},
		// onset exactly at the previous maximum: 30/30 = 1.
		{"onset at previous max", f(30), 30, 35, f(1), nil, true, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := Felicity(tt.onset, tt.prev, tt.peak)
			if !sameFloatPtr(r.Ratio, tt.wantRatio, 1e-12) || !sameFloatPtr(r.LowerBound, tt.wantLB, 1e-12) || r.Evaluated != tt.wantEval || r.BeyondPrevious != tt.wantBeyond || r.Reason == "" {
				t.Fatalf("Felicity = %+v (ratio %v, bound %v), want ratio %v bound %v evaluated %v beyond %v", r, fp(r.Ratio), fp(r.LowerBound), fp(tt.wantRatio), fp(tt.wantLB), tt.wantEval, tt.wantBeyond)
			}
		})
	}
}

func TestFelicityWindow(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	ph := Phase{Frac: 0.95, PeakMPa: 40}
	tests := []struct {
		name      string
		onset     *float64
		prev      float64
		window    float64
		wantLB    *float64
		wantEval  bool
		reasonHas string
	}{
		// Adversarial: a dive to 40 MPa after a previous 38 MPa, with a
		// 3.8 MPa window: descent hits reach only 0.95·40 = 38 MPa, so every
		// window starting above 38 − 3.8 = 34.2 MPa was cut short. Not
		// evaluated; bound 34.2/38 = 0.9.
		{"just beyond the previous peak", nil, 38, 3.8, f(0.9), false, "not evaluated"},
		// Previous 30 MPa, window 3 MPa: tested to 38 − 3 = 35 ≥ 30: Kaiser
		// held, bound 35/30.
		{"well beyond the previous peak", nil, 30, 3, f(35.0 / 30), true, "Kaiser"},
		// Same depth as before: 35/40 = 0.875, not evaluated.
		{"same depth", nil, 40, 3, f(35.0 / 40), false, "stayed at or below"},
		{"onset", f(30), 40, 3, nil, true, "0.750"},
		{"bad window", nil, 30, math.NaN(), nil, false, "window"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := FelicityWindow(tt.onset, tt.prev, ph, tt.window)
			if !sameFloatPtr(r.LowerBound, tt.wantLB, 1e-12) || r.Evaluated != tt.wantEval || !strings.Contains(r.Reason, tt.reasonHas) {
				t.Fatalf("FelicityWindow = %+v (bound %v), want bound %v evaluated %v, reason with %q", r, fp(r.LowerBound), fp(tt.wantLB), tt.wantEval, tt.reasonHas)
			}
			if r.Evaluated && tt.onset == nil && r.Ratio != nil {
				t.Fatalf("ratio %v without an onset", *r.Ratio)
			}
		})
	}
}

func TestOnsetSurfaceHits(t *testing.T) {
	// Hits before the first sample and at slightly negative gauge pressure
	// (surface noise) are placed at 0 MPa: 6 hits within 0–1.5 MPa give an
	// onset at 0 MPa (ratio 0 against 30 MPa: emission from the start
	// calls for evaluation).
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
	if on.OnsetMPa == nil || *on.OnsetMPa != 0 || on.CountedHits != 6 || on.OnsetHits != 6 {
		t.Fatalf("onset %+v, want 0 MPa from 6 hits", on)
	}
}

func TestOnsetErrors(t *testing.T) {
	p, ph := aeDive()
	hits := descentHits(60, 1, 5)
	press := PressureAt(p, hits)
	good := DefaultOnsetCriterion(30)
	energy := OnsetCriterion{Measure: MeasureEnergy, IncrementMPa: 3, Threshold: 1, MinAmplitudeDB: 45}
	tests := []struct {
		name  string
		hits  []Hit
		c     OnsetCriterion
		press []float64
		want  string
	}{
		{"unknown measure", hits, OnsetCriterion{Measure: "counts", IncrementMPa: 1, Threshold: 1}, press, "neither"},
		{"zero window", hits, DefaultOnsetCriterion(0), press, "window"},
		{"zero threshold", hits, OnsetCriterion{Measure: MeasureHits, IncrementMPa: 1}, press, "threshold"},
		{"pressures mismatch", hits, good, nil, "pressures for"},
		{"NaN pressure", hits, good, []float64{math.NaN()}, "NaN"},
		{"negative energy", descentHits(60, -1, 5), energy, press, "energy"},
		{"NaN energy", descentHits(60, math.NaN(), 5), energy, press, "energy"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := Onset(tt.hits, tt.press, ph, tt.c); err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("error %v, want one containing %q", err, tt.want)
			}
		})
	}
}
