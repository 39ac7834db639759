package evidence

import (
	"math"
	"strings"
	"testing"

	"pgregory.net/rapid"
)

// longHold is a 40 MPa dive whose hold, as Phases finds it, lasts 1200 s
// (20 minutes): from 480 s (38 MPa on the descent) to 1680 s (38 MPa on
// the ascent, which starts at 1660 s).
func longHold() (Profile, Phase) {
	p := dive{SurfaceS: 100, DescentS: 400, HoldS: 1160, AscentS: 400, AfterS: 100, PeakMPa: 40}.profile()
	ph, err := Phases(p, 0)
	if err != nil {
		panic(err)
	}
	return p, ph
}

// shortHold is a 40 MPa dive with no time at the peak, with a hand-made
// hold of the samples at or above 95 % of the peak: 480 s to 520 s, 40 s,
// shorter than the 60 s settling time. (Phases itself widens a bounce's
// hold to 95 % of the pressure sustained for 60 s — TestPhases — so a hold
// this short is built by hand to test HoldEmission on one.)
func shortHold() (Profile, Phase) {
	p := dive{SurfaceS: 100, DescentS: 400, HoldS: 0, AscentS: 400, AfterS: 100, PeakMPa: 40}.profile()
	return p, peakPhase(p, DefaultHoldFrac)
}

// peakPhase is the hold of the samples at or above frac × the single
// highest sample, by hand (no sustained peak).
func peakPhase(p Profile, frac float64) Phase {
	if frac == 0 {
		frac = DefaultHoldFrac
	}
	ph, err := Phases(p, frac)
	if err != nil {
		panic(err)
	}
	level := frac * ph.PeakMPa
	hs, he := -1, -1
	for i, v := range p.Pressure {
		if v >= level {
			if hs < 0 {
				hs = i
			}
			he = i
		}
	}
	ph.LevelMPa, ph.HoldStart, ph.HoldEnd, ph.HoldStartS, ph.HoldEndS = level, hs, he, p.TimeS[hs], p.TimeS[he]
	return ph
}

// at returns one 60 dB hit at each time (s).
func at(ts ...float64) []Hit {
	hs := make([]Hit, len(ts))
	for i, v := range ts {
		hs[i] = Hit{TimeS: v, Channel: 2, AmplitudeDB: 60, Energy: 100}
	}
	return hs
}

// every returns n times from t0, dt apart.
func every(t0, dt float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = t0 + dt*float64(i)
	}
	return out
}

