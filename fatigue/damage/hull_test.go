package damage

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// dives builds dives with the same per-dive damage pattern for two
// components, "cylinder" and "end ring".
func dives(cyl, ring []Damage) []Dive {
	out := make([]Dive, len(cyl))
	for i := range cyl {
		out[i] = Dive{ID: fmt.Sprintf("D%02d", i+1), Damage: map[string]Damage{"cylinder": cyl[i], "end ring": ring[i]}}
	}
	return out
}

func repeat(d Damage, n int) []Damage {
	out := make([]Damage, n)
	for i := range out {
		out[i] = d
	}
	return out
}

func TestTotalsAndGoverning(t *testing.T) {
	h := Hull{
		Components: []Component{
			// Composite cylinder, allowable 0.25 (configured; composites
			// are usually given well below 1), damages add.
			{Name: "cylinder", Limits: Limits{Allowable: 0.25}},
			// Steel end ring, allowable 1, with prior damage 0.1 from
			// proof tests.
			{Name: "end ring", Limits: Limits{Allowable: 1}, Prior: Damage{Cyclic: 0.1}},
		},
		Dives: dives(repeat(Damage{Cyclic: 0.001, Sustained: 0.0005}, 4), repeat(Damage{Cyclic: 0.002}, 4)),
	}
	tot, err := h.Totals()
	if err != nil {
		t.Fatal(err)
	}
	// Cylinder: 4 × (0.001 + 0.0005) = 0.006; 0.006/0.25 = 0.024.
	// End ring: 0.1 + 4 × 0.002 = 0.108; 0.108/1 = 0.108 → governs.
	if math.Abs(tot.Components[0].Ratio-0.024) > 1e-12 || math.Abs(tot.Components[1].Ratio-0.108) > 1e-12 {
		t.Errorf("ratios %v, %v", tot.Components[0].Ratio, tot.Components[1].Ratio)
	}
	if tot.Governing != "end ring" || math.Abs(tot.Ratio-0.108) > 1e-12 {
		t.Errorf("governing %q at %v, want end ring at 0.108", tot.Governing, tot.Ratio)
	}
	all, err := h.Cumulative()
	if err != nil {
		t.Fatal(err)
	}
	// Before any dive only the prior damage counts: end ring 0.1.
	if len(all) != 5 || all[0].Components[1].Total.Cyclic != 0.1 || all[0].Components[0].Ratio != 0 {
		t.Errorf("cumulative[0] = %+v", all[0])
	}
}

func TestCombination(t *testing.T) {
	d := Damage{Cyclic: 0.06, Sustained: 0.04}
	tests := []struct {
		name string
		l    Limits
		want float64
	}{
		// Add (the default): (0.06 + 0.04)/0.2 = 0.5.
		{"add by default", Limits{Allowable: 0.2}, 0.5},
		{"add", Limits{Allowable: 0.2, Combine: CombineAdd}, 0.5},
		// Separate: max(0.06/0.2, 0.04/0.05) = max(0.3, 0.8) = 0.8.
		{"separate", Limits{Allowable: 0.2, SustainedAllowable: 0.05, Combine: CombineSeparate}, 0.8},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.l.Validate(); err != nil {
				t.Fatal(err)
			}
			if got := tc.l.Ratio(d); math.Abs(got-tc.want) > 1e-12 {
				t.Errorf("ratio %v, want %v", got, tc.want)
			}
		})
	}
	for _, bad := range []Limits{{}, {Allowable: -1}, {Allowable: math.NaN()}, {Allowable: 1, Combine: CombineSeparate}, {Allowable: 1, Combine: "either"}} {
		if err := bad.Validate(); err == nil {
			t.Errorf("limits %+v accepted", bad)
		}
	}
}

