package stream

import "math"

// MaxProfilePoints bounds a dive's decimated profile, whatever its length.
const MaxProfilePoints = 20000

// Profile is a dive's decimated profile: the means of its samples over
// windows of StepS seconds.
type Profile struct {
	// StepS is the window width, s: 1 s, doubled each time the profile
	// filled up.
	StepS float64
	// Gauges names the strain gauges, in the order of Strain.
	Gauges []string
	// TimeS is each point's mean time, s from the dive's first sample.
	TimeS []float64
	// PressureMPa is each point's mean gauge pressure, MPa.
	PressureMPa []float64
	// Strain holds per gauge each point's mean strain, µε.
	Strain [][]float64
	// Weights is the number of samples behind each point.
	Weights []float64
}

// Decimator builds a dive's decimated profile while the samples stream
// past: means over windows of step seconds (1 s to start with; when the
// profile is full, neighbouring points are merged by their weighted means
// and the step doubles), so its size is bounded by MaxProfilePoints for
// any dive.
type Decimator struct {
	p      Profile
	max    int
	winEnd float64
	n      float64
	st, sp float64
	se     []float64
}

// NewDecimator makes a decimator for a dive with the named strain gauges.
func NewDecimator(gauges []string) *Decimator { return newDecimator(gauges, MaxProfilePoints) }

// newDecimator makes a decimator bounded to max points (max ≥ 2).
func newDecimator(gauges []string, max int) *Decimator {
	return &Decimator{p: Profile{StepS: 1, Gauges: gauges, Strain: make([][]float64, len(gauges))},
		max: max, se: make([]float64, len(gauges)), winEnd: math.Inf(-1)}
}

// Add adds samples: times (s from the dive's first sample, not
// decreasing), gauge pressures (MPa) and per gauge strains (µε), all of
// the length of t.
func (a *Decimator) Add(t, p []float64, strains [][]float64) {
	for i := range t {
		if t[i] >= a.winEnd {
			a.flush()
			a.winEnd = (math.Floor(t[i]/a.p.StepS) + 1) * a.p.StepS
		}
		a.n++
		a.st += t[i]
		a.sp += p[i]
		for g := range a.se {
			a.se[g] += strains[g][i]
		}
	}
}

func (a *Decimator) flush() {
	if a.n == 0 {
		return
	}
	p := &a.p
	p.TimeS = append(p.TimeS, a.st/a.n)
	p.PressureMPa = append(p.PressureMPa, a.sp/a.n)
	for g := range a.se {
		p.Strain[g] = append(p.Strain[g], a.se[g]/a.n)
		a.se[g] = 0
	}
	p.Weights = append(p.Weights, a.n)
	a.n, a.st, a.sp = 0, 0, 0
	if len(p.TimeS) >= a.max {
		a.halve()
	}
}

// halve merges neighbouring points (weighted means) and doubles the step.
func (a *Decimator) halve() {
	p := &a.p
	k := 0
	for i := 0; i+1 < len(p.TimeS); i += 2 {
		w0, w1 := p.Weights[i], p.Weights[i+1]
		w := w0 + w1
		p.TimeS[k] = (p.TimeS[i]*w0 + p.TimeS[i+1]*w1) / w
		p.PressureMPa[k] = (p.PressureMPa[i]*w0 + p.PressureMPa[i+1]*w1) / w
		for g := range p.Strain {
			p.Strain[g][k] = (p.Strain[g][i]*w0 + p.Strain[g][i+1]*w1) / w
		}
		p.Weights[k] = w
		k++
	}
	if len(p.TimeS)%2 == 1 {
		last := len(p.TimeS) - 1
		p.TimeS[k], p.PressureMPa[k], p.Weights[k] = p.TimeS[last], p.PressureMPa[last], p.Weights[last]
		for g := range p.Strain {
			p.Strain[g][k] = p.Strain[g][last]
		}
		k++
	}
	p.TimeS, p.PressureMPa, p.Weights = p.TimeS[:k], p.PressureMPa[:k], p.Weights[:k]
	for g := range p.Strain {
		p.Strain[g] = p.Strain[g][:k]
	}
	p.StepS *= 2
}

// Finish closes the last window and returns the profile. Call it once,
// after the last Add.
func (a *Decimator) Finish() *Profile {
	a.flush()
	return &a.p
}
