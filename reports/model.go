package reports

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"regexp"
	"strings"
	"time"

	"github.com/google/uuid"

	"hulltally/fatigue/fitness"
	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/reports/view"
)

// Kinds of report.
const (
	KindHull  = "hull"
	KindDive  = "dive"
	KindFleet = "fleet"
)

// Model is the content of a report: everything it shows, gathered from
// the ledger at one moment. Its canonical JSON, with the audit-chain heads,
// is what the fingerprint covers.
type Model struct {
	Kind        string    `json:"kind"`
	Subject     string    `json:"subject"`
	GeneratedAt time.Time `json:"-"`
	// Chains are the audit-chain heads (hash and length) of the hulls the
	// report draws on, by serial.
	Chains map[string]Chain `json:"chains"`
	Hulls  []HullPart       `json:"hulls"`
	Dive   *DivePart        `json:"dive,omitempty"`
	Basis  Basis            `json:"basis"`
}

// Chain is an audit-chain head.
type Chain struct {
	Head    string `json:"head"`
	Records int64  `json:"records"`
}

// HullPart is one hull's content.
type HullPart struct {
	Spec        *spec.Hull            `json:"spec"`
	Revision    int32                 `json:"revision"`
	Status      string                `json:"status"`
	Reasons     []ledger.Reason       `json:"reasons"`
	Damage      *ledger.Damages       `json:"damage"`
	CumRatio    []float64             `json:"cumulative_ratio"`
	Dives       []ledger.Dive         `json:"dives"`
	Felicity    []*float64            `json:"felicity"`
	Compliance  map[string][]*float64 `json:"compliance"`
	Baseline    map[string]float64    `json:"baseline"`
	Maintenance *ledger.Maintenance   `json:"maintenance"`
	// CycleRanges and CycleCounts are every pressure cycle of the hull.
	CycleRanges []float64 `json:"cycle_ranges,omitempty"`
	CycleCounts []float64 `json:"cycle_counts,omitempty"`
	// Deepest is the deepest of the last 10 dives, whose profile is drawn.
	Deepest *ledger.Dive `json:"deepest_recent,omitempty"`
	// Highest is the highest pressure the hull ever saw, dives and proof
	// tests alike; nil with no record.
	Highest *HighestPressure `json:"highest_pressure,omitempty"`
	// Transfer is the load-transfer basis of each component, with the
	// caveat that applies to it.
	Transfer []TransferView `json:"transfer,omitempty"`
	// Implosion is the implosion-energy statement at the rated depth.
	// Nil omits the figures; ImplosionReason then says why they are not
	// stated (empty when the section was not asked for, as in the fleet
	// summary).
	Implosion       *ImplosionView `json:"implosion,omitempty"`
	ImplosionReason string         `json:"implosion_reason,omitempty"`
	// FelicityDives are the dives (not void) that raised a flag of the
	// Felicity rule or whose Felicity ratio is below 1, newest last, each
	// with its cumulative acoustic-emission hits against pressure, drawn
	// one chart per dive; at most maxFelicityCharts, the older ones
	// counted in FelicityDivesOmitted.
	FelicityDives        []FelicityDive `json:"felicity_dives,omitempty"`
	FelicityDivesOmitted int            `json:"felicity_dives_omitted,omitempty"`
	// VoidDives and ProofTestDives count the dives on record that are
	// void (left out of every figure) and that record a proof test.
	VoidDives      int             `json:"void_dives,omitempty"`
	ProofTestDives int             `json:"proof_test_dives,omitempty"`
	profile        *ledger.Profile // drawn, covered by the chain head
	flags          []ledger.Flag   // the open flags, to find the Felicity dives
	evs            map[uuid.UUID]*ledger.Evidence
}

// HighestPressure is the highest pressure on record and what reached it.
type HighestPressure struct {
	PressureMPa float64 `json:"pressure_mpa"`
	// DepthM is the depth of a dive; nil for a proof test in a chamber.
	DepthM *float64 `json:"depth_m,omitempty"`
	// Source is "dive" or "proof test".
	Source string    `json:"source"`
	At     time.Time `json:"at"`
	// Dive is the dive's ID (also for a proof test logged as a dive).
	Dive string `json:"dive,omitempty"`
}

