package reports

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/fatigue/evidence"
	"hulltally/ledger"
)

func i64(v int64) *int64 { return &v }

// firstPage is the text of a PDF's first page (pdftotext separates pages
// with form feeds).
func firstPage(t *testing.T, b []byte) string {
	t.Helper()
	txt := pdfText(t, b)
	if i := strings.Index(txt, "\f"); i >= 0 {
		txt = txt[:i]
	}
	return flat(txt)
}

// TestRemainingLife: the adversarial case first. A hull on hold (or
// withdrawn) whose damage still carries a figure, as if the ledger had
// not voided it, must print VOID and never the figure; a voided life
// prints its reason; beyond the horizon prints "more than N"; an
// estimate prints both projections with what governs.
func TestRemainingLife(t *testing.T) {
	for _, tc := range []struct {
		name, status string
		dmg          ledger.Damages
		want, bad    []string
	}{
		{name: "hold with a figure left in", status: "hold",
			dmg:  ledger.Damages{RemainingDives: i64(512), RemainingAtRecentMean: i64(512), RemainingAtDesignDive: i64(700), RemainingStatus: "estimated", RemainingBasis: "recent_mean"},
			want: []string{"VOID: fatigue projection void while the hull is hold"}, bad: []string{"512", "700"}},
		{name: "withdrawn", status: "withdrawn",
			dmg:  ledger.Damages{RemainingDives: i64(90), RemainingStatus: "estimated"},
			want: []string{"VOID"}, bad: []string{"90 dives"}},
		{name: "void by the ledger on watch", status: "watch",
			dmg:  ledger.Damages{RemainingStatus: statusLifeVoid, RemainingReason: "fatigue projection void while evidence of damage is open: a flag of evidence of damage is open (felicity-below-limit)"},
			want: []string{"VOID: fatigue projection void while evidence of damage is open: a flag of evidence of damage is open (felicity-below-limit)"}, bad: []string{"dives ("}},
		{name: "beyond the horizon", status: "fit",
			dmg: ledger.Damages{RemainingDives: i64(10000), RemainingMoreThan: true, RemainingStatus: "beyond_horizon", RemainingBasis: "design_dive",
				RemainingAtRecentMean: i64(10000), RemainingAtDesignDive: i64(10000), RemainingAtRecentMeanMoreThan: true, RemainingAtDesignDiveMoreThan: true, LimitRatio: 1, DesignDive: "4000 m, 120 min at depth"},
			want: []string{"more than 10000 dives (governed by the damage of the design dive)", "At the recent mean more than 10000 dives", "At the design dive more than 10000 dives (4000 m, 120 min at depth)"},
			bad:  []string{"VOID"}},
		{name: "estimated", status: "watch",
			dmg: ledger.Damages{RemainingDives: i64(412), RemainingStatus: "estimated", RemainingBasis: "recent_mean",
				RemainingAtRecentMean: i64(412), RemainingAtDesignDive: i64(980), LimitRatio: 1},
			want: []string{"412 dives (governed by the mean damage per dive of the recent dives)", "At the recent mean 412 dives", "At the design dive 980 dives", "Projected to 100.00 % of the allowable"},
			bad:  []string{"more than", "VOID"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := fixture(t)
			d := tc.dmg
			d.Governing, d.GoverningRatio, d.Components = "cylinder-wall", 0.12, m.Hulls[0].Damage.Components
			m.Hulls[0].Status, m.Hulls[0].Damage = tc.status, &d
			r, err := RenderHullReport(m)
			if err != nil {
				t.Fatal(err)
			}
			text := firstPage(t, r.PDF)
			for _, w := range tc.want {
				if !strings.Contains(text, w) {
					t.Errorf("page 1 lacks %q", w)
				}
			}
			for _, b := range tc.bad {
				if strings.Contains(text, b) {
					t.Errorf("page 1 prints %q", b)
				}
			}
			// The fleet summary says the same.
			m.Kind = KindFleet
			fr, err := RenderFleetReport(m)
			if err != nil {
				t.Fatal(err)
			}
			ft := flat(pdfText(t, fr.PDF))
			if lifeVoid(tc.status, &d) != strings.Contains(ft, "VOID") {
				t.Errorf("fleet summary: void %v, text %q", lifeVoid(tc.status, &d), ft)
			}
			if d.RemainingMoreThan && !strings.Contains(ft, "more than 10000") {
				t.Error("fleet summary lacks \"more than 10000\"")
			}
		})
	}
}

