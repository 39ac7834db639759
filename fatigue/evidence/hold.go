package evidence

import (
	"fmt"
	"math"
	"sort"
)

// HoldCriterion defines how emission during the hold at depth is judged.
// Use DefaultHoldCriterion and change what the operator chooses; a zero
// HoldCriterion is invalid (Windows < 2). The zero values of SettleS and
// MaxHitsAfterSettle lean to the safe side: every hit of the hold counts,
// and any one of them is significant.
type HoldCriterion struct {
	// Windows sets the width of the rate windows: the hold's duration ÷
	// Windows (≥ 2). PerWindow reports that many equal windows.
	Windows int
	// DecayFraction: the emission decays when the densest window of the
	// hold's second half holds at most DecayFraction × the hits of the
	// hold's first window (0 to 1), the two windows being of equal width
	// so that counts compare as rates.
	DecayFraction float64
	// QuietHits: the emission decays when the densest window of the
	// hold's second half holds at most QuietHits hits (≥ 0).
	QuietHits int
	// MinHits: with fewer hits in the whole hold, the hold is quiet
	// (≥ 0).
	MinHits int
	// MinAmplitudeDB is the amplitude below which a hit is not counted,
	// dB_AE.
	MinAmplitudeDB float64
	// SettleS is the time from the hold's start after which every counted
	// hit is tallied against MaxHitsAfterSettle, s (≥ 0).
	SettleS float64
	// MaxHitsAfterSettle is the most counted hits allowed after SettleS;
	// more is significant emission whatever the decay (≥ 0).
	MaxHitsAfterSettle int
}

// DefaultSettleS is the default time allowed for emission to settle at
// the start of a hold before every hit counts against the absolute limit,
// s: 60 s (common practice; operator's choice).
const DefaultSettleS = 60

// DefaultMaxHitsAfterSettle is the default most hits allowed in a hold
// after the settling time: 5 (operator's choice, after the hold criterion
// of the practice for fibre-reinforced vessels, which allows only a few
// hits after the first minutes of a hold — ASME BPVC Section V, Article 11,
// from memory: check the edition in force for its number, time and
// amplitude).
const DefaultMaxHitsAfterSettle = 5

// DefaultHoldCriterion returns the hold criterion: rate windows of a
// quarter of the hold; decay when the densest quarter-hold window in the
// second half holds at most half the first quarter's hits or at most 2
// hits; quiet below 5 hits; amplitude floor 45 dB_AE; at most
// DefaultMaxHitsAfterSettle hits after DefaultSettleS. These are common
// practice and the operator's choice, after the rule that emission must
// decay during a load hold (ASME BPVC Section V, Article 11 — from memory;
// its own hold criteria are stated per edition and vessel type).
func DefaultHoldCriterion() HoldCriterion {
	return HoldCriterion{Windows: 4, DecayFraction: 0.5, QuietHits: 2, MinHits: 5, MinAmplitudeDB: 45,
		SettleS: DefaultSettleS, MaxHitsAfterSettle: DefaultMaxHitsAfterSettle}
}

// Validate checks the criterion.
func (c HoldCriterion) Validate() error {
	switch {
	case c.Windows < 2:
		return fmt.Errorf("evidence: hold windows %d must be at least 2", c.Windows)
	case !(c.DecayFraction >= 0 && c.DecayFraction <= 1):
		return fmt.Errorf("evidence: hold decay fraction %g outside [0, 1]", c.DecayFraction)
	case c.QuietHits < 0:
		return fmt.Errorf("evidence: hold quiet hits %d negative", c.QuietHits)
	case c.MinHits < 0:
		return fmt.Errorf("evidence: hold minimum hits %d negative", c.MinHits)
	case math.IsNaN(c.MinAmplitudeDB):
		return fmt.Errorf("evidence: hold amplitude floor is NaN")
	case !(c.SettleS >= 0) || math.IsInf(c.SettleS, 0):
		return fmt.Errorf("evidence: hold settling time %g s must be finite and not negative", c.SettleS)
	case c.MaxHitsAfterSettle < 0:
		return fmt.Errorf("evidence: hold maximum hits after settling %d negative", c.MaxHitsAfterSettle)
	}
	return nil
}