func TestHullValidation(t *testing.T) {
	comps := []Component{{Name: "cylinder", Limits: Limits{Allowable: 0.25}}, {Name: "end ring", Limits: Limits{Allowable: 1}}}
	tests := []struct {
		name string
		h    Hull
		want string
	}{
		{"no components", Hull{}, "no components"},
		{"duplicate", Hull{Components: []Component{comps[0], comps[0]}}, "twice"},
		{"bad limits", Hull{Components: []Component{{Name: "x"}}}, `"x"`},
		{"missing component in dive", Hull{Components: comps, Dives: []Dive{{ID: "D1", Damage: map[string]Damage{"cylinder": {}}}}}, `no damage for component "end ring"`},
		{"unknown component in dive", Hull{Components: comps, Dives: []Dive{{ID: "D1", Damage: map[string]Damage{"cylinder": {}, "end ring": {}, "hatch": {}}}}}, `unknown component "hatch"`},
		{"negative damage", Hull{Components: comps, Dives: []Dive{{ID: "D1", Damage: map[string]Damage{"cylinder": {Cyclic: -1}, "end ring": {}}}}}, "non-negative"},
		{"NaN prior", Hull{Components: []Component{{Name: "x", Limits: Limits{Allowable: 1}, Prior: Damage{Sustained: math.NaN()}}}}, "prior"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := tc.h.Totals(); err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want %q", err, tc.want)
			}
		})
	}
}