// TransferView is one component's load-transfer basis.
type TransferView struct {
	Component string `json:"component"`
	// Preferred is the basis the specification asks for (lame, designer,
	// gauge); Used is the one the assessment in force used.
	Preferred string `json:"preferred"`
	Used      string `json:"used"`
	// FactorMPaPerMPa is the stress per unit gauge pressure used.
	FactorMPaPerMPa float64 `json:"factor_mpa_per_mpa"`
	// Source is where a designer's factor comes from.
	Source string `json:"source,omitempty"`
	// Caveat is printed beside the basis: the isotropic default, or a
	// preferred basis that fell back. Empty when none applies.
	Caveat string `json:"caveat,omitempty"`
}

// ImplosionView is the implosion-energy statement of a hull: the energy
// the sea releases on the hull's collapse at the stated pressure. The
// figures are orders of magnitude for planning safety distances
// (ImplosionCaution).
type ImplosionView struct {
	// InternalVolumeM3 is the hull's internal (air) volume, m³.
	InternalVolumeM3 float64 `json:"internal_volume_m3"`
	// PressureMPa is the ambient (gauge) pressure taken for the collapse,
	// MPa; DepthM the depth it stands for, m (0 when not stated).
	PressureMPa float64 `json:"pressure_mpa"`
	DepthM      float64 `json:"depth_m,omitempty"`
	// EnergyMJ is the energy released, MJ: PVEnergyMJ (pressure times
	// volume) plus WaterElasticMJ (the elastic energy of the compressed
	// water that rushes in), each MJ.
	EnergyMJ       float64 `json:"energy_mj"`
	PVEnergyMJ     float64 `json:"pv_energy_mj,omitempty"`
	WaterElasticMJ float64 `json:"water_elastic_energy_mj,omitempty"`
	// EquivalentSphereRadiusM is the radius of the sphere of the same
	// volume, m; BulkModulusGPa the water's bulk modulus taken, GPa;
	// EndClosure the end closure of a cylinder taken for the volume.
	EquivalentSphereRadiusM float64 `json:"equivalent_sphere_radius_m,omitempty"`
	BulkModulusGPa          float64 `json:"bulk_modulus_gpa,omitempty"`
	EndClosure              string  `json:"end_closure,omitempty"`
	// TNTEquivalentKg is the energy as kilograms of TNT.
	TNTEquivalentKg float64 `json:"tnt_equivalent_kg"`
	// CollapseTimeMS is the estimated collapse time, ms; nil when not
	// estimated.
	CollapseTimeMS *float64 `json:"collapse_time_ms,omitempty"`
	// Assumptions are stated under the figures, one a line.
	Assumptions []string `json:"assumptions"`
}

// FelicityDive is a dive that raised a Felicity flag, with its
// cumulative hits against pressure.
type FelicityDive struct {
	Dive  string    `json:"dive"`
	Start time.Time `json:"start"`
	// Ratio is the Felicity ratio; nil when not evaluated (Reason says
	// why).
	Ratio  *float64 `json:"ratio,omitempty"`
	Reason string   `json:"reason,omitempty"`
	// Level is the level of the Felicity rule's flag the dive raised
	// (watch, hold); empty when it raised none (a ratio below 1 only).
	Level string `json:"level,omitempty"`
	// PreviousMaxMPa is the highest pressure before the dive (the
	// reference of the ratio) and ReferenceSource the record that set it;
	// OnsetMPa the pressure at the onset of significant emission (nil:
	// none).
	PreviousMaxMPa  float64    `json:"previous_max_mpa"`
	ReferenceSource string     `json:"reference_source,omitempty"`
	OnsetMPa        *float64   `json:"onset_mpa,omitempty"`
	Hits            []HitPoint `json:"hits"`
}

// HitPoint is the cumulative number of acoustic-emission hits at a
// pressure, on the way down.
type HitPoint struct {
	PressureMPa float64 `json:"pressure_mpa"`
	Cumulative  float64 `json:"cumulative"`
}

// ChannelView is one acoustic-emission channel's figures for a dive.
type ChannelView struct {
	Channel int `json:"channel"`
	Hits    int `json:"hits"`
	// HistoricIndex and Severity are nil when not evaluated (Reason says
	// why).
	HistoricIndex     *float64 `json:"historic_index,omitempty"`
	Severity          *float64 `json:"severity,omitempty"`
	HighAmplitudeHits int      `json:"high_amplitude_hits"`
	TotalCounts       float64  `json:"total_counts"`
	// HistoricIndexTooFew and SeverityTooFew say a missing figure was
	// left out because the channel had too few hits (no sign of damage);
	// a missing figure without it was not evaluated.
	HistoricIndexTooFew bool `json:"historic_index_too_few_hits,omitempty"`
	SeverityTooFew      bool `json:"severity_too_few_hits,omitempty"`
	// Present is false when the channel recorded nothing on the dive;
	// Checked is true when it passed a sensor check.
	Present bool   `json:"present"`
	Checked bool   `json:"checked,omitempty"`
	Reason  string `json:"reason,omitempty"`
}

