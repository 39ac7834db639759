package evidence

import (
	"fmt"
	"math"
	"sort"
)

// Hit is one acoustic-emission hit.
type Hit struct {
	// TimeS is the arrival time in seconds from the dive's first sample.
	TimeS float64
	// Channel is the sensor channel.
	Channel int
	// AmplitudeDB is the peak amplitude, dB_AE.
	AmplitudeDB float64
	// Energy is the hit's energy or signal strength (the instrument's
	// unit); it is the signal strength S of the historic index and the
	// severity.
	Energy float64
	// Counts is the number of threshold crossings.
	Counts float64
	// DurationUS is the hit's duration, µs.
	DurationUS float64
	// RiseUS is the rise time, µs.
	RiseUS float64
}

// PressureAt returns the gauge pressure (MPa) at each hit's time by linear
// interpolation in the profile's time, clamped to the first and last
// samples outside the record. At a sample's time it returns that sample's
// pressure exactly, and it never leaves the range of the two samples it
// interpolates between. With a profile of no samples it returns nil; only
// the first min(len(TimeS), len(Pressure)) samples are used.
func PressureAt(p Profile, hits []Hit) []float64 {
	n := min(len(p.TimeS), len(p.Pressure))
	if n == 0 {
		return nil
	}
	ts, ps := p.TimeS[:n], p.Pressure[:n]
	out := make([]float64, len(hits))
	for k, h := range hits {
		out[k] = interp(ts, ps, h.TimeS)
	}
	return out
}

// interp is linear interpolation of y(x) at v on increasing x, clamped at
// the ends and to the bracketing values.
func interp(x, y []float64, v float64) float64 {
	n := len(x)
	if v <= x[0] {
		return y[0]
	}
	if v >= x[n-1] {
		return y[n-1]
	}
	i := sort.SearchFloat64s(x, v) // x[i-1] < v ≤ x[i]
	if x[i] == v {
		return y[i]
	}
	x0, x1, y0, y1 := x[i-1], x[i], y[i-1], y[i]
	r := y0 + (y1-y0)*(v-x0)/(x1-x0)
	lo, hi := min(y0, y1), max(y0, y1)
	return math.Min(math.Max(r, lo), hi)
}

// Measures of emission for the onset criterion.
const (
	// MeasureHits counts hits per pressure increment.
	MeasureHits = "hits"
	// MeasureEnergy sums hit energy per pressure increment.
	MeasureEnergy = "energy"
)

// OnsetCriterion defines the onset of significant emission during loading.
// Hits in the descent with amplitude ≥ MinAmplitudeDB are binned by
// pressure in increments of IncrementMPa from 0 MPa; the onset is the lower
// pressure of the first increment whose tally (hit count or summed energy)
// reaches Threshold.
type OnsetCriterion struct {
	// Measure is MeasureHits or MeasureEnergy.
	Measure string
	// IncrementMPa is the width of a pressure increment, MPa (> 0).
	IncrementMPa float64
	// Threshold is the tally in one increment that marks significant
	// emission (> 0): hits, or energy in the instrument's unit.
	Threshold float64
	// MinAmplitudeDB is the amplitude below which a hit is not counted,
	// dB_AE.
	MinAmplitudeDB float64
}

// DefaultOnsetCriterion returns the onset criterion for a hull whose
// reference pressure (the highest pressure it has previously reached, or
// its proof pressure) is refMPa:
//   - the increment is 10 % of refMPa: "more than 5 hits during a 10 %
//     increase in load" is the significant-emission criterion of the
//     practice for fibre-reinforced vessels (ASME BPVC Section V,
//     Article 11, and the CARP recommended practice before it — from
//     memory; check the edition in force);
//   - the threshold is 6 hits, i.e. more than 5 (from memory, as above);
//   - the amplitude floor is 45 dB_AE (common practice for a hit
//     threshold; operator's choice).
//
// A non-positive refMPa gives an increment of 0, which Onset rejects: the
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
		return fmt.Errorf("evidence: onset increment %g MPa must be positive and finite", c.IncrementMPa)
	}
	if !(c.Threshold > 0) || math.IsInf(c.Threshold, 0) {
		return fmt.Errorf("evidence: onset threshold %g must be positive and finite", c.Threshold)
	}
	if math.IsNaN(c.MinAmplitudeDB) {
		return fmt.Errorf("evidence: onset amplitude floor is NaN")
	}
	return nil
}