func TestRemainingLife(t *testing.T) {
	comps := []Component{
		{Name: "cylinder", Limits: Limits{Allowable: 0.5}},
		{Name: "end ring", Limits: Limits{Allowable: 1}},
	}
	t.Run("estimate, floored", func(t *testing.T) {
		// Cylinder: 5 dives of 0.01 + 0.002 = 0.012 → ratio per dive
		// 0.012/0.5 = 0.024, now 5 × 0.024 = 0.12; left (1 − 0.12)/0.024
		// = 36.67 → 36 dives (floored, never rounded up).
		// End ring: 0.005 per dive → 0.025 now; (1 − 0.025)/0.005 = 195.
		h := Hull{Components: comps, Dives: dives(repeat(Damage{Cyclic: 0.01, Sustained: 0.002}, 5), repeat(Damage{Cyclic: 0.005}, 5))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeEstimated || l.Dives != 36 || l.Component != "cylinder" || l.Window != 5 {
			t.Errorf("got %+v, want 36 dives limited by the cylinder", l)
		}
		if math.Abs(l.AtRecentMean.PerDive-0.024) > 1e-12 {
			t.Errorf("mean per dive %v, want 0.024", l.AtRecentMean.PerDive)
		}
	})
	t.Run("fewer than the minimum dives", func(t *testing.T) {
		h := Hull{Components: comps, Dives: dives(repeat(Damage{Cyclic: 0.01}, 2), repeat(Damage{}, 2))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeTooFewDives || l.Dives != 0 || !strings.Contains(l.Reason, "only 2 dives") || !strings.Contains(l.Reason, "at least 3") {
			t.Errorf("got %+v", l)
		}
		// A configured minimum of 2 gives an estimate.
		l, err = h.RemainingLife(LifeOptions{MinDives: 2})
		if err != nil || l.Status != LifeEstimated {
			t.Errorf("min 2: %+v, %v", l, err)
		}
	})
	t.Run("mean of an uneven window", func(t *testing.T) {
		// Cylinder per-dive damage 0.01, 0.04, 0.02, 0.03 (÷ 0.5 → ratios
		// 0.02, 0.08, 0.04, 0.06); the mean is 0.2/4 = 0.05. Now 0.2;
		// (1 − 0.2)/0.05 = 16 (15 if the quotient falls a hair below 16).
		cyl := []Damage{{Cyclic: 0.01}, {Cyclic: 0.04}, {Cyclic: 0.02}, {Cyclic: 0.03}}
		h := Hull{Components: comps, Dives: dives(cyl, repeat(Damage{}, 4))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(l.AtRecentMean.PerDive-0.05) > 1e-12 || l.Dives < 15 || l.Dives > 16 || l.Basis != BasisRecentMean {
			t.Errorf("got %+v, want mean 0.05 and 16 dives", l)
		}
	})
	t.Run("window of the last 10 dives", func(t *testing.T) {
		// 12 dives: two early heavy dives (0.1 each) then ten of 0.001.
		// The mean of the last 10 is 0.001 → ratio 0.002 per dive. Now
		// (0.2 + 0.01)/0.5 = 0.42; (1 − 0.42)/0.002 = 290 (289 if the
		// quotient falls a hair below 290 in floating point).
		cyl := append(repeat(Damage{Cyclic: 0.1}, 2), repeat(Damage{Cyclic: 0.001}, 10)...)
		h := Hull{Components: comps, Dives: dives(cyl, repeat(Damage{}, 12))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Window != 10 || math.Abs(l.AtRecentMean.PerDive-0.002) > 1e-12 || l.Dives < 289 || l.Dives > 290 {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("not limited by damage", func(t *testing.T) {
		h := Hull{Components: comps, Dives: dives(repeat(Damage{}, 5), repeat(Damage{}, 5))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeNotLimited || !strings.Contains(l.Reason, "not limited by damage") {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("allowable reached", func(t *testing.T) {
		// Prior 0.6 on an allowable of 0.5: ratio 1.2, even with one dive.
		c := append([]Component(nil), comps...)
		c[0].Prior = Damage{Cyclic: 0.6}
		h := Hull{Components: c, Dives: dives(repeat(Damage{}, 1), repeat(Damage{}, 1))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeExhausted || l.Dives != 0 || l.Component != "cylinder" {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("limiting component differs from governing", func(t *testing.T) {
		// End ring governs now (prior 0.5 → ratio 0.5) but adds 0.001 per
		// dive: (1 − 0.503)/0.001 ≈ 497. The cylinder is at 3·0.01/0.5 =
		// 0.06 but adds 0.02 per dive: (1 − 0.06)/0.02 = 47 → limits.
		c := append([]Component(nil), comps...)
		c[1].Prior = Damage{Cyclic: 0.5}
		h := Hull{Components: c, Dives: dives(repeat(Damage{Cyclic: 0.01}, 3), repeat(Damage{Cyclic: 0.001}, 3))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Governing != "end ring" || l.Component != "cylinder" || l.Dives < 46 || l.Dives > 47 {
			t.Errorf("got %+v", l)
		}
		if !strings.Contains(l.Reason, "governs now") {
			t.Errorf("reason %q does not explain", l.Reason)
		}
	})
	t.Run("separate allowables", func(t *testing.T) {
		// Sustained kept apart with allowable 0.1: 0.002 per dive → 0.02
		// per dive of ratio; now 3 × 0.02 = 0.06; (1 − 0.06)/0.02 = 47.
		// Cyclic: 0.001/0.5 = 0.002 per dive → about 497 dives.
		c := []Component{{Name: "cylinder", Limits: Limits{Allowable: 0.5, SustainedAllowable: 0.1, Combine: CombineSeparate}},
			{Name: "end ring", Limits: Limits{Allowable: 1}}}
		h := Hull{Components: c, Dives: dives(repeat(Damage{Cyclic: 0.001, Sustained: 0.002}, 3), repeat(Damage{}, 3))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Dives < 46 || l.Dives > 47 || math.Abs(l.AtRecentMean.PerDive-0.02) > 1e-12 {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("bad options", func(t *testing.T) {
		h := Hull{Components: comps}
		for _, o := range []LifeOptions{{Window: -1}, {MinDives: -2}, {Window: 2, MinDives: 5}} {
			if _, err := h.RemainingLife(o); err == nil {
				t.Errorf("options %+v accepted", o)
			}
		}
	})
}

func TestFloorDives(t *testing.T) {
	for _, tc := range []struct {
		x    float64
		want int64
	}{{36.67, 36}, {36.9999, 36}, {0, 0}, {-1, 0}, {math.NaN(), 0}, {1e30, math.MaxInt64}} {
		if got := floorDives(tc.x); got != tc.want {
			t.Errorf("floorDives(%v) = %v, want %v", tc.x, got, tc.want)
		}
	}
}