// TestImplosionOnFirstPage: the implosion figures, the caution and the
// assumptions are stated under the key figures on the first page's flow,
// and a hull whose implosion could not be estimated says why.
func TestImplosionOnFirstPage(t *testing.T) {
	m := fixture(t)
	ct := 4.2
	m.Hulls[0].Implosion = &ImplosionView{InternalVolumeM3: 4.8, PressureMPa: 40.82, DepthM: 4000, EnergyMJ: 197, PVEnergyMJ: 196, WaterElasticMJ: 1.6,
		TNTEquivalentKg: 47.1, CollapseTimeMS: &ct, EquivalentSphereRadiusM: 1.05, BulkModulusGPa: 2.44, EndClosure: "hemispherical",
		Assumptions: []string{"order of magnitude only"}}
	m.Hulls[0].Reasons = nil // a short first page: everything fits
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := firstPage(t, r.PDF)
	for _, w := range []string{"Implosion hazard at the rated depth", "40.82 MPa (rated depth 4000 m", "197 MJ, about 47.1 kg of TNT",
		"4.8 m³ with hemispherical end closures", "about 4.2 ms", flat(ImplosionCaution), "order of magnitude only"} {
		if !strings.Contains(text, w) {
			t.Errorf("page 1 lacks %q", w)
		}
	}
	m.Hulls[0].Implosion, m.Hulls[0].ImplosionReason = nil, "not stated: shape \"torus\" unknown"
	r, err = RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	if text := firstPage(t, r.PDF); !strings.Contains(text, "Implosion energy not stated: shape \"torus\" unknown") || strings.Contains(text, " MJ") {
		t.Errorf("implosion not stated: %q", text)
	}
}

// TestProofAndVoidDives: a proof test logged as a dive is listed as a
// proof test, never as a dive beyond the rated depth (even if a flag says
// beyond); a void dive is marked VOID and is neither the highest
// pressure nor the deepest dive drawn.
func TestProofAndVoidDives(t *testing.T) {
	m := fixture(t)
	hp := &m.Hulls[0]
	hp.Dives[0].ProofTest, hp.Dives[0].BeyondRated, hp.Dives[0].MaxDepthM = true, true, 4900
	hp.Dives[2].Voided, hp.Dives[2].MaxPressureMPa = true, 80
	hp.ProofTestDives, hp.VoidDives = 1, 1
	if h := highest(hp.Dives, hp.Maintenance); h == nil || h.PressureMPa != 50.5 || h.Source != "proof test" {
		t.Errorf("highest %+v: a void dive at 80 MPa must not count", h)
	}
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := flat(pdfText(t, r.PDF))
	for _, w := range []string{"proof test", "VOID: not counted", "1 VOID, left out of the damage, the evidence and the status", "of which 1 proof test logged with its samples"} {
		if !strings.Contains(text, w) {
			t.Errorf("report lacks %q", w)
		}
	}
	if strings.Contains(text, "beyond rated depth") {
		t.Error("a proof test is listed as a dive beyond the rated depth")
	}
	if n := diveNote(ledger.Dive{ProofTest: true, BeyondRated: true, Voided: true}); n != "VOID: not counted; proof test" {
		t.Errorf("note %q", n)
	}
}

