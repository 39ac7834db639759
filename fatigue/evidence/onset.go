package evidence

import (
	"fmt"
	"math"
	"sort"
)

// Measures of emission for the onset criterion.
const (
	// MeasureHits counts hits in a window of load rise.
	MeasureHits = "hits"
	// MeasureEnergy sums hit energy in a window of load rise.
	MeasureEnergy = "energy"
)

// OnsetCriterion defines the onset of significant emission during loading.
// Descent hits with amplitude ≥ MinAmplitudeDB are placed on the pressure
// axis; emission is significant where ANY window of load rise of width
// IncrementMPa, wherever it starts, holds a tally (hit count or summed
// energy) of at least Threshold. The window slides: a burst is never split
// between two fixed bins.
type OnsetCriterion struct {
	// Measure is MeasureHits or MeasureEnergy.
	Measure string
	// IncrementMPa is the width of the SLIDING window of load rise, MPa
	// (> 0): the "X % increase in load" of the criterion, as pressure.
	// The name is kept from the earlier fixed-bin criterion; see
	// WindowMPa.
	IncrementMPa float64
	// Threshold is the tally in one window that marks significant
	// emission (> 0): hits (6 means "more than 5"), or energy in the
	// instrument's unit.
	Threshold float64
	// MinAmplitudeDB is the amplitude below which a hit is not counted,
	// dB_AE.
	MinAmplitudeDB float64
}

// WindowMPa is the width of the sliding window of load rise, MPa (the
// IncrementMPa field).
func (c OnsetCriterion) WindowMPa() float64 { return c.IncrementMPa }

// DefaultOnsetCriterion returns the onset criterion for a hull whose
// reference pressure (the highest pressure it has previously reached, or
// its proof pressure) is refMPa:
//   - the window is 10 % of refMPa: "more than 5 hits during a 10 %
//     increase in load" is the significant-emission criterion of the
//     practice for fibre-reinforced vessels (ASME BPVC Section V,
//     Article 11, and the recommended practice for fibre-reinforced
//     vessels before it — from memory; check the edition in force). The
//     window slides over the load axis (any 10 % rise, wherever it
//     starts);
//   - the threshold is 6 hits, i.e. more than 5 (from memory, as above);
//   - the amplitude floor is 45 dB_AE (common practice for a hit
//     threshold; operator's choice).
//
// A non-positive refMPa gives a window of 0, which Onset rejects: the
// caller must then choose one.
func DefaultOnsetCriterion(refMPa float64) OnsetCriterion {
	return OnsetCriterion{
		Measure:        MeasureHits,
		IncrementMPa:   max(0.1*refMPa, 0),
		Threshold:      6,
		MinAmplitudeDB: 45,
	}
}

// Validate checks the criterion.
func (c OnsetCriterion) Validate() error {
	if c.Measure != MeasureHits && c.Measure != MeasureEnergy {
		return fmt.Errorf("evidence: onset measure %q is neither %q nor %q", c.Measure, MeasureHits, MeasureEnergy)
	}
	if !(c.IncrementMPa > 0) || math.IsInf(c.IncrementMPa, 0) {
		return fmt.Errorf("evidence: onset window width (IncrementMPa) %g MPa must be positive and finite", c.IncrementMPa)
	}
	if !(c.Threshold > 0) || math.IsInf(c.Threshold, 0) {
		return fmt.Errorf("evidence: onset threshold %g must be positive and finite", c.Threshold)
	}
	if math.IsNaN(c.MinAmplitudeDB) {
		return fmt.Errorf("evidence: onset amplitude floor is NaN")
	}
	return nil
}

// OnsetResult is the onset of significant emission during loading.
type OnsetResult struct {
	// OnsetMPa is the pressure at the start of the first (lowest) window
	// of load rise whose tally reached the threshold, MPa, or nil when no
	// window did.
	OnsetMPa *float64
	// OnsetHits and OnsetEnergy are the counted hits and their summed
	// energy in that first significant window (0 without one).
	OnsetHits   int
	OnsetEnergy float64
	// DensestHits is the most counted hits in any window of the width,
	// and DensestStartMPa where the lowest such window starts (nil
	// without counted hits).
	DensestHits     int
	DensestStartMPa *float64
	// MaxWindowEnergy is the largest summed energy in any window, and
	// MaxEnergyStartMPa where the lowest such window starts (nil without
	// counted hits).
	MaxWindowEnergy   float64
	MaxEnergyStartMPa *float64
	// WindowMPa is the window width used, MPa.
	WindowMPa float64
	// CountedHits is the number of descent hits at or above the amplitude
	// floor.
	CountedHits int
	// Reason says how the result was reached, in words for the report.
	Reason string
}

