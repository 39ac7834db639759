package damage

import (
	"math"
	"strings"
	"testing"
)

// fourDeepSixShallow is the adversarial window: ten dives on the
// cylinder, four deep (damage 0.01 each) among six shallow (0.0001 each),
// in the order D S S D S S D S D S; the end ring takes no damage.
func fourDeepSixShallow() Hull {
	const deep, shallow = 0.01, 0.0001
	var cyl []Damage
	for _, c := range "DSSDSSDSDS" {
		if c == 'D' {
			cyl = append(cyl, Damage{Cyclic: deep})
		} else {
			cyl = append(cyl, Damage{Cyclic: shallow})
		}
	}
	return Hull{
		Components: []Component{
			{Name: "cylinder", Limits: Limits{Allowable: 1}},
			{Name: "end ring", Limits: Limits{Allowable: 1}},
		},
		Dives: dives(cyl, repeat(Damage{}, 10)),
	}
}

func ptr(x float64) *float64 { return &x }

// TestRemainingLifeMeanNotMedian is the adversarial case of the rate: a
// minority of deep dives must not vanish from the projection.
//
// By hand, allowable 1, damages add:
//
//	sum of the window  = 4 × 0.01 + 6 × 0.0001 = 0.0406 → ratio now 0.0406
//	mean per dive      = 0.0406 / 10 = 0.00406
//	dives left at mean = (1 − 0.0406) / 0.00406 = 0.9594 / 0.00406 = 236.305… → 236
//
// whereas the median (the two middle values of the sorted ten are both
// 0.0001) would give 0.9594 / 0.0001 = 9594 dives — forty times too many.
func TestRemainingLifeMeanNotMedian(t *testing.T) {
	h := fourDeepSixShallow()
	l, err := h.RemainingLife(LifeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if l.Status != LifeEstimated || l.Dives != 236 || l.Basis != BasisRecentMean || l.Component != "cylinder" {
		t.Fatalf("got %+v, want 236 dives at the recent mean, limited by the cylinder", l)
	}
	if l.AtRecentMean == nil || l.AtRecentMean.Dives != 236 || math.Abs(l.AtRecentMean.PerDive-0.00406) > 1e-15 {
		t.Errorf("recent mean projection %+v, want 236 dives at 0.00406 per dive", l.AtRecentMean)
	}
	if l.AtDesignDive != nil || l.CycleCap != nil || l.LimitRatio != 1 || l.Horizon != DefaultHorizon || l.Window != 10 {
		t.Errorf("got %+v", l)
	}
	if math.Abs(l.Ratio-0.0406) > 1e-15 || !strings.Contains(l.Reason, "236 more dives") || !strings.Contains(l.Reason, "mean damage of the last 10 dives") {
		t.Errorf("ratio %v, reason %q", l.Ratio, l.Reason)
	}
}

func TestRemainingLifeDesignDive(t *testing.T) {
	// The window of TestRemainingLifeMeanNotMedian: now 0.0406, 236 dives
	// at the recent mean of 0.00406.
	tests := []struct {
		name      string
		design    float64 // cylinder damage of one design dive
		want      int64
		basis     LifeBasis
		wantDD    int64
		comp      string
		inReasons []string
	}{
		// A design dive to the rated depth is deeper than any recent
		// dive: 0.02 per dive, (1 − 0.0406)/0.02 = 47.97 → 47 governs.
		{"design dive governs", 0.02, 47, BasisDesignDive, 47, "cylinder", []string{"47 more dives at the damage of one design dive", "236 dives at the mean damage of the last 10 dives", "the smaller governs"}},
		// A gentler design dive, 0.001: 0.9594/0.001 = 959.4 → 959; the
		// recent mean (236) is smaller and governs.
		{"recent mean governs", 0.001, 236, BasisRecentMean, 959, "cylinder", []string{"236 more dives", "959 dives at the damage of one design dive"}},
		// A design dive that overloads the static strength (+Inf): no
		// dive to the rated depth is left.
		{"design dive overload", math.Inf(1), 0, BasisDesignDive, 0, "cylinder", []string{"0 more dives"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h := fourDeepSixShallow()
			l, err := h.RemainingLife(LifeOptions{DesignDive: map[string]Damage{"cylinder": {Cyclic: tc.design}, "end ring": {}}})
			if err != nil {
				t.Fatal(err)
			}
			if l.Status != LifeEstimated || l.Dives != tc.want || l.Basis != tc.basis || l.Component != tc.comp {
				t.Errorf("got %+v, want %d dives on %s", l, tc.want, tc.basis)
			}
			if l.AtDesignDive == nil || l.AtDesignDive.Dives != tc.wantDD || l.AtRecentMean == nil || l.AtRecentMean.Dives != 236 {
				t.Errorf("projections %+v, %+v", l.AtDesignDive, l.AtRecentMean)
			}
			for _, s := range tc.inReasons {
				if !strings.Contains(l.Reason, s) {
					t.Errorf("reason %q lacks %q", l.Reason, s)
				}
			}
		})
	}
	t.Run("zero recent mean, design dive gives a figure", func(t *testing.T) {
		// Five dives of no damage (shallow, below the cut-off); a design
		// dive of 0.003 on the cylinder: 1/0.003 = 333.3 → 333.
		h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(repeat(Damage{}, 5), repeat(Damage{}, 5))}
		l, err := h.RemainingLife(LifeOptions{DesignDive: map[string]Damage{"cylinder": {Sustained: 0.003}, "end ring": {}}})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeEstimated || l.Dives != 333 || l.Basis != BasisDesignDive || l.AtRecentMean != nil {
			t.Errorf("got %+v, want 333 dives from the design dive", l)
		}
		if !strings.Contains(l.Reason, "mean damage per dive over the last 5 dives is zero") {
			t.Errorf("reason %q", l.Reason)
		}
		// Without the design dive the hull is not limited by damage.
		l, err = h.RemainingLife(LifeOptions{})
		if err != nil || l.Status != LifeNotLimited {
			t.Errorf("without design dive: %+v, %v", l, err)
		}
		// A design dive of zero damage too: still not limited, and said.
		l, err = h.RemainingLife(LifeOptions{DesignDive: map[string]Damage{"cylinder": {}, "end ring": {}}})
		if err != nil || l.Status != LifeNotLimited || !strings.Contains(l.Reason, "so is the design dive's") {
			t.Errorf("zero design dive: %+v, %v", l, err)
		}
	})
	t.Run("too few dives keeps its status", func(t *testing.T) {
		// Two dives (minimum 3): no estimate, though the design-dive
		// projection is returned for information: 1/0.003 → 333.
		h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(repeat(Damage{Cyclic: 0.01}, 2), repeat(Damage{}, 2))}
		l, err := h.RemainingLife(LifeOptions{DesignDive: map[string]Damage{"cylinder": {Cyclic: 0.003}, "end ring": {}}})
		if err != nil {
			t.Fatal(err)
		}
		// Now 0.02: (1 − 0.02)/0.003 = 326.7 → 326.
		if l.Status != LifeTooFewDives || l.Dives != 0 || l.AtDesignDive == nil || l.AtDesignDive.Dives != 326 {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("malformed design dive refused", func(t *testing.T) {
		h := fourDeepSixShallow()
		for _, dd := range []map[string]Damage{
			{"cylinder": {Cyclic: 0.01}},
			{"cylinder": {}, "end ring": {}, "hatch": {}},
			{"cylinder": {Cyclic: -1}, "end ring": {}},
			{"cylinder": {Sustained: math.NaN()}, "end ring": {}},
		} {
			if _, err := h.RemainingLife(LifeOptions{DesignDive: dd}); err == nil || !strings.Contains(err.Error(), "design dive") {
				t.Errorf("design dive %v: error %v", dd, err)
			}
		}
	})
}

func TestRemainingLifeLimitRatio(t *testing.T) {
	tests := []struct {
		name   string
		limit  float64
		status LifeStatus
		want   int64
	}{
		// Not given: the allowable itself, 236 (see the mean test).
		{"default 1", 0, LifeEstimated, 236},
		// Hold level 0.5: (0.5 − 0.0406)/0.00406 = 113.15 → 113.
		{"hold level 0.5", 0.5, LifeEstimated, 113},
		// Hold level 0.04 is below the ratio now (0.0406): no dives left.
		{"hold level already passed", 0.04, LifeExhausted, 0},
		// At the ratio exactly: 0.0406 ≥ 0.0406, no dives left.
		{"hold level reached", 0.0406, LifeExhausted, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h := fourDeepSixShallow()
			l, err := h.RemainingLife(LifeOptions{LimitRatio: tc.limit})
			if err != nil {
				t.Fatal(err)
			}
			if l.Status != tc.status || l.Dives != tc.want {
				t.Errorf("got %+v, want %s %d", l, tc.status, tc.want)
			}
			if tc.status == LifeExhausted && (l.Component != "cylinder" || l.Basis != BasisCurrentDamage || !strings.Contains(l.Reason, "no dives left")) {
				t.Errorf("exhausted: %+v", l)
			}
			if tc.limit == 0.5 && !strings.Contains(l.Reason, "0.5 of its allowable") {
				t.Errorf("reason %q does not name the limit", l.Reason)
			}
		})
	}
	for _, bad := range []float64{-0.1, 1.2, math.NaN(), math.Inf(1)} {
		if _, err := fourDeepSixShallow().RemainingLife(LifeOptions{LimitRatio: bad}); err == nil {
			t.Errorf("limit ratio %v accepted", bad)
		}
	}
}

func TestRemainingLifeHorizon(t *testing.T) {
	t.Run("default horizon", func(t *testing.T) {
		// Ten dives of 1e-7 on an allowable of 1: now 1e-6, (1 − 1e-6)/1e-7
		// = 9 999 990 dives — more than the default horizon of 100 000,
		// reported as such, never as the giant figure.
		h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(repeat(Damage{Cyclic: 1e-7}, 10), repeat(Damage{}, 10))}
		l, err := h.RemainingLife(LifeOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeBeyondHorizon || l.Dives != 100000 || !l.AtRecentMean.Beyond || l.AtRecentMean.Dives != 100000 {
			t.Errorf("got %+v, %+v", l, l.AtRecentMean)
		}
		if !strings.Contains(l.Reason, "more than 100000 dives") {
			t.Errorf("reason %q", l.Reason)
		}
	})
	tests := []struct {
		horizon int64
		status  LifeStatus
		want    int64
	}{
		// 236 dives left (the mean test): beyond a horizon of 200, within
		// one of 236 (the horizon itself is still a figure).
		{200, LifeBeyondHorizon, 200},
		{236, LifeEstimated, 236},
		{235, LifeBeyondHorizon, 235},
	}
	for _, tc := range tests {
		l, err := fourDeepSixShallow().RemainingLife(LifeOptions{Horizon: tc.horizon})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != tc.status || l.Dives != tc.want || l.Horizon != tc.horizon {
			t.Errorf("horizon %d: got %+v", tc.horizon, l)
		}
	}
	if _, err := fourDeepSixShallow().RemainingLife(LifeOptions{Horizon: -1}); err == nil {
		t.Error("negative horizon accepted")
	}
}

func TestRemainingLifeCycleCap(t *testing.T) {
	tests := []struct {
		name      string
		qualified float64
		used      float64
		status    LifeStatus
		want      int64
		basis     LifeBasis
		cap       int64
	}{
		// 200 − 150 = 50 < 236: the cycles cap.
		{"cap governs", 200, 150, LifeEstimated, 50, BasisQualifiedCycles, 50},
		// 160.7 − 10 = 150.7 → 150 (floored).
		{"cap floored", 160.7, 10, LifeEstimated, 150, BasisQualifiedCycles, 150},
		// 1000 − 10 = 990 > 236: damage governs, the cap is returned.
		{"damage governs", 1000, 10, LifeEstimated, 236, BasisRecentMean, 990},
		// 200 − 199.5 = 0.5 → 0: no full cycle left.
		{"cycles used up", 200, 199.5, LifeExhausted, 0, BasisQualifiedCycles, 0},
		// More used than qualified: 0, never negative.
		{"cycles overrun", 200, 260, LifeExhausted, 0, BasisQualifiedCycles, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			l, err := fourDeepSixShallow().RemainingLife(LifeOptions{QualifiedCycles: ptr(tc.qualified), CyclesUsed: tc.used})
			if err != nil {
				t.Fatal(err)
			}
			if l.Status != tc.status || l.Dives != tc.want || l.Basis != tc.basis || l.CycleCap == nil || *l.CycleCap != tc.cap {
				t.Errorf("got %+v, want %s %d on %s", l, tc.status, tc.want, tc.basis)
			}
			if tc.basis == BasisQualifiedCycles && !strings.Contains(l.Reason, "qualified pressure cycles") {
				t.Errorf("reason %q does not say the cycles cap", l.Reason)
			}
			if tc.name == "cap governs" && (l.Component != "" || !strings.Contains(l.Reason, "by damage alone: 236 dives")) {
				t.Errorf("cap: component %q, reason %q", l.Component, l.Reason)
			}
		})
	}
	t.Run("not limited by damage but by cycles", func(t *testing.T) {
		h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(repeat(Damage{}, 5), repeat(Damage{}, 5))}
		l, err := h.RemainingLife(LifeOptions{QualifiedCycles: ptr(40), CyclesUsed: 5})
		if err != nil {
			t.Fatal(err)
		}
		if l.Status != LifeEstimated || l.Dives != 35 || l.Basis != BasisQualifiedCycles || !strings.Contains(l.Reason, "zero for every component") {
			t.Errorf("got %+v", l)
		}
	})
	t.Run("cycles used up with too few dives", func(t *testing.T) {
		h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(repeat(Damage{}, 1), repeat(Damage{}, 1))}
		l, err := h.RemainingLife(LifeOptions{QualifiedCycles: ptr(1), CyclesUsed: 1})
		if err != nil || l.Status != LifeExhausted || l.Basis != BasisQualifiedCycles {
			t.Errorf("got %+v, %v", l, err)
		}
	})
	for _, o := range []LifeOptions{{QualifiedCycles: ptr(math.NaN())}, {QualifiedCycles: ptr(-1)}, {CyclesUsed: -1}, {CyclesUsed: math.Inf(1)}} {
		if _, err := fourDeepSixShallow().RemainingLife(o); err == nil {
			t.Errorf("options %+v accepted", o)
		}
	}
}