// Increment is the emission in one pressure increment of the descent.
type Increment struct {
	// LowerMPa is the increment's lower pressure, MPa.
	LowerMPa float64
	// Hits is the number of counted hits.
	Hits int
	// Energy is their summed energy.
	Energy float64
}

// OnsetResult is the onset of significant emission during loading.
type OnsetResult struct {
	// OnsetMPa is the lower pressure of the first increment that reached
	// the threshold, or nil when none did.
	OnsetMPa *float64
	// Increments is the tally per increment from 0 MPa up to the highest
	// increment that holds a counted hit (empty without counted hits).
	Increments []Increment
	// CountedHits is the number of descent hits at or above the amplitude
	// floor.
	CountedHits int
}

// Onset finds the onset of significant emission during the descent.
// pressures holds each hit's pressure (from PressureAt) and must have the
// length of hits. A hit at a negative gauge pressure counts in the first
// increment.
func Onset(hits []Hit, pressures []float64, ph Phase, c OnsetCriterion) (OnsetResult, error) {
	if err := c.Validate(); err != nil {
		return OnsetResult{}, fmt.Errorf("onset: %w", err)
	}
	if len(pressures) != len(hits) {
		return OnsetResult{}, fmt.Errorf("onset: %d pressures for %d hits", len(pressures), len(hits))
	}
	var res OnsetResult
	for k, h := range hits {
		if !ph.InDescent(h.TimeS) || !(h.AmplitudeDB >= c.MinAmplitudeDB) {
			continue
		}
		p := pressures[k]
		if math.IsNaN(p) || math.IsInf(p, 0) {
			return OnsetResult{}, fmt.Errorf("onset: hit %d at %g s has pressure %v", k, h.TimeS, p)
		}
		b := 0
		if p > 0 {
			b = int(math.Floor(p / c.IncrementMPa))
		}
		for len(res.Increments) <= b {
			res.Increments = append(res.Increments, Increment{LowerMPa: float64(len(res.Increments)) * c.IncrementMPa})
		}
		res.Increments[b].Hits++
		res.Increments[b].Energy += h.Energy
		res.CountedHits++
	}
	for _, in := range res.Increments {
		tally := float64(in.Hits)
		if c.Measure == MeasureEnergy {
			tally = in.Energy
		}
		if tally >= c.Threshold {
			v := in.LowerMPa
			res.OnsetMPa = &v
			break
		}
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
	Evaluated bool
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
// this dive's peak:
//   - previousMaxMPa ≤ 0 (first dive, no proof test): not evaluated;
//   - an onset: Ratio = onset ÷ previous maximum, evaluated (≥ 1 when the
//     onset lies above the previous maximum: Kaiser behaviour);
//   - no onset and a dive beyond the previous maximum: Kaiser behaviour
//     held up to the previous peak (ratio ≥ 1); evaluated, Ratio nil;
//   - no onset and a dive that stayed at or below the previous maximum:
//     not evaluated, since the dive did not test the previous peak.
func Felicity(onsetMPa *float64, previousMaxMPa, divePeakMPa float64) FelicityResult {
	beyond := previousMaxMPa > 0 && divePeakMPa > previousMaxMPa
	switch {
	case !(previousMaxMPa > 0):
		return FelicityResult{Reason: "no previous maximum pressure (first dive and no proof test): Felicity ratio not evaluated"}
	case onsetMPa != nil && *onsetMPa <= previousMaxMPa:
		r := *onsetMPa / previousMaxMPa
		return FelicityResult{Ratio: &r, Evaluated: true, BeyondPrevious: beyond,
			Reason: fmt.Sprintf("significant emission began at %.4g MPa, at or below the previous maximum %.4g MPa: Felicity ratio %.3f", *onsetMPa, previousMaxMPa, r)}
	case onsetMPa != nil:
		r := *onsetMPa / previousMaxMPa
		return FelicityResult{Ratio: &r, Evaluated: true, BeyondPrevious: beyond,
			Reason: fmt.Sprintf("significant emission began at %.4g MPa, above the previous maximum %.4g MPa: Felicity ratio %.3f (Kaiser behaviour held up to the previous peak)", *onsetMPa, previousMaxMPa, r)}
	case beyond:
		return FelicityResult{Evaluated: true, BeyondPrevious: true,
			Reason: fmt.Sprintf("no significant emission up to the dive's peak %.4g MPa, beyond the previous maximum %.4g MPa: Kaiser behaviour held up to the previous peak (ratio ≥ 1)", divePeakMPa, previousMaxMPa)}
	default:
		return FelicityResult{
			Reason: fmt.Sprintf("dive peak %.4g MPa stayed at or below the previous maximum %.4g MPa and no significant emission occurred: Felicity ratio not evaluated", divePeakMPa, previousMaxMPa)}
	}
}

// HoldCriterion defines how emission during the hold at depth is judged.
// Use DefaultHoldCriterion and change what the operator chooses; a zero
// HoldCriterion is invalid.
type HoldCriterion struct {
	// Windows is the number of equal time windows the hold is split into
	// (≥ 2).
	Windows int
	// DecayFraction: the emission decays when the last window holds at
	// most DecayFraction × the first window's hits (0 to 1).
	DecayFraction float64
	// QuietHits: the emission decays when the last window holds at most
	// QuietHits hits (≥ 0).
	QuietHits int
	// MinHits: with fewer hits in the whole hold, the hold is quiet
	// (≥ 0).
	MinHits int
	// MinAmplitudeDB is the amplitude below which a hit is not counted,
	// dB_AE.
	MinAmplitudeDB float64
}

// DefaultHoldCriterion returns the hold criterion: 4 windows, decay when
// the last window holds at most half the first window's hits or at most 2
// hits, quiet below 5 hits, amplitude floor 45 dB_AE. These are common
// practice and the operator's choice, after the rule that emission must
// decay during a load hold (ASME BPVC Section V, Article 11 — from memory;
// its own hold criteria are stated per edition and vessel type).
func DefaultHoldCriterion() HoldCriterion {
	return HoldCriterion{Windows: 4, DecayFraction: 0.5, QuietHits: 2, MinHits: 5, MinAmplitudeDB: 45}
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
	// PerWindow is the counted hits per time window.
	PerWindow []int
	// MinPressureMPa and MaxPressureMPa bound the pressure at the counted
	// hits (0 without hits).
	MinPressureMPa, MaxPressureMPa float64
	// Quiet reports fewer than MinHits hits in the whole hold.
	Quiet bool
	// Decays reports emission that dies away during the hold (true for a
	// quiet hold).
	Decays bool
	// Reason says how the result was reached.
	Reason string
}

// HoldEmission tallies the hits in the hold (ph.HoldStartS ≤ t ≤
// ph.HoldEndS, amplitude ≥ c.MinAmplitudeDB) and judges whether the
// emission decays. pressures holds each hit's pressure (from PressureAt);
// when its length differs from that of hits the pressure range is not
// reported.
func HoldEmission(hits []Hit, pressures []float64, ph Phase, c HoldCriterion) HoldResult {
	if err := c.Validate(); err != nil {
		return HoldResult{Reason: fmt.Sprintf("hold emission not evaluated: %v", err)}
	}
	res := HoldResult{Evaluated: true, PerWindow: make([]int, c.Windows)}
	dur := ph.HoldDurationS()
	usePressure := len(pressures) == len(hits)
	for k, h := range hits {
		if !ph.InHold(h.TimeS) || !(h.AmplitudeDB >= c.MinAmplitudeDB) {
			continue
		}
		w := 0
		if dur > 0 {
			w = min(int(float64(c.Windows)*(h.TimeS-ph.HoldStartS)/dur), c.Windows-1)
		}
		res.PerWindow[w]++
		if usePressure {
			p := pressures[k]
			if res.Hits == 0 || p < res.MinPressureMPa {
				res.MinPressureMPa = p
			}
			if res.Hits == 0 || p > res.MaxPressureMPa {
				res.MaxPressureMPa = p
			}
		}
		res.Hits++
		res.Energy += h.Energy
	}
	first, last := res.PerWindow[0], res.PerWindow[c.Windows-1]
	switch {
	case res.Hits < c.MinHits:
		res.Quiet, res.Decays = true, true
		res.Reason = fmt.Sprintf("quiet hold: %d hits, fewer than %d", res.Hits, c.MinHits)
	case !(dur > 0):
		res.Reason = fmt.Sprintf("%d hits in a hold of no duration: decay cannot be judged", res.Hits)
	case last <= c.QuietHits:
		res.Decays = true
		res.Reason = fmt.Sprintf("emission decays: %d hits in the last of %d windows, at most %d", last, c.Windows, c.QuietHits)
	case float64(last) <= c.DecayFraction*float64(first):
		res.Decays = true
		res.Reason = fmt.Sprintf("emission decays: %d hits in the last window against %d in the first (at most %.2g×)", last, first, c.DecayFraction)
	default:
		res.Reason = fmt.Sprintf("emission does not decay: %d hits in the last window against %d in the first (more than %.2g× and more than %d)", last, first, c.DecayFraction, c.QuietHits)
	}
	return res
}

// FilterAmplitude returns the hits with amplitude ≥ minDB, in their order.
func FilterAmplitude(hits []Hit, minDB float64) []Hit {
	out := make([]Hit, 0, len(hits))
	for _, h := range hits {
		if h.AmplitudeDB >= minDB {
			out = append(out, h)
		}
	}
	return out
}

// DefaultK is the historic index's K for N hits, for fibre-reinforced
// vessels (ASME BPVC Section V, Article 11 — from memory; check the
// edition in force): N ≤ 15: not computed (−1); 16 ≤ N ≤ 75: K = N − 15;
// 76 ≤ N ≤ 1000: K = ⌊0.8·N⌋; N > 1000: K = N − 200.
func DefaultK(n int) int {
	switch {
	case n <= 15:
		return -1
	case n <= 75:
		return n - 15
	case n <= 1000:
		return 4 * n / 5
	default:
		return n - 200
	}
}

// timeOrderedEnergy returns the hits' energies in time order (stable for
// equal times).
func timeOrderedEnergy(hits []Hit) []float64 {
	idx := make([]int, len(hits))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return hits[idx[a]].TimeS < hits[idx[b]].TimeS })
	s := make([]float64, len(hits))
	for i, j := range idx {
		s[i] = hits[j].Energy
	}
	return s
}

