package assess

import (
	"math/rand/v2"
	"reflect"
	"testing"

	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/sn"
)

// A dive assessed in parts (DiveSum, as a long record is while it
// streams) gives bit for bit what the whole dive gives (Assessor.Dive):
// floating-point sums in another grouping would differ in the last bits,
// and a stored damage that differs from its re-assessment is a finding.
// Parts of every size down to one cycle, an empty part, and a bad cycle in
// a late part (the error must stick, not be forgotten by Finish).
func TestDiveSumInPartsIsTheWhole(t *testing.T) {
	lib := library(t)
	f := -10.0
	cs, err := Resolve(Geometry{Shape: "cylinder", InnerRadiusM: 0.5, WallM: 0.1},
		[]ComponentSpec{
			{Name: "ring", Kind: "hatch_seat", Basis: "designer", Factor: &f, Source: "FE", Curve: "dnv-rp-c203-d-air"},
			{Name: "laminate", Kind: "laminate_cylinder", Basis: "lame", Curve: "carbon-epoxy-cc-illustrative"},
		}, lib)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(5, 8))
	var ps []float64
	x := 0.0
	for range 20000 {
		x += 0.2 * r.NormFloat64()
		ps = append(ps, max(x, 0)+3)
	}
	cycles := rainflow.Count(nil, ps, 0.05)
	holds := []Hold{{LevelMPa: 4, Seconds: 3600}, {LevelMPa: 6, Seconds: 600}}
	settings := Settings{DFF: 3, MeanStress: sn.MeanStressNone}
	a, err := NewAssessor(cs, settings)
	if err != nil {
		t.Fatal(err)
	}
	want, err := a.Dive(Dive{PressureCycles: cycles, Holds: holds})
	if err != nil {
		t.Fatal(err)
	}
	if want[0].Damage.Cyclic == 0 {
		t.Fatal("the test dive does no damage: it would not tell sums apart")
	}
	for _, part := range []int{1, 3, 1000, len(cycles)} {
		s := a.Begin()
		if err := s.Add(nil); err != nil {
			t.Fatal(err)
		}
		for lo := 0; lo < len(cycles); lo += part {
			if err := s.Add(cycles[lo:min(lo+part, len(cycles))]); err != nil {
				t.Fatal(err)
			}
		}
		got, err := s.Finish(holds)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("parts of %d: %+v, whole %+v", part, got[0].Damage, want[0].Damage)
		}
	}
	s := a.Begin()
	if err := s.Add(cycles[:10]); err != nil {
		t.Fatal(err)
	}
	if err := s.Add([]rainflow.Cycle{{Range: -1, Count: 1}}); err == nil {
		t.Fatal("a negative range was taken")
	}
	if err := s.Add(cycles[10:20]); err == nil {
		t.Fatal("a part after a bad one was taken")
	}
	if _, err := s.Finish(holds); err == nil {
		t.Fatal("Finish forgot the bad part and gave a damage")
	}
}