// HoldResult is the emission during the hold at depth.
type HoldResult struct {
	// Evaluated is false only when the criterion is invalid.
	Evaluated bool
	// Hits is the number of counted hits in the hold, and Energy their
	// summed energy.
	Hits   int
	Energy float64
	// PerWindow is the counted hits per equal time window, for the report
	// only: the decay is judged on sliding windows.
	PerWindow []int
	// MinPressureMPa and MaxPressureMPa bound the pressure at the counted
	// hits (0 without hits).
	MinPressureMPa, MaxPressureMPa float64
	// Quiet reports fewer than MinHits hits in the whole hold.
	Quiet bool
	// WindowS is the width of the rate windows, s.
	WindowS float64
	// FirstHits is the number of counted hits in the hold's first window
	// [start, start + WindowS], and LateHits the most in any window of
	// width WindowS lying in the hold's second half, which starts at
	// LateStartS (s from the dive's first sample).
	FirstHits, LateHits int
	LateStartS          float64
	// FirstRatePerMin and LateRatePerMin are those counts as hit rates,
	// hits per minute.
	FirstRatePerMin, LateRatePerMin float64
	// DecayJudged is false when the hold has no duration (with at least
	// MinHits hits): the decay cannot be judged.
	DecayJudged bool
	// Decays reports emission that dies away during the hold (true for a
	// quiet hold). A relative decay never clears continuing emission on
	// its own: see Significant.
	Decays bool
	// SettleS is the settling time used, s; HitsAfterSettle the counted
	// hits at or after HoldStartS + SettleS.
	SettleS         float64
	HitsAfterSettle int
	// AbsoluteJudged is false when the hold is shorter than SettleS: no
	// absolute judgement is possible, and the caller must treat the hold
	// as not evaluated; AbsoluteReason says so.
	AbsoluteJudged bool
	AbsoluteReason string
	// Significant is true when HitsAfterSettle > MaxHitsAfterSettle (with
	// AbsoluteJudged) or when the emission, judged, does not decay.
	Significant bool
	// Reason says how the result was reached.
	Reason string
}