// HistoricIndex returns H = N/(N−K) · Σ_{i>K} S_i / Σ_{i=1..N} S_i over the
// hits in time order, with S the hit's Energy, N the number of hits and
// K = k(N) (DefaultK when k is nil). It reports false, not computed, when
// K < 0, K ≥ N, or the summed signal strength is not positive. A rising H
// means the latest hits are stronger than the run of the dive. Filter the
// hits by amplitude first (FilterAmplitude) as the practice requires.
func HistoricIndex(hits []Hit, k func(n int) int) (float64, bool) {
	if k == nil {
		k = DefaultK
	}
	n := len(hits)
	kk := k(n)
	if kk < 0 || kk >= n {
		return 0, false
	}
	s := timeOrderedEnergy(hits)
	var all, late float64
	for i, v := range s {
		all += v
		if i >= kk { // 1-based i > K
			late += v
		}
	}
	if !(all > 0) {
		return 0, false
	}
	return float64(n) / float64(n-kk) * late / all, true
}

// DefaultSeverityJ is the number of largest signal strengths averaged by
// the severity (ASME BPVC Section V, Article 11 — from memory).
const DefaultSeverityJ = 10

// Severity returns the mean of the j largest signal strengths (Energy) of
// the hits; j ≤ 0 means DefaultSeverityJ. It reports false, not computed,
// with fewer than j hits.
func Severity(hits []Hit, j int) (float64, bool) {
	if j <= 0 {
		j = DefaultSeverityJ
	}
	if len(hits) < j {
		return 0, false
	}
	s := make([]float64, len(hits))
	for i, h := range hits {
		s[i] = h.Energy
	}
	sort.Sort(sort.Reverse(sort.Float64Slice(s)))
	var sum float64
	for _, v := range s[:j] {
		sum += v
	}
	return sum / float64(j), true
}
