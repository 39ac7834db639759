package ledger

import (
	"math"
	"testing"
)

func TestProfileBounded(t *testing.T) {
	a := newProfileAcc([]string{"g1"})
	// 30 h at 10 Hz: 1 080 000 samples, a linear ramp, in chunks.
	const n = 1080000
	t0 := make([]float64, 0, 4096)
	p0 := make([]float64, 0, 4096)
	e0 := make([]float64, 0, 4096)
	for i := 0; i < n; i++ {
		ts := float64(i) / 10
		t0, p0, e0 = append(t0, ts), append(p0, ts/1000), append(e0, -ts/10)
		if len(t0) == cap(t0) || i == n-1 {
			a.add(t0, p0, [][]float64{e0})
			t0, p0, e0 = t0[:0], p0[:0], e0[:0]
		}
	}
	a.finish()
	if len(a.TimeS) > maxProfilePoints || len(a.TimeS) < maxProfilePoints/2 {
		t.Fatalf("%d points", len(a.TimeS))
	}
	// Means of a linear ramp stay on the ramp; the weights add up.
	w := 0.0
	for i := range a.TimeS {
		if math.Abs(a.Press[i]-a.TimeS[i]/1000) > 1e-9 || math.Abs(a.Strain[0][i]+a.TimeS[i]/10) > 1e-6 {
			t.Fatalf("point %d off the ramp: t %v p %v e %v", i, a.TimeS[i], a.Press[i], a.Strain[0][i])
		}
		w += a.weights[i]
		if i > 0 && a.TimeS[i] <= a.TimeS[i-1] {
			t.Fatalf("times not increasing at %d", i)
		}
	}
	if w != n {
		t.Fatalf("weights %v, want %d", w, n)
	}
}