// DivePart is the content of a dive sheet.
type DivePart struct {
	Dive     *ledger.Dive     `json:"dive"`
	Load     *ledger.DiveLoad `json:"load"`
	Evidence *ledger.Evidence `json:"evidence"`
	Flags    []ledger.Flag    `json:"flags"`
	// Channels are the per-channel acoustic-emission figures; empty omits
	// the table (a dive without acoustic-emission data).
	Channels []ChannelView `json:"channels,omitempty"`
	// FelicityHits are the dive's cumulative hits against pressure on the
	// way down, drawn when present.
	FelicityHits []HitPoint `json:"felicity_hits,omitempty"`
	profile      *ledger.Profile
}

// Basis is what the figures rest on.
type Basis struct {
	DFF        float64     `json:"design_fatigue_factor"`
	MeanStress string      `json:"mean_stress"`
	Combine    string      `json:"combine"`
	Curves     []CurveInfo `json:"curves"`
	Rules      []RuleInfo  `json:"rules"`
	RulesFrom  string      `json:"rules_source"`
	// Limits are the thresholds of the rules the charts draw.
	Limits        RuleLimits `json:"limits"`
	felicityRules map[string]bool
}

// RuleLimits are the thresholds, from the rule set in force, of the rules
// whose limits the charts draw. A nil member was not identified: the
// chart then draws no rule line and the report says so.
type RuleLimits struct {
	// Damage is the rule on the damage ratio (measure damage_ratio).
	Damage *RuleLimit `json:"damage,omitempty"`
	// Felicity is the rule on the Felicity ratio (measure felicity_ratio).
	Felicity *RuleLimit `json:"felicity,omitempty"`
}

// RuleLimit is a rule's watch and hold thresholds.
type RuleLimit struct {
	Rule  string             `json:"rule"`
	Watch *fitness.Threshold `json:"watch,omitempty"`
	Hold  *fitness.Threshold `json:"hold,omitempty"`
}

// CurveInfo names a curve and its source.
type CurveInfo struct {
	Name, Source, Basis string
	Illustrative        bool
	// Kind is "S-N" or "stress-rupture"; Material, Mode (S-N loading
	// mode), Application and Environment (in words: "in air", "in
	// seawater with cathodic protection", ...) describe the curve when it
	// is a curve of the shipped library; empty when not known.
	Kind        string `json:",omitempty"`
	Material    string `json:",omitempty"`
	Mode        string `json:",omitempty"`
	Application string `json:",omitempty"`
	Environment string `json:",omitempty"`
}

// RuleInfo is a rule with its thresholds and source.
type RuleInfo struct {
	ID, Title, Thresholds, Source string
}

// Fingerprint is the SHA-256 over the report's canonical content
// (including the audit-chain heads), in hex.
func (m *Model) Fingerprint() (string, error) {
	fp, _, err := m.Fingerprints()
	return fp, err
}

// endingRecordedBy is a record's recorded_by at the end of its JSON
// object: inspections, proof tests, decisions, corrections, voids and
// hull revisions (the same as their actor),
// which their JSON gained after reports were first issued. A dive's own
// recorded_by never ends its object, and a JSON string cannot hold an
// unescaped quote, so nothing else matches.
var endingRecordedBy = regexp.MustCompile(`,"recorded_by":"(?:[^"\\]|\\.)*"}`)

// Fingerprints is the report's fingerprint (Fingerprint) and the one the
// same content had in the earlier shape of the records, without the
// recorded_by that ends them, which a report issued before carries
// (earlier is empty when the two are the same). Both are functions of the
// ledger alone, and what the earlier leaves out is in the record's actor
// beside it: accepting either loses nothing.
func (m *Model) Fingerprints() (fp, earlier string, err error) {
	b, err := json.Marshal(m)
	if err != nil {
		return "", "", fmt.Errorf("report content: %w", err)
	}
	sum := func(b []byte) string {
		h := sha256.New()
		h.Write([]byte("hulltally report v1\n"))
		h.Write(b)
		return fmt.Sprintf("%x", h.Sum(nil))
	}
	fp = sum(b)
	if old := endingRecordedBy.ReplaceAll(b, []byte("}")); !bytes.Equal(old, b) {
		earlier = sum(old)
	}
	return fp, earlier, nil
}

