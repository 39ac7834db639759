package stream

import (
	"math"
	"math/rand/v2"
	"testing"
)

// feed adds the samples to a in random blocks of 1 to maxBlock samples.
func feed(a *Decimator, r *rand.Rand, maxBlock int, t, p []float64, e [][]float64) {
	for i := 0; i < len(t); {
		j := min(len(t), i+1+r.IntN(maxBlock))
		es := make([][]float64, len(e))
		for g := range e {
			es[g] = e[g][i:j]
		}
		a.Add(t[i:j], p[i:j], es)
		i = j
	}
}

func TestDecimatorByHand(t *testing.T) {
	type pt struct{ t, p, e, w float64 }
	tests := []struct {
		name  string
		max   int
		t, p  []float64
		step  float64
		want  []pt
		wantE func(p float64) float64
	}{
		// Windows [0,1), [1,2), [2,3): means (0+0.5)/2, (1+3)/2 …
		{"1 s windows", MaxProfilePoints, []float64{0, 0.5, 1, 1.5, 2.2}, []float64{1, 3, 5, 7, 9}, 1,
			[]pt{{0.25, 2, -2, 2}, {1.25, 6, -6, 2}, {2.2, 9, -9, 1}}, nil},
		// A window starts at the first sample past the last window's end:
		// samples 3.5 s apart each make their own point.
		{"sparse", MaxProfilePoints, []float64{0, 3.5, 7}, []float64{1, 2, 3}, 1,
			[]pt{{0, 1, -1, 1}, {3.5, 2, -2, 1}, {7, 3, -3, 1}}, nil},
		// Four points fill a profile of 4: merged pairwise, step 2.
		// (0·1+1·1)/2 = 0.5, (2+3)/2 = 2.5.
		{"halved even", 4, []float64{0, 1, 2, 3}, []float64{0, 1, 2, 3}, 2,
			[]pt{{0.5, 0.5, -0.5, 2}, {2.5, 2.5, -2.5, 2}}, nil},
		// Three points fill a profile of 3: the odd last is kept as it is.
		{"halved odd", 3, []float64{0, 1, 2}, []float64{0, 1, 4}, 2,
			[]pt{{0.5, 0.5, -0.5, 2}, {2, 4, -4, 1}}, nil},
		// Weighted merge: points of weight 2 (t 0, 0.5; p 1, 3 → 0.25, 2)
		// and 1 (t 1; p 8) merge to t (0.25·2+1)/3 = 0.5, p (2·2+8)/3 = 4.
		{"weighted", 2, []float64{0, 0.5, 1}, []float64{1, 3, 8}, 2,
			[]pt{{0.5, 4, -4, 3}}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			a := newDecimator([]string{"g"}, tt.max)
			e := make([]float64, len(tt.p))
			for i, v := range tt.p {
				e[i] = -v
			}
			a.Add(tt.t, tt.p, [][]float64{e})
			p := a.Finish()
			if p.StepS != tt.step || len(p.TimeS) != len(tt.want) {
				t.Fatalf("step %v, %d points %v, want %v, %d", p.StepS, len(p.TimeS), p.TimeS, tt.step, len(tt.want))
			}
			for i, w := range tt.want {
				got := pt{p.TimeS[i], p.PressureMPa[i], p.Strain[0][i], p.Weights[i]}
				if math.Abs(got.t-w.t) > 1e-12 || math.Abs(got.p-w.p) > 1e-12 || math.Abs(got.e-w.e) > 1e-12 || got.w != w.w {
					t.Errorf("point %d: %+v, want %+v", i, got, w)
				}
			}
		})
	}
}

// For every length and bound, fed in random blocks: never more points than
// the bound, the weights count every sample, times increase, and the
// weighted mean of the points is the mean of the input (a mean of means
// weighted by their counts is the whole mean).
func TestDecimatorBoundAndMeans(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 11))
	for _, max := range []int{2, 3, 4, 7, 16, 100} {
		for n := 0; n <= 400; n++ {
			ts, ps, es := make([]float64, n), make([]float64, n), make([]float64, n)
			x, tm := 0.0, 0.0
			for i := range ts {
				tm += 3 * r.Float64() // 0 to 3 s apart, some windows empty
				x += r.NormFloat64()
				ts[i], ps[i], es[i] = tm, x, -2*x
			}
			a := newDecimator([]string{"g"}, max)
			feed(a, r, 50, ts, ps, [][]float64{es})
			p := a.Finish()
			if len(p.TimeS) > max || (n > 0) != (len(p.TimeS) > 0) {
				t.Fatalf("max %d n %d: %d points", max, n, len(p.TimeS))
			}
			var w, sp, se, sin float64
			for i := range p.TimeS {
				w += p.Weights[i]
				sp += p.Weights[i] * p.PressureMPa[i]
				se += p.Weights[i] * p.Strain[0][i]
				if i > 0 && p.TimeS[i] <= p.TimeS[i-1] {
					t.Fatalf("max %d n %d: times not increasing at %d", max, n, i)
				}
			}
			for _, v := range ps {
				sin += v
			}
			if w != float64(n) {
				t.Fatalf("max %d n %d: weights %v", max, n, w)
			}
			if n > 0 && (math.Abs(sp/w-sin/float64(n)) > 1e-9*(1+math.Abs(sin/float64(n))) || math.Abs(se/w+2*sin/float64(n)) > 1e-9*(1+math.Abs(sin/float64(n)))) {
				t.Fatalf("max %d n %d: weighted means %v %v, input mean %v", max, n, sp/w, se/w, sin/float64(n))
			}
		}
	}
}

// At the real bound: a 30 h dive at 10 Hz (1 080 000 samples), a linear
// ramp. The profile stays within MaxProfilePoints and above half of it
// (it halves only when full), and means of a ramp stay on the ramp.
func TestDecimatorLongDive(t *testing.T) {
	const n = 1080000
	ts, ps, es := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range ts {
		ts[i] = float64(i) / 10
		ps[i], es[i] = ts[i]/1000, -ts[i]/10
	}
	a := NewDecimator([]string{"g1"})
	feed(a, rand.New(rand.NewPCG(1, 2)), 8192, ts, ps, [][]float64{es})
	p := a.Finish()
	if len(p.TimeS) > MaxProfilePoints || len(p.TimeS) < MaxProfilePoints/2 {
		t.Fatalf("%d points", len(p.TimeS))
	}
	// 108 000 s in fewer than 20 000 windows: 4 s windows would be 27 000,
	// 8 s windows are 13 500, so the step has doubled to 8 s.
	if p.StepS != 8 {
		t.Errorf("step %v, want 8", p.StepS)
	}
	w := 0.0
	for i := range p.TimeS {
		if math.Abs(p.PressureMPa[i]-p.TimeS[i]/1000) > 1e-9 || math.Abs(p.Strain[0][i]+p.TimeS[i]/10) > 1e-6 {
			t.Fatalf("point %d off the ramp: t %v p %v e %v", i, p.TimeS[i], p.PressureMPa[i], p.Strain[0][i])
		}
		w += p.Weights[i]
	}
	if w != n {
		t.Fatalf("weights %v, want %d", w, n)
	}
}
