package evidence

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// DefaultHoldFrac is the fraction of the dive's peak pressure above which
// the dive is at its hold (operator's choice).
const DefaultHoldFrac = 0.95

// Profile is one dive's decimated record, time-ordered with strictly
// increasing time.
type Profile struct {
	// TimeS is the time of each sample in seconds from the dive's first
	// sample.
	TimeS []float64
	// Pressure is the gauge pressure at each sample, MPa.
	Pressure []float64
	// Strain holds, per strain gauge, the strain at each sample in
	// microstrain (negative in compression); every slice has the length of
	// TimeS.
	Strain map[string][]float64
	// Temp is the temperature at each sample, °C, where it is logged (the
	// hull's or the gauges' temperature): nil or empty when not logged,
	// otherwise of the length of TimeS. A value that is NaN or infinite
	// is an unknown temperature; the measures that need it are then not
	// computed.
	Temp []float64
}

// Validate checks that the profile has samples, that every series has the
// length of TimeS (Temp when logged), that time strictly increases and that no value is NaN or
// infinite.
func (p Profile) Validate() error {
	n := len(p.TimeS)
	if n == 0 {
		return errors.New("evidence: profile has no samples")
	}
	if len(p.Pressure) != n {
		return fmt.Errorf("evidence: profile has %d times but %d pressures", n, len(p.Pressure))
	}
	for i, t := range p.TimeS {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			return fmt.Errorf("evidence: profile time %d is %v", i, t)
		}
		if i > 0 && !(t > p.TimeS[i-1]) {
			return fmt.Errorf("evidence: profile time %d (%g s) does not follow %g s", i, t, p.TimeS[i-1])
		}
		if v := p.Pressure[i]; math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("evidence: profile pressure %d is %v", i, v)
		}
	}
	if len(p.Temp) != 0 && len(p.Temp) != n {
		return fmt.Errorf("evidence: profile has %d times but %d temperatures", n, len(p.Temp))
	}
	for _, g := range sortedGauges(p.Strain) {
		s := p.Strain[g]
		if len(s) != n {
			return fmt.Errorf("evidence: gauge %q has %d strains for %d times", g, len(s), n)
		}
		for i, v := range s {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("evidence: gauge %q strain %d is %v", g, i, v)
			}
		}
	}
	return nil
}

// sortedGauges returns the gauge names in lexical order.
func sortedGauges(m map[string][]float64) []string {
	names := make([]string, 0, len(m))
	for g := range m {
		names = append(names, g)
	}
	sort.Strings(names)
	return names
}

// Phase is the split of a dive into descent, hold and ascent. The descent
// is the samples [0, HoldStart), the hold [HoldStart, HoldEnd] and the
// ascent (HoldEnd, N). A hit at time t is in the descent when
// t < HoldStartS, in the hold when HoldStartS ≤ t ≤ HoldEndS and in the
// ascent when t > HoldEndS.
type Phase struct {
	// Frac is the fraction of the peak that defines the hold.
	Frac float64
	// PeakMPa is the dive's peak gauge pressure, and PeakIndex its first
	// sample.
	PeakMPa   float64
	PeakIndex int
	// LevelMPa is the pressure at and above which the dive is at its
	// hold: Frac × the sustained peak (the highest pressure held for
	// SustainWindowS), so that one high sample cannot shrink the hold. Zero
	// in a Phase built by hand means Frac·PeakMPa.
	LevelMPa float64
	// HoldStart is the first sample with pressure ≥ the hold level.
	HoldStart int
	// HoldEnd is the last sample with pressure ≥ the hold level.
	HoldEnd int
	// N is the number of samples.
	N int
	// StartS, HoldStartS, HoldEndS and EndS are the times of the first
	// sample, of HoldStart, of HoldEnd and of the last sample, s.
	StartS, HoldStartS, HoldEndS, EndS float64
}

// HoldLevel is the pressure at and above which the dive is at its hold,
// MPa.
func (ph Phase) HoldLevel() float64 {
	if ph.LevelMPa > 0 {
		return ph.LevelMPa
	}
	return ph.Frac * ph.PeakMPa
}

// SustainWindowS is the time a pressure must be held to count as the
// dive's sustained peak, s (operator's choice: a spike of one sample, a
// wave or a logger glitch is no hold, and must not move the hold away
// from the time actually spent at depth).
const SustainWindowS = 60

// sustainedPeak is the highest pressure the profile stays at or above for
// at least window seconds: the largest minimum over any window of that
// length (a monotonic queue over the samples; O(n)). A record shorter than
// the window gives its own minimum.
func sustainedPeak(t, p []float64, window float64) float64 {
	best := math.Inf(-1)
	var q []int // indices of increasing pressure
	lo := 0
	for hi := range t {
		for len(q) > 0 && p[q[len(q)-1]] >= p[hi] {
			q = q[:len(q)-1]
		}
		q = append(q, hi)
		for t[hi]-t[lo] > window {
			if q[0] == lo {
				q = q[1:]
			}
			lo++
		}
		if t[hi]-t[lo] >= window || (lo == 0 && hi == len(t)-1) {
			best = math.Max(best, p[q[0]])
		}
	}
	return best
}

// HoldDurationS is the hold's duration, s.
func (ph Phase) HoldDurationS() float64 { return ph.HoldEndS - ph.HoldStartS }

// InDescent reports whether time t (s) lies in the descent.
func (ph Phase) InDescent(t float64) bool { return t < ph.HoldStartS }

// InHold reports whether time t (s) lies in the hold.
func (ph Phase) InHold(t float64) bool { return t >= ph.HoldStartS && t <= ph.HoldEndS }

// Phases finds the dive's peak pressure and splits it into descent, hold
// and ascent: the descent runs from the start until the first sample with
// pressure ≥ frac × the sustained peak (the highest pressure held for
// SustainWindowS), the hold from that sample to the last sample at or
// above that level, and the ascent after it. A frac of 0 means
// DefaultHoldFrac; otherwise frac must lie in (0, 1]. The profile must be
// valid (see Profile.Validate) and its peak pressure positive.
func Phases(p Profile, frac float64) (Phase, error) {
	if frac == 0 {
		frac = DefaultHoldFrac
	}
	if !(frac > 0 && frac <= 1) {
		return Phase{}, fmt.Errorf("evidence: hold fraction %g outside (0, 1]", frac)
	}
	if err := p.Validate(); err != nil {
		return Phase{}, fmt.Errorf("phases: %w", err)
	}
	n := len(p.TimeS)
	peak, pi := p.Pressure[0], 0
	for i, v := range p.Pressure {
		if v > peak {
			peak, pi = v, i
		}
	}
	if !(peak > 0) {
		return Phase{}, fmt.Errorf("phases: peak gauge pressure %g MPa is not positive: no dive", peak)
	}
	// The hold is judged against the sustained peak: one high sample must
	// not shrink the hold to nothing and push its emission into the
	// ascent, where no hold criterion looks.
	sustained := sustainedPeak(p.TimeS, p.Pressure, SustainWindowS)
	if !(sustained > 0) || sustained > peak {
		sustained = peak
	}
	level := frac * sustained
	hs, he := -1, -1
	for i, v := range p.Pressure {
		if v >= level {
			if hs < 0 {
				hs = i
			}
			he = i
		}
	}
	return Phase{
		Frac: frac, PeakMPa: peak, PeakIndex: pi, LevelMPa: level,
		HoldStart: hs, HoldEnd: he, N: n,
		StartS: p.TimeS[0], HoldStartS: p.TimeS[hs], HoldEndS: p.TimeS[he], EndS: p.TimeS[n-1],
	}, nil
}
