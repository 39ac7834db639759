package ledger_test

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/ledger/synth"
)

func synthDive(t *testing.T, d synth.Dive, seed uint64) (string, string) {
	t.Helper()
	dir := t.TempDir()
	sp, hp := filepath.Join(dir, "s.csv"), filepath.Join(dir, "h.csv")
	sf, _ := os.Create(sp)
	hf, _ := os.Create(hp)
	if _, err := d.Write(sf, hf, seed); err != nil {
		t.Fatal(err)
	}
	sf.Close()
	hf.Close()
	return sp, hp
}

// TestEvidenceAgainstProofTest: a proof test with samples sets the strain
// baseline and the Felicity reference; a later dive that emits below that
// peak and has softened by 5 % shows both, and the hull goes to hold.
// Expected values follow from the generator's own parameters.
func TestEvidenceAgainstProofTest(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	lat := 45.0
	gauges := []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -100, NoiseUE: 0.5}, {Name: "axial1", ComplianceUEPerMPa: -40, NoiseUE: 0.5}}
	base := synth.Dive{SampleHz: 0.5, Latitude: lat, DescentMPS: 1, AscentMPS: 1, BottomS: 3600, SurfaceS: 600, Stops: 1, StopS: 120,
		DepthNoiseM: 0.02, Gauges: gauges, AEChannels: []int{1, 2}, AEBottomRate: 1, AEOnsetFrac: 1, AmplitudeMean: 50}
	proof := base
	proof.Start = time.Date(2026, 4, 1, 8, 0, 0, 0, time.UTC)
	proof.MaxDepthM = seawater.MPaToDepth(50, lat) // the spec's 50 MPa proof pressure: beyond the 4000 m rating on purpose
	s, h := synthDive(t, proof, 1)
	pt, err := l.ProofTestWithSamples(ctx, serial, ledger.ProofTest{Result: "pass"},
		ledger.LogRequest{Hull: serial, Samples: s, AE: h, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	if pt.DiveID == nil || math.Abs(pt.PressureMPa-50) > 0.05 {
		t.Fatalf("proof test %+v", pt)
	}
	for g, want := range map[string]float64{"hoop1": -100, "axial1": -40} {
		if got := pt.Baseline[g]; math.Abs(got-want) > 0.01*math.Abs(want) {
			t.Errorf("baseline %s = %v, want %v", g, got, want)
		}
	}
	// A later dive to 35 MPa, softened by 5 %, emitting from 60 % of its
	// depth at 300 hits an hour: the onset lies near 21 MPa, far below the
	// 50 MPa reference (Felicity about 0.42).
	dive := base
	dive.Start = time.Date(2026, 4, 3, 8, 0, 0, 0, time.UTC)
	dive.MaxDepthM = seawater.MPaToDepth(35, lat)
	dive.Gauges = []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -105, NoiseUE: 0.5}, {Name: "axial1", ComplianceUEPerMPa: -42, NoiseUE: 0.5}}
	dive.AEOnsetFrac, dive.AEOnsetRate = 0.6, 300
	s, h = synthDive(t, dive, 2)
	d, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: s, AE: h, Latitude: &lat})
	if err != nil {
		t.Fatal(err)
	}
	ev, err := l.EvidenceOf(ctx, d.ID)
	if err != nil || ev == nil {
		t.Fatalf("evidence %v %v", ev, err)
	}
	if math.Abs(ev.PreviousMaxMPa-50) > 0.05 {
		t.Errorf("previous maximum %v MPa, want the proof test's 50", ev.PreviousMaxMPa)
	}
	if ev.AE == nil || ev.AE.FelicityRatio == nil || *ev.AE.FelicityRatio > 0.7 || *ev.AE.FelicityRatio < 0.3 {
		t.Fatalf("Felicity %+v", ev.AE)
	}
	for _, sg := range ev.Strain {
		if sg.ComplianceChange == nil || math.Abs(*sg.ComplianceChange-0.05) > 0.005 {
			t.Errorf("%s: compliance change %v, want 0.05", sg.Gauge, sg.ComplianceChange)
		}
	}
	hh, _ := l.Hull(ctx, serial)
	f, err := l.FitnessOf(ctx, hh, time.Date(2026, 4, 4, 0, 0, 0, 0, time.UTC))
	if err != nil {
		t.Fatal(err)
	}
	if f.Status != "hold" {
		t.Fatalf("status %s: %+v", f.Status, f.Reasons)
	}
	// The proof test itself went beyond the rated depth on purpose: it
	// raises no depth flag.
	for _, fl := range f.Flags {
		if fl.Rule == "beyond-rated-depth" && fl.Dive == pt.DiveID.String() {
			t.Errorf("the proof test was flagged as a dive beyond the rated depth: %+v", fl)
		}
	}
}
