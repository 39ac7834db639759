package charts

import (
	"bytes"
	"testing"
)

// TestProjectionEndsOnAllowable: the projection starts at the ratio read
// off the history at FromDive and stops where it meets the allowable
// line. A ratio rising evenly to 0.4 at dive 60 and 0.002 per dive meets
// the allowable 1.0 at dive 60 + 0.6 / 0.002 = 360: drawn with any cap at
// or beyond 360 (or none) the chart is the same as with the cap at 360,
// so the line's last point is on the allowable at dive 360; with the cap
// a dive short of it the chart differs. A nil projection draws none.
func TestProjectionEndsOnAllowable(t *testing.T) {
	dives := make([]float64, 60)
	ratio := make([]float64, 60)
	for i := range dives {
		dives[i], ratio[i] = float64(i+1), 0.4*float64(i+1)/60
	}
	ratio[59] = 0.4
	if r0, ok := valueAt(dives, ratio, 60); !ok || r0 != 0.4 {
		t.Fatalf("start of the projection %g (%v), want 0.4", r0, ok)
	}
	if r, ok := valueAt(dives, ratio, 59.5); !ok || r < 0.39666 || r > 0.39667 { // halfway between 0.39333 and 0.4
		t.Errorf("ratio at dive 59.5: %g, want 0.396667", r)
	}
	draw := func(p *Projection) []byte {
		t.Helper()
		b, err := DamageHistory(dives, ratio, p, 1, 0, Size{})
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	at360 := draw(&Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: 360})
	for _, until := range []float64{360.0001, 400, 1000, 0} {
		if !bytes.Equal(draw(&Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: until}), at360) {
			t.Errorf("cap %g: the projection does not stop on the allowable at dive 360", until)
		}
	}
	if bytes.Equal(draw(&Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: 359}), at360) {
		t.Error("a projection capped at dive 359 (short of the allowable) draws as one reaching it")
	}
	if bytes.Equal(draw(nil), at360) {
		t.Error("no projection draws as one")
	}
	// A history already at or past the allowable draws no projection.
	over := append([]float64(nil), ratio...)
	over[59] = 1
	b, err := DamageHistory(dives, over, &Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: 360}, 1, 0, Size{})
	if err != nil {
		t.Fatal(err)
	}
	nb, err := DamageHistory(dives, over, nil, 1, 0, Size{})
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b, nb) {
		t.Error("a projection was drawn from a ratio at the allowable")
	}
}