// TestDiveSheetEvidence: the dive sheet states the reference pressure
// with its source, per-channel figures (a figure missing for too few hits
// apart from one not evaluated), gauge problems, missing evidence and the
// data-quality findings; a void proof test is marked as both and its
// damage is said not to count.
func TestDiveSheetEvidence(t *testing.T) {
	hm := fixture(t)
	dv := hm.Hulls[0].Dives[1]
	dv.ProofTest, dv.Voided = true, true
	dv.Void = &ledger.Void{Reason: "logged on the wrong hull", Actor: "M. Ferreira", RecordedAt: hm.GeneratedAt}
	fr, onset, hi := 0.93, 29.0, 0.4
	m := &Model{Kind: KindDive, Subject: dv.ID.String(), GeneratedAt: hm.GeneratedAt, Chains: hm.Chains, Basis: hm.Basis,
		Hulls: []HullPart{{Spec: hm.Hulls[0].Spec, Status: "hold", Damage: hm.Hulls[0].Damage}},
		Dive: &DivePart{Dive: &dv, Load: &ledger.DiveLoad{Damage: map[string]ledger.DiveComponentDamage{"cylinder-wall": {Cyclic: 1e-4, Basis: "lame", Curve: "cfrp-illustrative"}}},
			Evidence: &ledger.Evidence{Evaluated: true, PeakMPa: 32.2, PreviousMaxMPa: 50.5, ReferenceSource: "proof test of 2026-02-12",
				AE:            &ledger.AEEvidence{Hits: 44, OnsetMPa: &onset, FelicityRatio: &fr, FelicityReason: "onset below the previous maximum"},
				GaugeProblems: map[string]string{"hoop2": "constant over the dive"}, MissingGauges: []string{"axial1"},
				DataQuality: []ledger.Finding{{Code: "gap_at_depth", Detail: "no sample for 600 s at 31 MPa"}}},
			Flags: []ledger.Flag{}}}
	m.Dive.Channels = []ChannelView{{Channel: 1, Hits: 44, HistoricIndex: &hi, Present: true, Checked: true},
		{Channel: 2, Hits: 3, Present: true, SeverityTooFew: true, HistoricIndexTooFew: true},
		{Channel: 3, Present: false}}
	r, err := RenderDiveReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := flat(pdfText(t, r.PDF))
	for _, w := range []string{"Proof-test sheet", "VOID: this dive is left out of the damage, the evidence and the status. Reason: logged on the wrong hull (decided by M. Ferreira",
		"proof test logged with its samples; VOID", "a proof test, judged as one", "Damage computed (NOT counted: the dive is void)",
		"50.5 MPa: proof test of 2026-02-12", "present, sensor check passed", "- (too few hits)", "not evaluated", "ABSENT: nothing recorded on this dive",
		"hoop2 doubtful data: constant over the dive", "axial1 MISSING: no column in this dive's file", "gap at depth no sample for 600 s at 31 MPa"} {
		if !strings.Contains(text, w) {
			t.Errorf("dive sheet lacks %q", w)
		}
	}
	if strings.Contains(text, "BEYOND THE RATED DEPTH") || strings.Contains(text, "Damage added") {
		t.Error("a void proof test is shown as a counted dive or beyond the rated depth")
	}
}

