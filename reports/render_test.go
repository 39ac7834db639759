package reports

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/configs"
	"hulltally/fatigue/fitness"
	"hulltally/ledger"
	"hulltally/ledger/spec"
)

// finding is text with symbols the old built-in font dropped.
const finding = "Δ=0 µm, ≥ 2 µε"

// fixture is a demo-like hull report model, built without a ledger: a
// hull with a Chinese name, damage carried over, a Lamé transfer, a
// gauge transfer that fell back, a proof test above every dive and the
// optional sections filled.
func fixture(t *testing.T) *Model {
	t.Helper()
	at := time.Date(2026, 3, 14, 12, 0, 0, 0, time.UTC)
	f := 1.2
	sp := &spec.Hull{Serial: "CSC-SH-01", Name: "深海一号", MaterialSystem: "carbon/epoxy filament-wound", Shape: "cylinder",
		InnerRadiusM: 0.8, WallThicknessM: 0.12, LengthM: 2.4, RatedDepthM: 4000, DesignPressureMPa: 40.4, ProofPressureMPa: 50.5, CollapsePressureMPa: 75,
		Components: []spec.Component{
			{Name: "cylinder-wall", Kind: "laminate", Transfer: spec.Transfer{Basis: "gauge"}, Curve: "cfrp-illustrative",
				PriorDamage: &spec.Prior{Cyclic: 0.01, Sustained: 0.002, Source: "service log 2019–2024, sheet 7"}},
			{Name: "end-ring", Kind: "metal", Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: &f, Source: "FEA report R-12"}, Curve: "dnv-rp-c203-d-air"},
		}}
	rem := int64(412)
	dmg := &ledger.Damages{DiveCount: 3, Governing: "cylinder-wall", GoverningRatio: 0.12, RemainingDives: &rem, RemainingReason: "at the median rate",
		Components: []ledger.ComponentDamage{
			{Name: "cylinder-wall", CyclicDamage: 0.02, SustainedDamage: 0.004, Allowable: 0.3, Ratio: 0.12, Basis: "lame", Factor: -4.1, Curve: "cfrp-illustrative",
				Prior: &ledger.PriorDamage{Cyclic: 0.01, Sustained: 0.002, Source: "service log 2019–2024, sheet 7"}},
			{Name: "end-ring", CyclicDamage: 0.001, SustainedDamage: 0, Allowable: 0.3, Ratio: 0.003, Basis: "designer", Factor: 1.2, Curve: "dnv-rp-c203-d-air"},
		}}
	var dives []ledger.Dive
	for i := 0; i < 3; i++ {
		dives = append(dives, ledger.Dive{ID: uuid.MustParse("00000000-0000-4000-8000-00000000000" + string(rune('1'+i))), Hull: sp.Serial,
			Start: at.AddDate(0, 0, -10+i), DurationS: 3 * 3600, MaxDepthM: 3000 + 100*float64(i), MaxPressureMPa: 30.2 + float64(i), AEHits: 40})
	}
	fr1, fr2 := 1.02, 0.93
	cw := 118.0
	onset := 29.0
	m := &Model{Kind: KindHull, Subject: sp.Serial, GeneratedAt: at, Chains: map[string]Chain{sp.Serial: {Head: "ab", Records: 9}}}
	hp := HullPart{Spec: sp, Revision: 1, Status: "watch", Damage: dmg,
		Reasons:  []ledger.Reason{{Kind: "flag", Code: "compliance-change", State: "watch", Text: finding + " [rule compliance-change]"}},
		CumRatio: []float64{0.05, 0.08, 0.12}, Dives: dives, Felicity: []*float64{nil, &fr1, &fr2},
		Compliance: map[string][]*float64{"hoop1": {&cw, &cw, &cw}}, Baseline: map[string]float64{"hoop1": 118},
		Maintenance: &ledger.Maintenance{
			Inspections: []ledger.Inspection{{At: at.AddDate(0, 0, -20), Method: "visual", Findings: finding, Result: "pass", Actor: "王工程师"}},
			ProofTests:  []ledger.ProofTest{{At: at.AddDate(0, 0, -30), PressureMPa: 50.5, Result: "pass", Actor: "yard"}},
		},
		CycleRanges: []float64{30, 31, 32}, CycleCounts: []float64{1, 1, 1},
		Implosion: &ImplosionView{InternalVolumeM3: 4.8, PressureMPa: 40.4, EnergyMJ: 97, TNTEquivalentKg: 23, Assumptions: []string{"adiabatic collapse of the air volume, common practice"}},
		FelicityDives: []FelicityDive{{Dive: dives[2].ID.String(), Start: dives[2].Start, Ratio: &fr2, PreviousMaxMPa: 31.2, OnsetMPa: &onset,
			Hits: []HitPoint{{10, 0}, {20, 2}, {29, 8}, {31, 30}, {32.2, 44}}}},
	}
	hp.Highest = highest(hp.Dives, hp.Maintenance)
	hp.Transfer = transferViews(sp, dmg)
	m.Hulls = []HullPart{hp}
	b := &ledger.BasisInfo{DFF: 1, MeanStress: "goodman", Combine: "add", RulesSource: "configs/rules.yaml (shipped)",
		Rules: []ledger.RuleBasis{
			{ID: "damage-against-allowable", Thresholds: "watch ≥ 0.4; hold ≥ 0.9", Source: "operator's choice", Measure: fitness.MeasureDamageRatio,
				Watch: &fitness.Threshold{When: fitness.AtOrAbove, At: 0.4}, Hold: &fitness.Threshold{When: fitness.AtOrAbove, At: 0.9}},
			{ID: "felicity-below-limit", Thresholds: "watch < 1; hold ≤ 0.95", Source: "from memory", Measure: fitness.MeasureFelicityRatio,
				Watch: &fitness.Threshold{When: fitness.Below, At: 1}, Hold: &fitness.Threshold{When: fitness.AtOrBelow, At: 0.95}},
		}}
	m.Basis = Basis{DFF: b.DFF, MeanStress: b.MeanStress, Combine: b.Combine, RulesFrom: b.RulesSource, Limits: ruleLimits(b),
		Curves: []CurveInfo{{Name: "cfrp-illustrative", Source: "illustrative", Basis: "mean", Illustrative: true, Kind: "S-N", Material: "carbon/epoxy", Mode: "compression-compression", Environment: "immersed"}}}
	for _, r := range b.Rules {
		m.Basis.Rules = append(m.Basis.Rules, RuleInfo{ID: r.ID, Thresholds: r.Thresholds, Source: r.Source})
	}
	return m
}