// TestRemainingLifeSeparateMean checks the mean per term with separate
// combination, where the median would drop the sustained term entirely.
//
// Cylinder: allowable 0.5 (cyclic), sustained allowable 0.1. Four deep
// dives (cyclic 0.004, sustained 0.0021) among six shallow (cyclic
// 0.0005, no sustained damage):
//
//	cyclic:    sum 4·0.004 + 6·0.0005 = 0.019 → ratio 0.038, mean 0.0038/dive;
//	           (1 − 0.038)/0.0038 = 253.2 dives
//	sustained: sum 4·0.0021 = 0.0084 → ratio 0.084, mean 0.0084/dive;
//	           (1 − 0.084)/0.0084 = 109.05 → 109 dives — limits
//
// The median of the sustained terms is 0 (six of ten), which would leave
// the cylinder "not limited" by sustained load.
func TestRemainingLifeSeparateMean(t *testing.T) {
	var cyl []Damage
	for _, c := range "DSSDSSDSDS" {
		if c == 'D' {
			cyl = append(cyl, Damage{Cyclic: 0.004, Sustained: 0.0021})
		} else {
			cyl = append(cyl, Damage{Cyclic: 0.0005})
		}
	}
	h := Hull{
		Components: []Component{
			{Name: "cylinder", Limits: Limits{Allowable: 0.5, SustainedAllowable: 0.1, Combine: CombineSeparate}},
			{Name: "end ring", Limits: Limits{Allowable: 1}},
		},
		Dives: dives(cyl, repeat(Damage{}, 10)),
	}
	l, err := h.RemainingLife(LifeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if l.Status != LifeEstimated || l.Dives != 109 || math.Abs(l.AtRecentMean.PerDive-0.0084) > 1e-12 {
		t.Errorf("got %+v, %+v; want 109 dives at 0.0084 per dive", l, l.AtRecentMean)
	}
}

func TestRemainingLifeExhaustedByOverload(t *testing.T) {
	// A recent dive with a static overload (+Inf cyclic damage): the ratio
	// now is +Inf, no dives left, whatever the window's mean.
	cyl := append(repeat(Damage{Cyclic: 0.001}, 4), Damage{Cyclic: math.Inf(1)})
	h := Hull{Components: fourDeepSixShallow().Components, Dives: dives(cyl, repeat(Damage{}, 5))}
	l, err := h.RemainingLife(LifeOptions{QualifiedCycles: ptr(1000)})
	if err != nil {
		t.Fatal(err)
	}
	if l.Status != LifeExhausted || l.Dives != 0 || l.Component != "cylinder" {
		t.Errorf("got %+v", l)
	}
}

func TestLifeVoidReason(t *testing.T) {
	// The caller's text for a void projection, fixed for reports.
	if LifeVoidReason != "fatigue projection void while evidence of damage is open" || LifeVoid == LifeEstimated {
		t.Errorf("void reason %q, status %q", LifeVoidReason, LifeVoid)
	}
}
