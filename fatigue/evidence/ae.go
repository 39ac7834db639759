package evidence

import (
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