func pdfText(t *testing.T, b []byte) string {
	t.Helper()
	bin, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("SKIP PDF text checks: pdftotext is not installed (Debian: apt-get install poppler-utils; .ci/run installs it)")
	}
	path := filepath.Join(t.TempDir(), "r.pdf")
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("HULLTALLY_REPORT_DUMP"); dir != "" {
		_ = os.WriteFile(filepath.Join(dir, t.Name()+".pdf"), b, 0o644)
	}
	out, err := exec.Command(bin, "-layout", path, "-").Output()
	if err != nil {
		t.Fatalf("pdftotext: %v", err)
	}
	return string(out)
}

func flat(s string) string { return strings.Join(strings.Fields(s), " ") }

func cjkFallback(t *testing.T) {
	t.Helper()
	if _, err := os.Stat(FallbackFontPaths()[0]); err != nil {
		t.Skipf("SKIP Chinese text check: %s is not installed (Debian: apt-get install fonts-droid-fallback; .ci/run installs it)", FallbackFontPaths()[0])
	}
}

// TestEveryCharacterPrints: the symbols and a Chinese hull name come back
// from the PDF's text as written, and nothing is reported unprintable.
func TestEveryCharacterPrints(t *testing.T) {
	cjkFallback(t)
	r, err := RenderHullReport(fixture(t))
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Unprintable) != 0 || r.Warning() != "" {
		t.Fatalf("unprintable %q: %s", r.Unprintable, r.Warning())
	}
	text := flat(pdfText(t, r.PDF))
	for _, want := range []string{
		"深海一号", finding, "王工程师", "2019–2024",
		// Highest pressure: the proof test, not the deepest dive.
		"50.500 MPa, proof test of 2026-02-12",
		// Damage carried over, with its source.
		"Damage carried over from before the ledger", "1.000e-02", "2.000e-03",
		// The Lamé caveat and the fall-back from the gauge basis.
		"a laminate is not isotropic", "lame (preferred:", "fell back to \"lame\"",
		// Curves: material, mode and environment.
		"carbon/epoxy", "mode", "compression-compression", "immersed",
		// Optional sections present when filled.
		"Implosion hazard at the rated depth", "about 23 kg of TNT", "m³",
		// Limit lines from the rules in force.
		"rule damage-against-allowable in force", "rule felicity-below-limit in force",
		"watch ≥ 0.4; hold ≥ 0.9",
		"page 1 of",
	} {
		if !strings.Contains(text, flat(want)) {
			t.Errorf("report text lacks %q", want)
		}
	}
	for _, bad := range []string{".=0", " ue ", ">=", "[U+"} {
		if strings.Contains(text, bad) {
			t.Errorf("report text has %q: a symbol was dropped or spelled out", bad)
		}
	}
}