// Onset finds the onset of significant emission during the descent
// (Phase.InDescent) by a window of load rise of width c.IncrementMPa that
// slides over the pressure axis. pressures holds each hit's pressure (from
// PressureAt) and must have the length of hits. A hit at a negative gauge
// pressure (surface noise) is placed at 0 MPa, which can only make a
// window denser.
//
// A window holding a set of hits can always be slid to start at its lowest
// hit and still hold them all, so the windows that start at a counted
// hit's pressure are the only ones to examine; a two-pointer scan over the
// hits sorted by pressure does so in O(n log n). A hit exactly at the
// window's upper edge is inside it (the safe side).
//
// With MeasureEnergy a hit's energy must be finite and not negative; an
// error is returned otherwise, and the caller must then treat the onset as
// not evaluated (never as "no onset").
func Onset(hits []Hit, pressures []float64, ph Phase, c OnsetCriterion) (OnsetResult, error) {
	if err := c.Validate(); err != nil {
		return OnsetResult{}, fmt.Errorf("onset: %w", err)
	}
	if len(pressures) != len(hits) {
		return OnsetResult{}, fmt.Errorf("onset: %d pressures for %d hits", len(pressures), len(hits))
	}
	type pt struct{ p, e float64 }
	var pts []pt
	for k, h := range hits {
		if !ph.InDescent(h.TimeS) || !(h.AmplitudeDB >= c.MinAmplitudeDB) {
			continue
		}
		p := pressures[k]
		if math.IsNaN(p) || math.IsInf(p, 0) {
			return OnsetResult{}, fmt.Errorf("onset: hit %d at %g s has pressure %v", k, h.TimeS, p)
		}
		if c.Measure == MeasureEnergy && (!(h.Energy >= 0) || math.IsInf(h.Energy, 0)) {
			return OnsetResult{}, fmt.Errorf("onset: hit %d at %g s has energy %v, not a finite non-negative value", k, h.TimeS, h.Energy)
		}
		pts = append(pts, pt{max(p, 0), h.Energy})
	}
	sort.SliceStable(pts, func(a, b int) bool { return pts[a].p < pts[b].p })
	w := c.IncrementMPa
	res := OnsetResult{WindowMPa: w, CountedHits: len(pts)}
	// pre[k] is the summed energy of pts[:k].
	pre := make([]float64, len(pts)+1)
	for k, v := range pts {
		pre[k+1] = pre[k] + v.e
	}
	j := 0
	for i := range pts {
		j = max(j, i)
		for j < len(pts) && pts[j].p-pts[i].p <= w {
			j++
		}
		n, e := j-i, pre[j]-pre[i]
		start := pts[i].p
		if n > res.DensestHits {
			res.DensestHits, res.DensestStartMPa = n, &start
		}
		if res.MaxEnergyStartMPa == nil || e > res.MaxWindowEnergy {
			res.MaxWindowEnergy, res.MaxEnergyStartMPa = e, &start
		}
		tally := float64(n)
		if c.Measure == MeasureEnergy {
			tally = e
		}
		if res.OnsetMPa == nil && tally >= c.Threshold {
			res.OnsetMPa, res.OnsetHits, res.OnsetEnergy = &start, n, e
		}
	}
	switch {
	case res.OnsetMPa != nil:
		res.Reason = fmt.Sprintf("significant emission from %.4g MPa: %d hits (energy %.4g) within a %.4g MPa rise, threshold %g %s",
			*res.OnsetMPa, res.OnsetHits, res.OnsetEnergy, w, c.Threshold, c.Measure)
	case len(pts) == 0:
		res.Reason = fmt.Sprintf("no descent hits at or above %g dB_AE: no significant emission", c.MinAmplitudeDB)
	default:
		res.Reason = fmt.Sprintf("no significant emission: at most %d hits (energy at most %.4g) within any %.4g MPa rise, threshold %g %s",
			res.DensestHits, res.MaxWindowEnergy, w, c.Threshold, c.Measure)
	}
	return res, nil
}

// FelicityResult is the Felicity ratio of one dive: the pressure at the
// onset of significant emission divided by the highest pressure the hull
// had previously reached.
type FelicityResult struct {
	// Ratio is onset ÷ previous maximum, or nil when no onset occurred.
	Ratio *float64
	// Evaluated reports whether the dive says anything about the ratio.
	// A result that is not evaluated is never a pass.
	Evaluated bool
	// LowerBound is, when the dive had no significant emission, the least
	// the ratio can be by this dive's evidence: the highest pressure the
	// dive fully tested ÷ the previous maximum (the onset, had there been
	// one, lies above it). nil with an onset or without a reference.
	LowerBound *float64
	// Reason says how the result was reached, in words for the report.
	Reason string
	// BeyondPrevious reports whether the dive went beyond the previous
	// maximum.
	BeyondPrevious bool
}

// DefaultFelicityEvaluate is the Felicity ratio below which the emission
// calls for evaluation: about 0.95 for fibre-reinforced vessels (ASME BPVC
// Section V, Article 11 — from memory; check the edition in force). The
// rule that applies it lives with the fitness rules.
const DefaultFelicityEvaluate = 0.95