// BuildHull gathers a hull report's content at a moment.
func BuildHull(ctx context.Context, l *ledger.Ledger, serial string, at time.Time) (*Model, error) {
	m := &Model{Kind: KindHull, Subject: serial, GeneratedAt: at, Chains: map[string]Chain{}}
	hp, err := hullPart(ctx, l, serial, at, true, m)
	if err != nil {
		return nil, err
	}
	m.Hulls = []HullPart{*hp}
	if err := fillBasis(l, m, []*spec.Hull{hp.Spec}); err != nil {
		return nil, err
	}
	if err := felicityDives(ctx, l, &m.Hulls[0], felicityRuleIDs(m.Basis)); err != nil {
		return nil, err
	}
	return m, nil
}

// BuildFleet gathers a fleet summary's content.
func BuildFleet(ctx context.Context, l *ledger.Ledger, at time.Time) (*Model, error) {
	m := &Model{Kind: KindFleet, Subject: "fleet", GeneratedAt: at, Chains: map[string]Chain{}}
	hs, err := l.Hulls(ctx)
	if err != nil {
		return nil, err
	}
	var specs []*spec.Hull
	for _, s := range hs {
		hp, err := hullPart(ctx, l, s.Serial, at, false, m)
		if err != nil {
			return nil, err
		}
		m.Hulls = append(m.Hulls, *hp)
		specs = append(specs, hp.Spec)
	}
	view.SortByUrgency(m.Hulls, func(h *HullPart) view.Rank {
		return view.Rank{Status: h.Status, Ratio: float64(h.Damage.GoverningRatio), Serial: h.Spec.Serial}
	})
	return m, fillBasis(l, m, specs)
}