// TestUnprintableIsReported: a character no font has (private use) is
// printed as its code point and reported, on the page and to the caller;
// never dropped silently.
func TestUnprintableIsReported(t *testing.T) {
	m := fixture(t)
	m.Hulls[0].Spec.Name = "Hull \uE000 one"
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Unprintable) != 1 || r.Unprintable[0] != 0xE000 {
		t.Fatalf("unprintable = %q, want [U+E000]", r.Unprintable)
	}
	if !strings.Contains(r.Warning(), "U+E000") {
		t.Errorf("warning %q does not name U+E000", r.Warning())
	}
	text := flat(pdfText(t, r.PDF))
	for _, want := range []string{"Hull [U+E000] one", "could not be printed", "U+E000"} {
		if !strings.Contains(text, want) {
			t.Errorf("report text lacks %q", want)
		}
	}
	// The notice is on the first page.
	if first := strings.SplitN(text, "\f", 2)[0]; !strings.Contains(first, "could not be printed") {
		t.Error("the unprintable notice is not on the first page")
	}
}

// TestUnprintableWithoutFallbacks: with no fallback font at all, the
// Chinese name is reported unprintable rather than lost.
func TestUnprintableWithoutFallbacks(t *testing.T) {
	ts, err := newTypeset(nil)
	if err != nil {
		t.Fatal(err)
	}
	gs := ts.shape("深海 Δ", styleRegular)
	var b strings.Builder
	for _, g := range gs {
		b.WriteString(g.text)
	}
	if got, want := b.String(), "[U+6DF1][U+6D77] Δ"; got != want {
		t.Errorf("shaped %q, want %q", got, want)
	}
	if u := ts.unprintable(); len(u) != 2 || u[0] != 0x6D77 || u[1] != 0x6DF1 {
		t.Errorf("unprintable %q", u)
	}
	// Beyond the Basic Multilingual Plane the PDF library reads no glyph.
	ts.shape("\U0001F600", styleBold)
	if u := ts.unprintable(); len(u) != 3 || u[2] != 0x1F600 {
		t.Errorf("unprintable %q", u)
	}
}

// TestRuleLimits: the chart lines come from the rule set in force, found
// by measure with its thresholds as numbers; a rule set with no rule on a
// measure draws no line for it rather than a made-up one.
func TestRuleLimits(t *testing.T) {
	rs, err := fitness.ParseRules(configs.RulesYAML)
	if err != nil {
		t.Fatal(err)
	}
	b := &ledger.BasisInfo{RulesSource: "configs/rules.yaml (shipped)"}
	for _, r := range rs.Rules {
		b.Rules = append(b.Rules, ledger.RuleBasis{ID: r.ID, Measure: r.Measure, Watch: r.Watch, Hold: r.Hold})
	}
	l := ruleLimits(b)
	if l.Damage == nil || l.Damage.Hold == nil || l.Damage.Hold.At != 1.0 || l.Damage.Watch == nil || l.Damage.Watch.At != 0.5 {
		t.Errorf("damage limits %+v", l.Damage)
	}
	if l.Felicity == nil || l.Felicity.Hold == nil || l.Felicity.Hold.At != 0.95 || l.Felicity.Hold.When != fitness.AtOrBelow {
		t.Errorf("Felicity limits %+v", l.Felicity)
	}
	// An operator's own damage rule at 0.7 is drawn at 0.7, not at the
	// shipped 1.0.
	own := ruleLimits(&ledger.BasisInfo{Rules: []ledger.RuleBasis{{ID: "my-damage", Measure: fitness.MeasureDamageRatio,
		Hold: &fitness.Threshold{When: fitness.AtOrAbove, At: 0.7}}}})
	if own.Damage == nil || own.Damage.Hold == nil || own.Damage.Hold.At != 0.7 || own.Felicity != nil {
		t.Errorf("own rule set gave limits %+v", own)
	}
	if none := ruleLimits(&ledger.BasisInfo{}); none.Damage != nil || none.Felicity != nil {
		t.Errorf("no rules gave limits %+v", none)
	}
}