// TestHitPoints: the hits are counted from the surface to the peak only;
// a sensor check under load counts as a hit (the safe side), one at the
// surface does not; the pressure is the profile's at each hit.
func TestHitPoints(t *testing.T) {
	prof := &ledger.Profile{TimeS: []float64{0, 100, 200, 300, 400}, PressureMPa: []float64{0, 10, 20, 10, 0}}
	hits := []evidence.Hit{{TimeS: 150}, {TimeS: 50}, {TimeS: 250}, {TimeS: 200}}
	checks := []evidence.SensorCheck{{TimeS: 0.5, Kind: "lead_break"}, {TimeS: 120, Kind: "pulse"}}
	got := hitPoints(prof, hits, checks, 0.1)
	want := []HitPoint{{5, 1}, {12, 2}, {15, 3}, {20, 4}}
	if len(got) != len(want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for i := range want {
		if d := got[i].PressureMPa - want[i].PressureMPa; d > 1e-9 || d < -1e-9 || got[i].Cumulative != want[i].Cumulative {
			t.Errorf("point %d: got %+v, want %+v", i, got[i], want[i])
		}
	}
	if n := len(hitPoints(&ledger.Profile{}, hits, nil, 0.1)); n != 0 {
		t.Errorf("no profile: %d points", n)
	}
	// A long series is thinned, its total kept.
	many := make([]evidence.Hit, 5000)
	for i := range many {
		many[i] = evidence.Hit{TimeS: float64(i) / 25}
	}
	th := hitPoints(prof, many, nil, 0.1)
	if len(th) > maxHitPoints+1 || th[len(th)-1].Cumulative != 5000 {
		t.Errorf("thinned to %d points ending at %v", len(th), th[len(th)-1])
	}
}

// TestFelicityDivesCharts: the hull report draws a chart per Felicity
// dive with its reference and says how many older ones it left out; a
// Felicity dive without hits is named, not skipped silently.
func TestFelicityDivesCharts(t *testing.T) {
	m := fixture(t)
	hp := &m.Hulls[0]
	hp.FelicityDives[0].Level, hp.FelicityDives[0].ReferenceSource = "hold", "proof test of 2026-02-12"
	hp.FelicityDives = append(hp.FelicityDives, FelicityDive{Dive: uuid.New().String(), Start: time.Date(2026, 3, 13, 0, 0, 0, 0, time.UTC), Hits: []HitPoint{},
		Reason: "no acoustic-emission data for this dive: Felicity ratio not evaluated"})
	hp.FelicityDivesOmitted = 3
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := flat(pdfText(t, r.PDF))
	for _, w := range []string{"Felicity dives: cumulative hits against pressure", "The 3 older such dives are not drawn",
		"Flag raised: hold. Reference line: 31.2 MPa, proof test of 2026-02-12.", "of 2026-03-13: Felicity ratio -; no hits on record to draw. no acoustic-emission data"} {
		if !strings.Contains(text, w) {
			t.Errorf("report lacks %q", w)
		}
	}
}

// TestCurveEnvironment: a curve whose details are not known says so; a
// seawater curve says which environment. (That the ledger's basis fills
// every curve's environment is checked in TestHullReport.)
func TestCurveEnvironment(t *testing.T) {
	if s := curveDescription(CurveInfo{Name: "own"}); !strings.Contains(s, "not stated in the ledger's basis") {
		t.Errorf("unknown curve: %q", s)
	}
	if s := curveDescription(CurveInfo{Kind: "S-N", Material: "Ti-6Al-4V", Environment: "in seawater, free corrosion"}); !strings.Contains(s, "in seawater, free corrosion") {
		t.Errorf("seawater curve: %q", s)
	}
}

// TestCautionOnFirstPage: the adversarial case is a hull with many open
// flags, whose reasons alone fill the first page: the caution is still
// printed in full on page 1, where a reader starts (it used to follow the
// key figures and the implosion hazard, and a long first page pushed it
// to page 2).
func TestCautionOnFirstPage(t *testing.T) {
	m := fixture(t)
	r0 := m.Hulls[0].Reasons[0]
	for i := 0; i < 80; i++ {
		r := r0
		r.Code = fmt.Sprintf("rule-%d", i+1) // distinct rules: not collapsed into one line
		r.Text = fmt.Sprintf("open flag %d: %s", i+1, r0.Text)
		m.Hulls[0].Reasons = append(m.Hulls[0].Reasons, r)
	}
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := firstPage(t, r.PDF)
	if !strings.Contains(text, flat(Caution)) {
		t.Errorf("page 1 lacks the caution in full: %q", text)
	}
	if !strings.Contains(text, "open flag 1:") {
		t.Errorf("page 1 lacks the first reason: %q", text)
	}
	if strings.Contains(text, "open flag 80:") {
		t.Fatal("the fixture's reasons fit on page 1: the case does not test a long first page")
	}
	// The fleet summary of a fleet whose rows fill page 1 and more.
	h0 := m.Hulls[0]
	h0.Reasons = h0.Reasons[:1]
	m.Hulls = nil
	for i := 0; i < 120; i++ {
		h := h0
		sp := *h0.Spec
		sp.Serial = fmt.Sprintf("CSC-T-%03d", i+1)
		h.Spec = &sp
		m.Hulls = append(m.Hulls, h)
	}
	m.Kind = KindFleet
	fr, err := RenderFleetReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text = firstPage(t, fr.PDF)
	if !strings.Contains(text, flat(Caution)) {
		t.Errorf("the fleet summary's page 1 lacks the caution in full: %q", text)
	}
	if strings.Contains(text, "CSC-T-120") {
		t.Fatal("120 hulls fit on page 1: the case does not test a long first page")
	}
	// A dive sheet of a void dive whose reason runs to pages (a void's
	// reason has no length limit).
	hm := fixture(t)
	dv := hm.Hulls[0].Dives[2]
	dv.Voided = true
	dv.Void = &ledger.Void{Reason: strings.Repeat("logged to the wrong hull by mistake; ", 200) + "END OF REASON", Actor: "maint", RecordedAt: hm.GeneratedAt}
	dm := &Model{Kind: KindDive, Subject: dv.ID.String(), GeneratedAt: hm.GeneratedAt, Chains: hm.Chains, Basis: hm.Basis,
		Hulls: []HullPart{{Spec: hm.Hulls[0].Spec, Status: "watch", Damage: hm.Hulls[0].Damage}},
		Dive:  &DivePart{Dive: &dv, Load: &ledger.DiveLoad{Damage: map[string]ledger.DiveComponentDamage{"cylinder-wall": {Cyclic: 1e-4, Basis: "lame", Curve: "cfrp-illustrative"}}}}}
	dr, err := RenderDiveReport(dm)
	if err != nil {
		t.Fatal(err)
	}
	text = firstPage(t, dr.PDF)
	if !strings.Contains(text, flat(Caution)) {
		t.Errorf("the dive sheet's page 1 lacks the caution in full: %q", text)
	}
	if strings.Contains(text, "END OF REASON") {
		t.Fatal("the void's reason fits on page 1: the case does not test a long first page")
	}
}