func TestHoldEmission(t *testing.T) {
	lp, lph := longHold()
	sp, sph := shortHold()
	p, ph := aeDive()
	def := DefaultHoldCriterion()
	relOnly := def
	relOnly.MaxHitsAfterSettle = 100 // to isolate the decay judgement
	if lph.HoldStartS != 480 || lph.HoldEndS != 1680 || sph.HoldStartS != 480 || sph.HoldEndS != 520 {
		t.Fatalf("holds %g–%g and %g–%g s, want 480–1680 and 480–520 (worked above)", lph.HoldStartS, lph.HoldEndS, sph.HoldStartS, sph.HoldEndS)
	}
	tests := []struct {
		name       string
		p          Profile
		ph         Phase
		hits       []Hit
		c          HoldCriterion
		wantHits   int
		wantFirst  int
		wantLate   int
		wantDecays bool
		wantQuiet  bool
		wantAfter  int
		wantAbs    bool
		wantSig    bool
		wantEval   bool
		reason     string
	}{
		// Adversarial: one hit every 20 s through a 20-minute hold (485 to
		// 1665 s, 60 hits) and a burst of 20 in its first 10 s. Rate windows
		// of 300 s: the first holds 15 + 20 = 35, the densest of the second
		// half 16 (1085–1385 s, both edges in); 16 ≤ 0.5·35 = 17.5, so the
		// rate "decays", and the last quarter (15) has fewer than the first.
		// But 57 hits come after the first 60 s (545 s on), more than 5:
		// significant.
		{"continuing emission with a falling rate", lp, lph, join(at(every(485, 20, 60)...), at(every(490, 0.5, 20)...)), def,
			80, 35, 16, true, false, 57, true, true, true, "57 hits after"},
		// Adversarial for the decay: 10 hits in the first 160 s window, a
		// burst of 8 at 950–957 s just before the fixed last window
		// (960–1120 s), which holds one hit at 1100 s. A fixed last window
		// (1 ≤ 2) would call this decaying; the window sliding over the
		// second half (800–1120 s) finds 9 in 950–1110 s: 9 > 0.5·10 and
		// > 2, no decay.
		{"burst just before the last fixed window", p, ph, join(at(every(485, 1, 10)...), at(every(950, 1, 8)...), at(1100)), relOnly,
			19, 10, 9, false, false, 9, true, true, true, "does not decay"},
		// Hold of 40 s, shorter than 60 s: no absolute judgement (not
		// evaluated); 6 hits in 481–486 s, the densest 10 s window of the
		// second half (500–520 s) holds 1 hit: decays.
		{"hold shorter than the settling time", sp, sph, at(481, 482, 483, 484, 485, 486, 510), def,
			7, 6, 1, true, false, 0, false, false, true, "shorter than the 60 s settling time"},
		// The same short hold with emission all through it: 10 s windows;
		// the first (480–490 s) holds 1, the densest of the second half
		// (501–511 s) 3 > 0.5·1 and > 2: decay fails, which stands on its
		// own.
		{"short hold, rising emission", sp, sph, at(482, 501, 505, 509, 513, 517), def,
			6, 1, 3, false, false, 0, false, true, true, "does not decay"},
		// 4 hold windows of 160 s: 10, 5, 3, 1 hits (holdHits). First window
		// 10; the densest 160 s window of the second half is 805–965 s
		// (3 + 1 = 4) ≤ 5: the rate decays. But 9 hits come after 540 s:
		// more than 5, significant.
		{"decaying rate, too many hits", p, ph, holdHits(60, 10, 5, 3, 1), def, 19, 10, 4, true, false, 9, true, true, true, "9 hits after"},
		// 10 hits in the first 60 s and 3 after, decaying: not significant.
		{"settling burst, quiet after", p, ph, at(485, 486, 487, 488, 489, 490, 491, 492, 493, 494, 700, 900, 1000), def,
			13, 10, 2, true, false, 3, true, false, true, "at most 5"},
		// 20, 15, 12, 9: the window 807–967 s holds 10 + 3 = 13 > 0.5·20:
		// no decay.
		{"third quarter busy", p, ph, holdHits(60, 20, 15, 12, 9), def, 56, 20, 13, false, false, 36, true, true, true, "does not decay"},
		// Rising emission at depth: densest late window 960–1120 s holds 8.
		{"rising", p, ph, holdHits(60, 2, 4, 6, 8), def, 20, 2, 8, false, false, 18, true, true, true, "does not decay"},
		// 4 hits < MinHits 5; descent hits and faint hold hits do not count;
		// 3 after settling (645, 805, 965 s); the late window 805–965 s
		// holds 2 (both edges in).
		{"quiet hold", p, ph, join(descentHits(60, 1, 10, 20, 30), holdHits(60, 1, 1, 1, 1), holdHits(30, 9, 9, 9, 9)), def, 4, 1, 2, true, true, 3, true, false, true, "quiet hold"},
		{"zero criterion", p, ph, holdHits(60, 8, 6, 6, 5), HoldCriterion{}, 0, 0, 0, false, false, 0, false, false, false, "not evaluated"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := HoldEmission(tt.hits, PressureAt(tt.p, tt.hits), tt.ph, tt.c)
			if r.Evaluated != tt.wantEval || r.Hits != tt.wantHits || r.FirstHits != tt.wantFirst || r.LateHits != tt.wantLate {
				t.Fatalf("hold %+v, want evaluated %v hits %d first %d late %d", r, tt.wantEval, tt.wantHits, tt.wantFirst, tt.wantLate)
			}
			if r.Decays != tt.wantDecays || r.Quiet != tt.wantQuiet || r.HitsAfterSettle != tt.wantAfter || r.AbsoluteJudged != tt.wantAbs || r.Significant != tt.wantSig {
				t.Fatalf("decays %v quiet %v after %d absolute %v significant %v; want %v %v %d %v %v (%s)",
					r.Decays, r.Quiet, r.HitsAfterSettle, r.AbsoluteJudged, r.Significant, tt.wantDecays, tt.wantQuiet, tt.wantAfter, tt.wantAbs, tt.wantSig, r.Reason)
			}
			if !strings.Contains(r.Reason, tt.reason) {
				t.Fatalf("reason %q, want it to contain %q", r.Reason, tt.reason)
			}
			if !tt.wantAbs && r.AbsoluteReason == "" {
				t.Fatal("absolute judgement not made without a reason")
			}
			if r.Hits > 0 && (r.MinPressureMPa < 38 || r.MaxPressureMPa > 40) {
				t.Fatalf("hold hits at %g–%g MPa, want within 38–40 MPa", r.MinPressureMPa, r.MaxPressureMPa)
			}
			if r.Evaluated && r.WindowS > 0 && math.Abs(r.FirstRatePerMin-float64(r.FirstHits)/r.WindowS*60) > 1e-12 {
				t.Fatalf("first rate %g hits/min for %d hits in %g s", r.FirstRatePerMin, r.FirstHits, r.WindowS)
			}
		})
	}
}