// TestHighestPressure: a proof test above every dive is the highest, and
// says so; a tie goes to the proof test.
func TestHighestPressure(t *testing.T) {
	at := time.Date(2026, 1, 2, 0, 0, 0, 0, time.UTC)
	dives := []ledger.Dive{{ID: uuid.New(), Start: at, MaxPressureMPa: 40, MaxDepthM: 3950}}
	if h := highest(dives, &ledger.Maintenance{}); h.Source != "dive" || h.PressureMPa != 40 {
		t.Errorf("dives only: %+v", h)
	}
	h := highest(dives, &ledger.Maintenance{ProofTests: []ledger.ProofTest{{At: at.AddDate(0, 0, -5), PressureMPa: 40}}})
	if h.Source != "proof test" || !strings.Contains(highestText(h), "proof test of 2025-12-28") {
		t.Errorf("tie: %+v %q", h, highestText(h))
	}
	if highest(nil, nil) != nil || highestText(nil) == "" {
		t.Error("no record: want nil and a statement")
	}
}

// TestTransferCaveats: the Lamé default carries its caveat; a preferred
// basis that fell back says so; a designer factor in force carries none.
func TestTransferCaveats(t *testing.T) {
	m := fixture(t)
	tv := m.Hulls[0].Transfer
	if len(tv) != 2 {
		t.Fatalf("%d transfer views", len(tv))
	}
	if !strings.Contains(tv[0].Caveat, "not isotropic") || !strings.Contains(tv[0].Caveat, "fell back") {
		t.Errorf("wall caveat %q", tv[0].Caveat)
	}
	if tv[1].Caveat != "" || tv[1].Source != "FEA report R-12" {
		t.Errorf("ring: %+v", tv[1])
	}
}

// TestOptionalSectionsOmitted: without the optional fields the sections
// are not printed at all.
func TestOptionalSectionsOmitted(t *testing.T) {
	cjkFallback(t)
	m := fixture(t)
	m.Hulls[0].Implosion = nil
	m.Hulls[0].FelicityDives = nil
	r, err := RenderHullReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := flat(pdfText(t, r.PDF))
	for _, bad := range []string{"Implosion hazard", "Implosion energy", "Cumulative acoustic-emission hits", "Felicity dives"} {
		if strings.Contains(text, bad) {
			t.Errorf("report prints %q without its data", bad)
		}
	}
}

// TestDiveSheetOptional: the per-channel table and the hits-against-
// pressure chart print when their fields are filled, an absent channel
// is said to be absent, and a missing figure prints "-", never a number.
func TestDiveSheetOptional(t *testing.T) {
	hm := fixture(t)
	dv := hm.Hulls[0].Dives[2]
	fr, onset, hi := 0.93, 29.0, 0.4
	m := &Model{Kind: KindDive, Subject: dv.ID.String(), GeneratedAt: hm.GeneratedAt, Chains: hm.Chains, Basis: hm.Basis,
		Hulls: []HullPart{{Spec: hm.Hulls[0].Spec, Status: "watch", Damage: hm.Hulls[0].Damage}},
		Dive: &DivePart{Dive: &dv, Load: &ledger.DiveLoad{Damage: map[string]ledger.DiveComponentDamage{"cylinder-wall": {Cyclic: 1e-4, Basis: "lame", Curve: "cfrp-illustrative"}}},
			Evidence: &ledger.Evidence{Evaluated: true, PeakMPa: 32.2, PreviousMaxMPa: 31.2,
				AE: &ledger.AEEvidence{Hits: 44, OnsetMPa: &onset, FelicityRatio: &fr, FelicityReason: "onset below the previous maximum"}},
			Channels: []ChannelView{{Channel: 1, Hits: 44, HistoricIndex: &hi, HighAmplitudeHits: 3, TotalCounts: 1200, Present: true},
				{Channel: 2, Present: false, Reason: "no hits recorded"}},
			FelicityHits: []HitPoint{{PressureMPa: 20, Cumulative: 2}, {PressureMPa: 29, Cumulative: 8}, {PressureMPa: 32, Cumulative: 44}}}}
	r, err := RenderDiveReport(m)
	if err != nil {
		t.Fatal(err)
	}
	text := flat(pdfText(t, r.PDF))
	for _, want := range []string{"Acoustic emission per channel", "ABSENT: no hits recorded", "0.400", "of 2026-03-06: Felicity ratio 0.930"} {
		if !strings.Contains(text, want) {
			t.Errorf("dive sheet lacks %q", want)
		}
	}
	m.Dive.Channels, m.Dive.FelicityHits = nil, nil
	r, err = RenderDiveReport(m)
	if err != nil {
		t.Fatal(err)
	}
	if text := flat(pdfText(t, r.PDF)); strings.Contains(text, "per channel") || strings.Contains(text, "of 2026-03-06: Felicity ratio") {
		t.Error("optional dive sections printed without their data")
	}
}