// Felicity evaluates the Felicity ratio from the onset of significant
// emission (nil when none), the highest pressure the hull had reached
// before this dive (previousMaxMPa: earlier dives or the proof test) and
// this dive's peak. Without an onset it takes the whole dive up to its peak
// as tested: LowerBound = peak ÷ previous maximum. FelicityWindow, which
// knows the onset's window and the phases, gives the safer bound; prefer
// it.
func Felicity(onsetMPa *float64, previousMaxMPa, divePeakMPa float64) FelicityResult {
	return felicity(onsetMPa, previousMaxMPa, divePeakMPa, divePeakMPa,
		fmt.Sprintf("dive peak %.4g MPa", divePeakMPa))
}

// FelicityWindow evaluates the Felicity ratio as Felicity does, for a dive
// split by ph and an onset found with windows of load rise of width
// windowMPa (≥ 0, MPa). Onset counts only descent hits, and the descent
// ends where the hold begins, at ph.Frac × ph.PeakMPa; a window that
// starts within windowMPa of that top was cut short. So without an onset
// the dive proves only that no significant window starts below
// tested = ph.Frac·ph.PeakMPa − windowMPa (not below 0).
//   - previousMaxMPa ≤ 0 (first dive, no proof test): not evaluated, Ratio
//     and LowerBound nil;
//   - an onset: Ratio = onset ÷ previous maximum, evaluated (≥ 1 when the
//     onset lies above the previous maximum: Kaiser behaviour);
//   - no onset and tested ≥ previous maximum: Kaiser behaviour held up to
//     the previous peak; evaluated, Ratio nil, LowerBound = tested ÷
//     previous maximum (≥ 1);
//   - no onset otherwise: not evaluated (the dive did not test the
//     previous peak), Ratio nil, LowerBound = tested ÷ previous maximum
//     (< 1). Not evaluated is never a pass.
func FelicityWindow(onsetMPa *float64, previousMaxMPa float64, ph Phase, windowMPa float64) FelicityResult {
	if !(windowMPa >= 0) || math.IsInf(windowMPa, 0) {
		return FelicityResult{BeyondPrevious: previousMaxMPa > 0 && ph.PeakMPa > previousMaxMPa,
			Reason: fmt.Sprintf("onset window %g MPa is not a finite non-negative width: Felicity ratio not evaluated", windowMPa)}
	}
	top := ph.HoldLevel()
	tested := max(top-windowMPa, 0)
	return felicity(onsetMPa, previousMaxMPa, ph.PeakMPa, tested,
		fmt.Sprintf("the descent's top %.4g MPa less the %.4g MPa window", top, windowMPa))
}

// felicity is Felicity with the highest pressure below which every onset
// window was fully tested (tested, MPa) and how it was found (how).
func felicity(onsetMPa *float64, previousMaxMPa, divePeakMPa, tested float64, how string) FelicityResult {
	beyond := previousMaxMPa > 0 && divePeakMPa > previousMaxMPa
	switch {
	case !(previousMaxMPa > 0) || math.IsInf(previousMaxMPa, 0):
		return FelicityResult{Reason: "no previous maximum pressure (first dive and no proof test): Felicity ratio not evaluated"}
	case onsetMPa != nil && *onsetMPa <= previousMaxMPa:
		r := *onsetMPa / previousMaxMPa
		return FelicityResult{Ratio: &r, Evaluated: true, BeyondPrevious: beyond,
			Reason: fmt.Sprintf("significant emission began at %.4g MPa, at or below the previous maximum %.4g MPa: Felicity ratio %.3f", *onsetMPa, previousMaxMPa, r)}
	case onsetMPa != nil:
		r := *onsetMPa / previousMaxMPa
		return FelicityResult{Ratio: &r, Evaluated: true, BeyondPrevious: beyond,
			Reason: fmt.Sprintf("significant emission began at %.4g MPa, above the previous maximum %.4g MPa: Felicity ratio %.3f (Kaiser behaviour held up to the previous peak)", *onsetMPa, previousMaxMPa, r)}
	}
	lb := tested / previousMaxMPa
	switch {
	case beyond && tested >= previousMaxMPa:
		return FelicityResult{Evaluated: true, BeyondPrevious: true, LowerBound: &lb,
			Reason: fmt.Sprintf("no significant emission up to %.4g MPa (%s), beyond the previous maximum %.4g MPa: Kaiser behaviour held up to the previous peak (ratio ≥ %.3f)", tested, how, previousMaxMPa, lb)}
	case beyond:
		return FelicityResult{BeyondPrevious: true, LowerBound: &lb,
			Reason: fmt.Sprintf("dive peak %.4g MPa went beyond the previous maximum %.4g MPa, but the onset windows were fully tested only up to %.4g MPa (%s): Felicity ratio not evaluated; the dive shows it is at least %.3f", divePeakMPa, previousMaxMPa, tested, how, lb)}
	default:
		return FelicityResult{LowerBound: &lb,
			Reason: fmt.Sprintf("dive peak %.4g MPa stayed at or below the previous maximum %.4g MPa and no significant emission occurred up to %.4g MPa (%s): Felicity ratio not evaluated; the dive shows it is at least %.3f", divePeakMPa, previousMaxMPa, tested, how, lb)}
	}
}
