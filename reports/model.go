package reports

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/spec"
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
	Deepest *ledger.Dive    `json:"deepest_recent,omitempty"`
	profile *ledger.Profile // drawn, covered by the chain head
}

// DivePart is the content of a dive sheet.
type DivePart struct {
	Dive     *ledger.Dive     `json:"dive"`
	Load     *ledger.DiveLoad `json:"load"`
	Evidence *ledger.Evidence `json:"evidence"`
	Flags    []ledger.Flag    `json:"flags"`
	profile  *ledger.Profile
}

// Basis is what the figures rest on.
type Basis struct {
	DFF        float64     `json:"design_fatigue_factor"`
	MeanStress string      `json:"mean_stress"`
	Combine    string      `json:"combine"`
	Curves     []CurveInfo `json:"curves"`
	Rules      []RuleInfo  `json:"rules"`
	RulesFrom  string      `json:"rules_source"`
}

// CurveInfo names a curve and its source.
type CurveInfo struct {
	Name, Source, Basis string
	Illustrative        bool
}

// RuleInfo is a rule with its thresholds and source.
type RuleInfo struct {
	ID, Title, Thresholds, Source string
}

// Fingerprint is the SHA-256 over the report's canonical content
// (including the audit-chain heads), in hex.
func (m *Model) Fingerprint() (string, error) {
	b, err := json.Marshal(m)
	if err != nil {
		return "", fmt.Errorf("report content: %w", err)
	}
	h := sha256.New()
	h.Write([]byte("hulltally report v1\n"))
	h.Write(b)
	return fmt.Sprintf("%x", h.Sum(nil)), nil
}

// BuildHull gathers a hull report's content at a moment.
func BuildHull(ctx context.Context, l *ledger.Ledger, serial string, at time.Time) (*Model, error) {
	m := &Model{Kind: KindHull, Subject: serial, GeneratedAt: at, Chains: map[string]Chain{}}
	hp, err := hullPart(ctx, l, serial, at, true, m)
	if err != nil {
		return nil, err
	}
	m.Hulls = []HullPart{*hp}
	return m, fillBasis(l, m, []*spec.Hull{hp.Spec})
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
	sort.SliceStable(m.Hulls, func(i, j int) bool {
		ui, uj := urgency(m.Hulls[i].Status), urgency(m.Hulls[j].Status)
		if ui != uj {
			return ui < uj
		}
		return m.Hulls[i].Damage.GoverningRatio > m.Hulls[j].Damage.GoverningRatio
	})
	return m, fillBasis(l, m, specs)
}

// BuildDive gathers a dive sheet's content.
func BuildDive(ctx context.Context, l *ledger.Ledger, id string, at time.Time) (*Model, error) {
	d, err := l.Dive(ctx, id)
	if err != nil {
		return nil, err
	}
	m := &Model{Kind: KindDive, Subject: d.ID.String(), GeneratedAt: at, Chains: map[string]Chain{}}
	h, err := l.Hull(ctx, d.Hull)
	if err != nil {
		return nil, err
	}
	if err := chain(ctx, l, h, m); err != nil {
		return nil, err
	}
	load, err := l.LoadOf(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	ev, err := l.EvidenceOf(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	f, err := l.FitnessAt(ctx, h, at)
	if err != nil {
		return nil, err
	}
	dp := &DivePart{Dive: d, Load: load, Evidence: ev, Flags: []ledger.Flag{}}
	for _, fl := range f.Flags {
		if fl.Dive == d.ID.String() {
			dp.Flags = append(dp.Flags, fl)
		}
	}
	if dp.profile, err = l.ProfileOf(ctx, d.ID); err != nil {
		return nil, err
	}
	m.Dive = dp
	m.Hulls = []HullPart{{Spec: h.Spec, Revision: h.Revision, Status: f.Status, Reasons: f.Reasons, Damage: f.Damage}}
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
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, err
	}
	if err := chain(ctx, l, h, m); err != nil {
		return nil, err
	}
	f, err := l.FitnessAt(ctx, h, at)
	if err != nil {
		return nil, err
	}
	hp := &HullPart{Spec: h.Spec, Revision: h.Revision, Status: f.Status, Reasons: f.Reasons, Damage: f.Damage}
	if !full {
		return hp, nil
	}
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
	for i, d := range hp.Dives {
		ev := evs[d.ID]
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
	if hp.CycleRanges, hp.CycleCounts, err = l.HullCycles(ctx, h.ID); err != nil {
		return nil, err
	}
	// The deepest of the last 10 dives.
	for i := len(hp.Dives) - 1; i >= 0 && i >= len(hp.Dives)-10; i-- {
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

func fillBasis(l *ledger.Ledger, m *Model, specs []*spec.Hull) error {
	b, err := l.ReportBasis(specs)
	if err != nil {
		return err
	}
	m.Basis = Basis{DFF: b.DFF, MeanStress: b.MeanStress, Combine: b.Combine, RulesFrom: b.RulesSource}
	for _, c := range b.Curves {
		m.Basis.Curves = append(m.Basis.Curves, CurveInfo{Name: c.Name, Source: c.Source, Basis: c.Basis, Illustrative: c.Illustrative})
	}
	for _, r := range b.Rules {
		m.Basis.Rules = append(m.Basis.Rules, RuleInfo{ID: r.ID, Title: r.Title, Thresholds: r.Thresholds, Source: r.Source})
	}
	return nil
}

func urgency(s string) int {
	switch s {
	case "hold":
		return 0
	case "watch":
		return 1
	case "fit":
		return 2
	}
	return 3
}
