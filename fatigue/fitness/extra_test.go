package fitness

import (
	"testing"
)

// TestEarlierJudgementKeepsItsFlags: a dive judged again (a late dive or
// a void moved its reference, a looser setting was in force) cannot close
// the flag its earlier judgement raised: the earlier judgement is given as
// Extra facts and raises its flag; only the clearing procedure closes it.
// Extra facts are neither counted as dives nor summed twice.
func TestEarlierJudgementKeepsItsFlags(t *testing.T) {
	r := shipped(t)
	f := goodHull()
	now := f.Now
	d := goodDive("d1", now.Add(-day(3)))
	d.ResidualStrain = map[string]float64{"g1": 60, "g2": 0} // summed twice it would reach the growth watch (100 µε)
	earlier := d
	earlier.Extra = true
	earlier.FelicityRatio = fp(0.6) // the first judgement: a Felicity hold
	f.Dives = []DiveFacts{earlier, d}
	flags := Evaluate(r, f)
	fel := flagsOf(flags, "felicity-below-limit")
	if len(fel) != 1 || fel[0].Level != LevelHold || fel[0].Dive != "d1" {
		t.Fatalf("felicity flags %+v, want one hold from the earlier judgement of d1", fel)
	}
	v := Status(flags, nil, Records{Inspections: f.Inspections, ProofTests: f.ProofTests}, now)
	if v.State != Hold {
		t.Fatalf("status %s, want hold: a re-judgement never closes a flag", v.State)
	}
	// The residual of the dive is summed once, not once per judgement:
	// 60 µε, below the growth watch of 100 µε.
	for _, fl := range flagsOf(flags, "residual-strain-growth") {
		t.Errorf("growth flag %+v: a single dive's 60 µε summed twice", fl)
	}
	// The Extra facts are not dives: 45 earlier judgements after the last
	// inspection (100 dives at it, 100 now) do not make 46 dives since it
	// (watch at 40 in the shipped rules).
	f2 := goodHull()
	f2.DiveCount = 100
	for i := 0; i < 45; i++ {
		f2.Dives = append(f2.Dives, earlier)
	}
	if fs := flagsOf(Evaluate(r, f2), "inspection-due-by-dives"); len(fs) != 0 {
		t.Errorf("inspection-due-by-dives raised by Extra facts counted as dives: %+v", fs)
	}
}