// HoldEmission tallies the hits in the hold (ph.HoldStartS ≤ t ≤
// ph.HoldEndS, amplitude ≥ c.MinAmplitudeDB) and judges them twice:
//   - relative: the hit rate must fall. The first window of width
//     W = duration ÷ c.Windows is compared with the densest window of
//     width W anywhere in the hold's second half (a sliding window, so a
//     burst just before a fixed last window cannot hide);
//   - absolute: the hits at or after c.SettleS into the hold must number
//     at most c.MaxHitsAfterSettle. This governs: emission that goes on
//     through the hold is significant even when its rate falls.
//
// pressures holds each hit's pressure (from PressureAt); when its length
// differs from that of hits the pressure range is not reported.
func HoldEmission(hits []Hit, pressures []float64, ph Phase, c HoldCriterion) HoldResult {
	if err := c.Validate(); err != nil {
		return HoldResult{Reason: fmt.Sprintf("hold emission not evaluated: %v", err),
			AbsoluteReason: "hold emission not evaluated: invalid criterion"}
	}
	dur := ph.HoldDurationS()
	w := dur / float64(c.Windows)
	res := HoldResult{Evaluated: true, PerWindow: make([]int, c.Windows), WindowS: w, SettleS: c.SettleS}
	usePressure := len(pressures) == len(hits)
	var ts []float64
	settle := ph.HoldStartS + c.SettleS
	for k, h := range hits {
		if !ph.InHold(h.TimeS) || !(h.AmplitudeDB >= c.MinAmplitudeDB) {
			continue
		}
		ts = append(ts, h.TimeS)
		b := 0
		if dur > 0 {
			b = min(int(float64(c.Windows)*(h.TimeS-ph.HoldStartS)/dur), c.Windows-1)
		}
		res.PerWindow[b]++
		if usePressure {
			p := pressures[k]
			if res.Hits == 0 || p < res.MinPressureMPa {
				res.MinPressureMPa = p
			}
			if res.Hits == 0 || p > res.MaxPressureMPa {
				res.MaxPressureMPa = p
			}
		}
		if h.TimeS >= settle {
			res.HitsAfterSettle++
		}
		res.Hits++
		res.Energy += h.Energy
	}
	sort.Float64s(ts)

	// Relative judgement on sliding windows.
	if dur > 0 {
		res.FirstHits = countIn(ts, ph.HoldStartS, ph.HoldStartS+w)
		mid, last := ph.HoldStartS+dur/2, ph.HoldEndS-w
		res.LateStartS = mid
		res.LateHits = countIn(ts, mid, mid+w)
		// A window holding a set of late hits slides to start at its
		// earliest one, or to the last start that stays in the hold.
		for _, t := range ts {
			if t < mid {
				continue
			}
			a := min(t, last)
			if n := countIn(ts, a, a+w); n > res.LateHits {
				res.LateHits, res.LateStartS = n, a
			}
		}
		res.FirstRatePerMin = float64(res.FirstHits) / w * 60
		res.LateRatePerMin = float64(res.LateHits) / w * 60
	}
	var rel string
	switch {
	case res.Hits < c.MinHits:
		res.Quiet, res.Decays, res.DecayJudged = true, true, true
		rel = fmt.Sprintf("quiet hold: %d hits, fewer than %d", res.Hits, c.MinHits)
	case !(dur > 0):
		rel = fmt.Sprintf("%d hits in a hold of no duration: decay not judged", res.Hits)
	case res.LateHits <= c.QuietHits:
		res.Decays, res.DecayJudged = true, true
		rel = fmt.Sprintf("rate decays: at most %d hits in any %.4g s window of the hold's second half, at most %d", res.LateHits, w, c.QuietHits)
	case float64(res.LateHits) <= c.DecayFraction*float64(res.FirstHits):
		res.Decays, res.DecayJudged = true, true
		rel = fmt.Sprintf("rate decays: %.3g hits/min at most in the hold's second half against %.3g hits/min in its first %.4g s (at most %.2g×)", res.LateRatePerMin, res.FirstRatePerMin, w, c.DecayFraction)
	default:
		res.DecayJudged = true
		rel = fmt.Sprintf("emission does not decay: %.3g hits/min (%d hits from %.4g s) in the hold's second half against %.3g hits/min in its first %.4g s (more than %.2g× and more than %d hits)", res.LateRatePerMin, res.LateHits, res.LateStartS, res.FirstRatePerMin, w, c.DecayFraction, c.QuietHits)
	}

	// Absolute judgement: it governs.
	abs := false
	if dur >= c.SettleS {
		res.AbsoluteJudged = true
		abs = res.HitsAfterSettle > c.MaxHitsAfterSettle
		if abs {
			res.AbsoluteReason = fmt.Sprintf("significant: %d hits after the first %.4g s of the hold, more than %d", res.HitsAfterSettle, c.SettleS, c.MaxHitsAfterSettle)
		} else {
			res.AbsoluteReason = fmt.Sprintf("%d hits after the first %.4g s of the hold, at most %d", res.HitsAfterSettle, c.SettleS, c.MaxHitsAfterSettle)
		}
	} else {
		res.AbsoluteReason = fmt.Sprintf("hold of %.4g s shorter than the %.4g s settling time: hits after settling not judged (not evaluated)", dur, c.SettleS)
	}
	res.Significant = abs || (res.DecayJudged && !res.Decays)
	res.Reason = rel + "; " + res.AbsoluteReason
	return res
}

// countIn counts the sorted values in [lo, hi].
func countIn(ts []float64, lo, hi float64) int {
	i := sort.SearchFloat64s(ts, lo)
	j := sort.Search(len(ts), func(k int) bool { return ts[k] > hi })
	return max(j-i, 0)
}