func TestHoldNoDuration(t *testing.T) {
	// A hold of one sample: neither judgement can be made. Not
	// significant, but not judged either: the caller treats it as not
	// evaluated.
	ph := Phase{HoldStartS: 500, HoldEndS: 500}
	r := HoldEmission(at(500, 500, 500, 500, 500, 500), nil, ph, DefaultHoldCriterion())
	if r.Hits != 6 || r.DecayJudged || r.Decays || r.AbsoluteJudged || r.Significant || !strings.Contains(r.Reason, "not judged") {
		t.Fatalf("hold %+v, want 6 hits, nothing judged", r)
	}
	// With no settling time the six hits count: significant.
	c := DefaultHoldCriterion()
	c.SettleS = 0
	r = HoldEmission(at(500, 500, 500, 500, 500, 500), nil, ph, c)
	if !r.AbsoluteJudged || r.HitsAfterSettle != 6 || !r.Significant {
		t.Fatalf("hold %+v, want 6 hits after settling, significant", r)
	}
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
		{"negative settling", mod(func(c *HoldCriterion) { c.SettleS = -1 }), "settling"},
		{"infinite settling", mod(func(c *HoldCriterion) { c.SettleS = math.Inf(1) }), "settling"},
		{"negative maximum after settling", mod(func(c *HoldCriterion) { c.MaxHitsAfterSettle = -1 }), "after settling"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.c.Validate()
			if (tt.want == "") != (err == nil) || (err != nil && !strings.Contains(err.Error(), tt.want)) {
				t.Fatalf("Validate = %v, want %q", err, tt.want)
			}
		})
	}
	if d := DefaultHoldCriterion(); d.SettleS != 60 || d.MaxHitsAfterSettle != 5 {
		t.Fatalf("defaults %+v, want 60 s and 5 hits", d)
	}
}

func TestHoldAbsoluteGoverns(t *testing.T) {
	// Whatever the pattern in time, a judged hold with more hits after
	// settling than allowed is significant, and a quiet hold never is
	// by decay alone.
	_, ph := aeDive()
	rapid.Check(t, func(t *rapid.T) {
		n := rapid.IntRange(0, 60).Draw(t, "n")
		ts := make([]float64, n)
		for i := range ts {
			ts[i] = rapid.Float64Range(ph.HoldStartS, ph.HoldEndS).Draw(t, "t")
		}
		c := DefaultHoldCriterion()
		c.MaxHitsAfterSettle = rapid.IntRange(0, 10).Draw(t, "max")
		c.SettleS = rapid.Float64Range(0, 600).Draw(t, "settle")
		r := HoldEmission(at(ts...), nil, ph, c)
		after := 0
		for _, v := range ts {
			if v >= ph.HoldStartS+c.SettleS {
				after++
			}
		}
		if !r.AbsoluteJudged || r.HitsAfterSettle != after {
			t.Fatalf("judged %v, %d after settling, want true, %d", r.AbsoluteJudged, r.HitsAfterSettle, after)
		}
		if after > c.MaxHitsAfterSettle && !r.Significant {
			t.Fatalf("%d hits after settling > %d but not significant: %s", after, c.MaxHitsAfterSettle, r.Reason)
		}
		if r.Significant && after <= c.MaxHitsAfterSettle && r.Decays {
			t.Fatalf("significant without cause: %s", r.Reason)
		}
	})
}