// BuildDive gathers a dive sheet's content.
func BuildDive(ctx context.Context, l *ledger.Ledger, id string, at time.Time) (*Model, error) {
	dv, err := view.DiveOf(ctx, l, id)
	if err != nil {
		return nil, err
	}
	if err := dv.WithHull(ctx, l, at); err != nil {
		return nil, err
	}
	d, load, hv := dv.Record, dv.Load, dv.Hull
	h := hv.Record
	m := &Model{Kind: KindDive, Subject: d.ID.String(), GeneratedAt: at, Chains: map[string]Chain{}}
	if err := chain(ctx, l, h, m); err != nil {
		return nil, err
	}
	ev, err := l.EvidenceOf(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	dp := &DivePart{Dive: d, Load: load, Evidence: ev, Flags: dv.Flags}
	if dp.profile, err = l.ProfileOf(ctx, d.ID); err != nil {
		return nil, err
	}
	if ev != nil {
		dp.Channels = channelViews(ev.Channels)
		if ev.AE != nil {
			if dp.FelicityHits, err = diveHits(ctx, l, *d); err != nil {
				return nil, err
			}
			if len(dp.FelicityHits) == 0 {
				dp.FelicityHits = nil
			}
		}
	}
	m.Dive = dp
	m.Hulls = []HullPart{{Spec: h.Spec, Revision: h.Revision, Status: hv.Status(), Reasons: hv.Fitness.Reasons, Damage: hv.Damage}}
	return m, fillBasis(l, m, []*spec.Hull{h.Spec})
}

func chain(ctx context.Context, l *ledger.Ledger, h *ledger.Hull, m *Model) error {
	head, n, err := l.ChainHead(ctx, h.ID)
	if err != nil {
		return fmt.Errorf("chain head of %s: %w", h.Serial, err)
	}
	m.Chains[h.Serial] = Chain{Head: fmt.Sprintf("%x", head), Records: n}
	return nil
}

func hullPart(ctx context.Context, l *ledger.Ledger, serial string, at time.Time, full bool, m *Model) (*HullPart, error) {
	hv, err := view.HullOf(ctx, l, serial, at)
	if err != nil {
		return nil, err
	}
	h, f := hv.Record, hv.Fitness
	if err := chain(ctx, l, h, m); err != nil {
		return nil, err
	}
	hp := &HullPart{Spec: h.Spec, Revision: h.Revision, Status: f.Status, Reasons: f.Reasons, Damage: hv.Damage, flags: f.Flags}
	if !full {
		return hp, nil
	}
	hp.Implosion, hp.ImplosionReason = implosionAtRated(h)
	// Cumulative damage of the governing component, dive by dive.
	gov := f.Damage.Governing
	var prior float64
	for _, c := range h.Spec.Components {
		if c.Name == gov && c.PriorDamage != nil {
			prior = c.PriorDamage.Cyclic + c.PriorDamage.Sustained
		}
	}
	allow := 0.0
	for _, c := range f.Damage.Components {
		if c.Name == gov {
			allow = c.Allowable
		}
	}
	sum := prior
	for _, d := range f.Damage.PerDive {
		x := d.Damage[gov]
		sum += x.Cyclic + x.Sustained
		if allow > 0 {
			hp.CumRatio = append(hp.CumRatio, sum/allow)
		}
	}
	if hp.Dives, err = l.Dives(ctx, serial); err != nil {
		return nil, err
	}
	hp.Compliance = map[string][]*float64{}
	for _, g := range h.Spec.StrainGauges() {
		hp.Compliance[g] = make([]*float64, len(hp.Dives))
	}
	evs, err := l.HullEvidence(ctx, h.ID)
	if err != nil {
		return nil, err
	}
	hp.evs = evs
	for i, d := range hp.Dives {
		if d.Voided {
			hp.VoidDives++
		}
		if d.ProofTest {
			hp.ProofTestDives++
		}
		ev := evs[d.ID]
		if d.Voided {
			ev = nil // a void dive is left out of every figure
		}
		var fr *float64
		if ev != nil {
			if ev.AE != nil {
				fr = ev.AE.FelicityRatio
			}
			for _, s := range ev.Strain {
				if c, ok := hp.Compliance[s.Gauge]; ok && s.ComplianceUEPerMPa != nil {
					v := math.Abs(*s.ComplianceUEPerMPa)
					c[i] = &v
				}
				if s.BaselineUEPerMPa != nil {
					if hp.Baseline == nil {
						hp.Baseline = map[string]float64{}
					}
					hp.Baseline[s.Gauge] = math.Abs(*s.BaselineUEPerMPa)
				}
			}
		}
		hp.Felicity = append(hp.Felicity, fr)
	}
	if hp.Maintenance, err = l.MaintenanceOf(ctx, h); err != nil {
		return nil, err
	}
	hp.Highest = highest(hp.Dives, hp.Maintenance)
	hp.Transfer = transferViews(h.Spec, f.Damage)
	if hp.CycleRanges, hp.CycleCounts, err = l.HullCycles(ctx, h.ID); err != nil {
		return nil, err
	}
	// The deepest of the last 10 dives.
	for i, n := len(hp.Dives)-1, 0; i >= 0 && n < 10; i-- {
		if hp.Dives[i].Voided {
			continue
		}
		n++
		if hp.Deepest == nil || hp.Dives[i].MaxPressureMPa > hp.Deepest.MaxPressureMPa {
			d := hp.Dives[i]
			hp.Deepest = &d
		}
	}
	if hp.Deepest != nil {
		if hp.profile, err = l.ProfileOf(ctx, hp.Deepest.ID); err != nil {
			return nil, err
		}
	}
	return hp, nil
}

// highest returns the highest pressure of the dives and proof tests; a
// proof test wins a tie, and a dive logged as a proof test is named as
// one.
func highest(dives []ledger.Dive, m *ledger.Maintenance) *HighestPressure {
	proofOf := map[string]ledger.ProofTest{}
	if m != nil {
		for _, p := range m.ProofTests {
			if p.DiveID != nil {
				proofOf[p.DiveID.String()] = p
			}
		}
	}
	var h *HighestPressure
	for _, d := range dives {
		if d.Voided {
			continue // left out of every figure, as the ledger does
		}
		if h == nil || d.MaxPressureMPa > h.PressureMPa {
			z := d.MaxDepthM
			h = &HighestPressure{PressureMPa: d.MaxPressureMPa, DepthM: &z, Source: "dive", At: d.Start, Dive: d.ID.String()}
			if p, ok := proofOf[h.Dive]; ok {
				h.Source, h.At = "proof test", p.At
			}
		}
	}
	if m != nil {
		for _, p := range m.ProofTests {
			if h == nil || p.PressureMPa >= h.PressureMPa {
				hv := &HighestPressure{PressureMPa: p.PressureMPa, Source: "proof test", At: p.At}
				if p.DiveID != nil {
					hv.Dive = p.DiveID.String()
					for _, d := range dives {
						if d.ID == *p.DiveID {
							z := d.MaxDepthM
							hv.DepthM = &z
						}
					}
				}
				h = hv
			}
		}
	}
	return h
}

// Caveats of the load-transfer basis.
const (
	caveatLame = "Lamé isotropic default: a laminate is not isotropic, so this factor is a first estimate only; " +
		"the designer's factor from the laminate analysis, or a strain-gauge calibration at a proof test, takes precedence and should be entered."
	caveatFellBack = "The preferred basis %q is not available yet (a gauge calibration needs a proof test with strain gauges recorded); the assessment fell back to %q."
)

// transferViews states each component's load-transfer basis with its
// caveat.
func transferViews(s *spec.Hull, d *ledger.Damages) []TransferView {
	var out []TransferView
	for _, c := range d.Components {
		tv := TransferView{Component: c.Name, Used: c.Basis, FactorMPaPerMPa: c.Factor}
		for _, sc := range s.Components {
			if sc.Name == c.Name {
				tv.Preferred, tv.Source = sc.Transfer.Basis, sc.Transfer.Source
			}
		}
		var cav []string
		switch {
		case tv.Used == "":
			cav = append(cav, "Not assessed yet: no transfer in force.")
		case tv.Preferred != "" && tv.Preferred != tv.Used:
			cav = append(cav, fmt.Sprintf(caveatFellBack, tv.Preferred, tv.Used))
		}
		if tv.Used == "lame" {
			cav = append(cav, caveatLame)
		}
		tv.Caveat = strings.Join(cav, " ")
		out = append(out, tv)
	}
	return out
}

func fillBasis(l *ledger.Ledger, m *Model, specs []*spec.Hull) error {
	b, err := l.ReportBasis(specs)
	if err != nil {
		return err
	}
	m.Basis = Basis{DFF: b.DFF, MeanStress: b.MeanStress, Combine: b.Combine, RulesFrom: b.RulesSource}
	for _, c := range b.Curves {
		m.Basis.Curves = append(m.Basis.Curves, CurveInfo{Name: c.Name, Source: c.Source, Basis: c.Basis, Illustrative: c.Illustrative,
			Kind: c.Kind, Material: c.Material, Mode: c.Mode, Application: c.Application, Environment: c.Environment})
	}
	for _, r := range b.Rules {
		m.Basis.Rules = append(m.Basis.Rules, RuleInfo{ID: r.ID, Title: r.Title, Thresholds: r.Thresholds, Source: r.Source})
	}
	m.Basis.Limits = ruleLimits(b)
	m.Basis.felicityRules = map[string]bool{}
	for id, ms := range ruleMeasures(b) {
		if ms == fitness.MeasureFelicityRatio {
			m.Basis.felicityRules[id] = true
		}
	}
	return nil
}

// felicityRuleIDs are the rules on the Felicity ratio in force.
func felicityRuleIDs(b Basis) map[string]bool {
	if len(b.felicityRules) == 0 {
		return map[string]bool{shippedFelicityRule: true}
	}
	return b.felicityRules
}

// The shipped identifiers of the rules whose lines the charts draw, used
// when the rule set's file cannot be read to find them by measure.
const (
	shippedDamageRule   = "damage-against-allowable"
	shippedFelicityRule = "felicity-below-limit"
)

// ruleLimits finds the damage and Felicity rules of the rule set in force
// and reads their thresholds as the ledger states them.
func ruleLimits(b *ledger.BasisInfo) RuleLimits {
	measure := ruleMeasures(b)
	var out RuleLimits
	for _, r := range b.Rules {
		var dst **RuleLimit
		switch measure[r.ID] {
		case fitness.MeasureDamageRatio:
			dst = &out.Damage
		case fitness.MeasureFelicityRatio:
			dst = &out.Felicity
		default:
			continue
		}
		if *dst != nil {
			continue // the first rule on the measure
		}
		if r.Watch != nil || r.Hold != nil {
			*dst = &RuleLimit{Rule: r.ID, Watch: r.Watch, Hold: r.Hold}
		}
	}
	return out
}

// ruleMeasures maps each rule of the set in force to its measure.
func ruleMeasures(b *ledger.BasisInfo) map[string]fitness.Measure {
	measure := map[string]fitness.Measure{}
	for _, r := range b.Rules {
		measure[r.ID] = r.Measure
	}
	return measure
}
