package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"time"

	"github.com/google/uuid"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/inforce"
	"hulltally/fatigue/sn"
)

// Num is a damage figure that prints +Inf (a static overload) as the
// string "inf" in JSON instead of failing.
type Num float64

// MarshalJSON implements json.Marshaler.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsInf(f, 0) || math.IsNaN(f) {
		// Not a number a reader can use: null, and the record beside it
		// says why (an overload, a value not established).
		return []byte(`null`), nil
	}
	return json.Marshal(f)
}

// UnmarshalJSON implements json.Unmarshaler: null, the figure a reader
// cannot use, reads back as +Inf, its worst (a static overload), never as
// 0; a client that reads the JSON can then not show a hull better than the
// ledger did.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.Inf(1))
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return fmt.Errorf("a damage figure: %w", err)
	}
	*n = Num(f)
	return nil
}

// ComponentDamage is a component's cumulative damage.
type ComponentDamage struct {
	Name            string  `json:"name"`
	CyclicDamage    Num     `json:"cyclic_damage"`
	SustainedDamage Num     `json:"sustained_damage"`
	Allowable       float64 `json:"allowable"`
	// Ratio is the damage against the allowable (1 = allowable reached).
	Ratio Num `json:"ratio"`
	// ProofTests is the damage charged for proof tests recorded without
	// samples (included in the totals), nil when there are none.
	ProofTests *ProofDamage `json:"proof_tests,omitempty"`
	// Basis, Factor and Curve are what the newest assessment used.
	Basis        string  `json:"transfer_basis"`
	Factor       float64 `json:"transfer_factor_mpa_per_mpa"`
	Curve        string  `json:"curve"`
	RuptureCurve string  `json:"rupture_curve,omitempty"`
	// TransferDescription states the load transfer's basis in words (for
	// a gauge calibration: the proof test, the gauges, E and ν), and
	// TransferReason why that basis was used (for a fallback from gauge:
	// why no calibration was available).
	TransferDescription string `json:"transfer_description,omitempty"`
	TransferReason      string `json:"transfer_reason,omitempty"`
	// DesignFatigueFactor and MeanStress are the effective design fatigue
	// factor and mean-stress correction of this component in the newest
	// assessment used (the component's own from the hull spec, or the
	// global one), SettingsReason where each comes from; the factor is
	// null when that assessment did not record it (recorded before the
	// settings were kept per component), and SettingsReason says so.
	DesignFatigueFactor *float64 `json:"design_fatigue_factor"`
	MeanStress          string   `json:"mean_stress"`
	SettingsReason      string   `json:"settings_reason"`
	// Warnings are remarks on the component that do not stop the
	// assessment (a curve in air for an immersed part, a gauge
	// calibration far from the designer's factor).
	Warnings []string `json:"warnings"`
	// Unassessed counts dives with no damage for this component.
	Unassessed int `json:"unassessed_dives"`
	// Prior is damage carried over from an earlier record (in the totals).
	Prior *PriorDamage `json:"prior_damage,omitempty"`
}

// setRecord shows the settings an assessment recorded for the component.
func (c *ComponentDamage) setRecord(r componentRecord) {
	c.TransferDescription, c.TransferReason = r.TransferDescription, r.TransferReason
	c.Warnings = append([]string{}, r.Warnings...)
	if r.SettingsReason == "" {
		c.DesignFatigueFactor, c.MeanStress = nil, ""
		c.SettingsReason = "not recorded: the assessment in force predates per-component settings (run hulltally assess)"
		return
	}
	f := r.DesignFatigueFactor
	c.DesignFatigueFactor, c.MeanStress, c.SettingsReason = &f, r.MeanStress, r.SettingsReason
}

// PriorDamage is damage carried over from an earlier record.
type PriorDamage struct {
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Source    string `json:"source"`
}

// Damages are a hull's cumulative damage and remaining life.
type Damages struct {
	DiveCount       int               `json:"dive_count"`
	Components      []ComponentDamage `json:"components"`
	Governing       string            `json:"governing_component"`
	GoverningRatio  Num               `json:"governing_ratio"`
	RemainingDives  *int64            `json:"remaining_dives"`
	RemainingStatus string            `json:"remaining_status"`
	RemainingReason string            `json:"remaining_reason"`
	// RemainingMoreThan is true when RemainingDives is the horizon and the
	// life left is more than that.
	RemainingMoreThan bool `json:"remaining_more_than"`
	// RemainingBasis says which figure governs: recent_mean, design_dive,
	// qualified_cycles or current_damage.
	RemainingBasis string `json:"remaining_basis,omitempty"`
	// RemainingAtRecentMean and RemainingAtDesignDive are the two
	// projections (null when not evaluated); the smaller is shown.
	RemainingAtRecentMean *int64 `json:"remaining_at_recent_mean"`
	RemainingAtDesignDive *int64 `json:"remaining_at_design_dive"`
	// RemainingAtRecentMeanMoreThan and RemainingAtDesignDiveMoreThan are
	// true when that projection is the horizon and the life it gives is
	// more than that.
	RemainingAtRecentMeanMoreThan bool `json:"remaining_at_recent_mean_more_than"`
	RemainingAtDesignDiveMoreThan bool `json:"remaining_at_design_dive_more_than"`
	// LimitRatio is the ratio of the allowable the life is projected to
	// (the damage rule's hold level).
	LimitRatio float64 `json:"remaining_limit_ratio"`
	// DesignDive describes the design dive of the projection.
	DesignDive          string  `json:"design_dive,omitempty"`
	ConfigHash          string  `json:"config_hash,omitempty"`
	Assessments         int     `json:"assessments"`
	Combine             string  `json:"combine"`
	DesignFatigueFactor float64 `json:"design_fatigue_factor"`
	MeanStress          string  `json:"mean_stress"`
	// proofTests are the pressures of the hull's proof tests recorded
	// without samples: each is charged as one cycle to its pressure with
	// proof.hold_min at it (read by hullDamages, summed by
	// finishDamages).
	proofTests []float64
	// PerDive is each dive's damage in dive order (for reports), by
	// component name.
	PerDive []DiveDamage `json:"-"`
}

// DiveDamage is one dive's damage per component in the assessment in force.
type DiveDamage struct {
	Dive   uuid.UUID
	Start  time.Time
	Damage map[string]damage.Damage
}

// HullDamage sums the assessment in force of every dive of the hull.
func (l *Ledger) HullDamage(ctx context.Context, h *Hull) (*Damages, error) {
	ds, err := l.hullDamages(ctx, []*Hull{h})
	if err != nil {
		return nil, err
	}
	return ds[0], nil
}

// hullDamages is HullDamage for several hulls with one query each for
// the damage rows and the assessment counts.
func (l *Ledger) hullDamages(ctx context.Context, hulls []*Hull) ([]*Damages, error) {
	ids := make([][16]byte, len(hulls))
	byID := map[uuid.UUID]int{}
	out := make([]*Damages, len(hulls))
	for i, h := range hulls {
		ids[i] = h.ID
		byID[h.ID] = i
		out[i] = l.newDamages(h)
	}
	prows, err := l.db.Query(ctx, `SELECT hull_id, pressure_mpa FROM proof_tests WHERE hull_id = ANY($1) AND dive_id IS NULL ORDER BY hull_id, at`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading proof tests: %w", err)
	}
	for prows.Next() {
		var hullID uuid.UUID
		var p float64
		if err := prows.Scan(&hullID, &p); err != nil {
			prows.Close()
			return nil, err
		}
		out[byID[hullID]].proofTests = append(out[byID[hullID]].proofTests, p)
	}
	prows.Close()
	if err := prows.Err(); err != nil {
		return nil, err
	}
	rows, err := l.db.Query(ctx, `SELECT hull_id, id, start_time FROM dives d WHERE hull_id = ANY($1) AND `+notVoided+` ORDER BY hull_id, start_time, id`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading dives: %w", err)
	}
	for rows.Next() {
		var hullID, id uuid.UUID
		var start time.Time
		if err := rows.Scan(&hullID, &id, &start); err != nil {
			rows.Close()
			return nil, err
		}
		i := byID[hullID]
		out[i].PerDive = append(out[i].PerDive, DiveDamage{Dive: id, Start: start, Damage: map[string]damage.Damage{}})
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	// Newest assessment first: a dive takes its damage from the newest
	// assessment that covers it. "Newest" is the position in the hull's
	// audit chain (chainSeq), not the table's own sequence, which no hash
	// covers: reordering assessments behind the chain cannot put an older,
	// smaller figure in force, and an assessment inserted behind the chain
	// (no chain record) ranks oldest of all.
	rows, err = l.db.Query(ctx, `SELECT a.hull_id, `+chainSeq+`, a.id, ad.component, ad.basis, ad.factor, ad.curve, ad.rupture_curve, ad.dive_ids, ad.cyclic, ad.sustained
		FROM assessments a JOIN assessment_damage ad ON ad.hull_id = a.hull_id AND ad.assessment_id = a.id
		WHERE a.hull_id = ANY($1) ORDER BY a.hull_id, 2 DESC, a.id, ad.component`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading damage: %w", err)
	}
	claimers := make([]*inforce.Claimer[uuid.UUID], len(hulls))
	for i := range claimers {
		ids := make([]uuid.UUID, len(out[i].PerDive))
		for p := range out[i].PerDive {
			ids[p] = out[i].PerDive[p].Dive
		}
		comps := make([]string, len(out[i].Components))
		for k := range out[i].Components {
			comps[k] = out[i].Components[k].Name
		}
		claimers[i] = inforce.New(ids, comps)
	}
	var group []compDamage
	groupHull, groupSeq := -1, int64(-1)
	var groupID uuid.UUID
	// recFrom is the assessment each shown component's settings come from.
	var recFrom []recRef
	flush := func() {
		if groupHull < 0 {
			return
		}
		o := out[groupHull]
		cols := make([]inforce.Column[uuid.UUID], len(group))
		for n, g := range group {
			cols[n] = inforce.Column[uuid.UUID]{Component: g.component, Dives: g.dives, Cyclic: g.cyclic, Sustained: g.sustained}
		}
		used := claimers[groupHull].Claim(cols)
		for n, g := range group {
			k := -1
			for j := range o.Components {
				if o.Components[j].Name == g.component {
					k = j
				}
			}
			if k < 0 || !used[n] {
				continue
			}
			if o.Components[k].Basis == "" {
				c := &o.Components[k]
				c.Basis, c.Factor, c.Curve, c.RuptureCurve = g.basis, g.factor, g.curve, g.ruptureCurve
				recFrom = append(recFrom, recRef{groupHull, k, groupID})
			}
		}
		group = group[:0]
	}
	for rows.Next() {
		var hullID, aID uuid.UUID
		var seq int64
		var g compDamage
		var dives [][16]byte
		if err := rows.Scan(&hullID, &seq, &aID, &g.component, &g.basis, &g.factor, &g.curve, &g.ruptureCurve, &dives, &g.cyclic, &g.sustained); err != nil {
			rows.Close()
			return nil, err
		}
		i := byID[hullID]
		if i != groupHull || seq != groupSeq {
			flush()
			groupHull, groupSeq, groupID = i, seq, aID
		}
		g.dives = make([]uuid.UUID, len(dives))
		for k, d := range dives {
			g.dives[k] = d
		}
		group = append(group, g)
	}
	flush()
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	for i := range out {
		for p, dm := range claimers[i].Damage() {
			out[i].PerDive[p].Damage = dm
		}
	}
	if err := l.showRecords(ctx, out, recFrom); err != nil {
		return nil, err
	}
	rows, err = l.db.Query(ctx, `SELECT DISTINCT ON (a.hull_id) a.hull_id, count(*) OVER (PARTITION BY a.hull_id), a.config_hash
		FROM assessments a WHERE a.hull_id = ANY($1) ORDER BY a.hull_id, `+chainSeq+` DESC, a.id`, ids)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var hullID uuid.UUID
		var n int
		var hash []byte
		if err := rows.Scan(&hullID, &n, &hash); err != nil {
			rows.Close()
			return nil, err
		}
		o := out[byID[hullID]]
		o.Assessments, o.ConfigHash = n, fmt.Sprintf("%x", hash)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	for i, h := range hulls {
		if err := l.finishDamages(h, out[i]); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// recRef names the assessment a shown component's figures come from:
// out[hull].Components[comp] from assessment id.
type recRef struct {
	hull, comp int
	id         uuid.UUID
}

// showRecords sets each referenced component's settings from the records
// of the assessment it was shown from (one query for all of them).
func (l *Ledger) showRecords(ctx context.Context, out []*Damages, refs []recRef) error {
	var ids [][16]byte
	seen := map[uuid.UUID]bool{}
	for _, r := range refs {
		if !seen[r.id] {
			seen[r.id] = true
			ids = append(ids, r.id)
		}
	}
	if len(ids) == 0 {
		return nil
	}
	rows, err := l.db.Query(ctx, "SELECT id, config_json FROM assessments WHERE id = ANY($1)", ids)
	if err != nil {
		return fmt.Errorf("reading assessment settings: %w", err)
	}
	recs := map[uuid.UUID]map[string]componentRecord{}
	for rows.Next() {
		var id uuid.UUID
		var js string
		if err := rows.Scan(&id, &js); err != nil {
			rows.Close()
			return err
		}
		recs[id] = componentRecords(js)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	for _, r := range refs {
		c := &out[r.hull].Components[r.comp]
		c.setRecord(recs[r.id][c.Name])
	}
	return nil
}

func (l *Ledger) newDamages(h *Hull) *Damages {
	d := &Damages{Combine: string(l.fat.limits.Combination()), DesignFatigueFactor: l.fat.settings.DFF, MeanStress: string(l.fat.settings.MeanStress)}
	for _, c := range h.Spec.Components {
		cd := ComponentDamage{Name: c.Name, Allowable: l.fat.limits.Allowable, Curve: c.Curve, RuptureCurve: c.RuptureCurve, Warnings: []string{}}
		// Until an assessment is shown, the settings that would apply.
		own := assess.Settings{MeanStress: sn.MeanStress(c.MeanStress)}
		if c.DesignFatigueFactor != nil {
			own.DFF = *c.DesignFatigueFactor
		}
		if e, err := assess.EffectiveSettings(l.fat.settings, own); err == nil {
			f := e.DFF
			cd.DesignFatigueFactor, cd.MeanStress, cd.SettingsReason = &f, string(e.MeanStress), e.Reason+" (no assessment yet: the settings that apply)"
		} else {
			cd.SettingsReason = "not evaluated: " + err.Error()
		}
		d.Components = append(d.Components, cd)
	}
	return d
}

// finishDamages sums PerDive into the totals and the remaining life.
func (l *Ledger) finishDamages(h *Hull, out *Damages) error {
	out.DiveCount = len(out.PerDive)
	proof, err := l.proofTestDamage(h, out.proofTests)
	if err != nil {
		return fmt.Errorf("damage of %s: %w", h.Serial, err)
	}
	dh := damage.Hull{}
	for i, c := range out.Components {
		dc := damage.Component{Name: c.Name, Limits: l.fat.limits}
		if pd := h.Spec.Components[i].PriorDamage; pd != nil {
			dc.Prior = damage.Damage{Cyclic: pd.Cyclic, Sustained: pd.Sustained}
			out.Components[i].Prior = &PriorDamage{Cyclic: Num(pd.Cyclic), Sustained: Num(pd.Sustained), Source: pd.Source}
		}
		if pt, ok := proof[c.Name]; ok {
			dc.Prior = dc.Prior.Add(pt)
			out.Components[i].ProofTests = &ProofDamage{Count: len(out.proofTests), Cyclic: Num(pt.Cyclic), Sustained: Num(pt.Sustained),
				Basis: fmt.Sprintf("%d proof test(s) recorded without samples, each charged as one cycle to its recorded pressure with %.0f min at it (proof.hold_min)", len(out.proofTests), l.cfg.Proof.HoldMin)}
		}
		dh.Components = append(dh.Components, dc)
	}
	for _, d := range out.PerDive {
		dd := damage.Dive{ID: d.Dive.String(), Damage: make(map[string]damage.Damage, len(out.Components))}
		for i := range out.Components {
			c := &out.Components[i]
			v, ok := d.Damage[c.Name]
			if !ok {
				c.Unassessed++
			}
			dd.Damage[c.Name] = v
		}
		dh.Dives = append(dh.Dives, dd)
	}
	tot, err := dh.Totals()
	if err != nil {
		return fmt.Errorf("damage of %s: %w", h.Serial, err)
	}
	for i, t := range tot.Components {
		c := &out.Components[i]
		c.CyclicDamage, c.SustainedDamage, c.Ratio = Num(t.Total.Cyclic), Num(t.Total.Sustained), Num(t.Ratio)
	}
	out.Governing, out.GoverningRatio = tot.Governing, Num(tot.Ratio)
	opt := l.fat.life
	opt.LimitRatio = l.damageHoldLevel()
	opt.Horizon = l.cfg.Fatigue.LifeHorizon
	opt.QualifiedCycles, opt.CyclesUsed = h.Spec.QualifiedPressureCycles, float64(len(out.PerDive))
	dd, ddText, err := l.designDive(h)
	if err != nil {
		return fmt.Errorf("remaining life of %s: %w", h.Serial, err)
	}
	opt.DesignDive, out.DesignDive = dd, ddText
	life, err := dh.RemainingLife(opt)
	if err != nil {
		return fmt.Errorf("remaining life of %s: %w", h.Serial, err)
	}
	out.RemainingStatus, out.RemainingReason, out.LimitRatio = string(life.Status), life.Reason, life.LimitRatio
	out.RemainingBasis = string(life.Basis)
	if p := life.AtRecentMean; p != nil {
		v := p.Dives
		out.RemainingAtRecentMean, out.RemainingAtRecentMeanMoreThan = &v, p.Beyond
	}
	if p := life.AtDesignDive; p != nil {
		v := p.Dives
		out.RemainingAtDesignDive, out.RemainingAtDesignDiveMoreThan = &v, p.Beyond
	}
	unassessed := 0
	for _, c := range out.Components {
		unassessed = max(unassessed, c.Unassessed)
	}
	switch {
	case unassessed > 0:
		// Never give a number the ledger cannot back.
		out.RemainingStatus = "incomplete"
		out.RemainingReason = fmt.Sprintf("%d dives have no damage assessment for every component (run hulltally assess); %s", unassessed, life.Reason)
	case life.Status == damage.LifeEstimated || life.Status == damage.LifeExhausted || life.Status == damage.LifeBeyondHorizon:
		d := life.Dives
		out.RemainingDives = &d
		out.RemainingMoreThan = life.Status == damage.LifeBeyondHorizon
	}
	return nil
}

// Cycle is one counted cycle for output.
type Cycle struct {
	RangeMPa float64 `json:"range_mpa"`
	MeanMPa  float64 `json:"mean_mpa"`
	Count    float64 `json:"count"`
}

// DiveCycles returns the rainflow cycles of gauge pressure of a dive.
func (l *Ledger) DiveCycles(ctx context.Context, dive uuid.UUID) ([]Cycle, error) {
	rows, err := l.db.Query(ctx, "SELECT series, unit, gate, chunk, ranges, means, counts FROM dive_cycles WHERE dive_id = $1 AND hull_id = "+diveHull+" AND series = 'pressure' ORDER BY chunk", dive)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var j seriesJoiner
	for rows.Next() {
		var name, unit string
		var gate float64
		var chunk int32
		var r, m, n []float64
		if err := rows.Scan(&name, &unit, &gate, &chunk, &r, &m, &n); err != nil {
			return nil, err
		}
		j.add(name, unit, gate, chunk, r, m, n)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	if j.why != "" {
		return nil, fmt.Errorf("dive %s: %s (run hulltally verify)", dive, j.why)
	}
	out := []Cycle{}
	if len(j.ss) == 1 {
		for _, c := range j.ss[0].cycles {
			out = append(out, Cycle{RangeMPa: c.Range, MeanMPa: c.Mean, Count: c.Count})
		}
	}
	return out, nil
}

// DiveComponentDamage is one component's damage from one dive.
type DiveComponentDamage struct {
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Basis     string `json:"transfer_basis"`
	Curve     string `json:"curve"`
	// Factor is the load transfer factor used, MPa of stress per MPa of
	// gauge pressure (negative in compression).
	Factor float64 `json:"transfer_factor_mpa_per_mpa"`
	// TransferReason says why that basis was used.
	TransferReason string `json:"transfer_reason,omitempty"`
	// DesignFatigueFactor and MeanStress are the effective settings of
	// the component in that assessment (null and empty when it did not
	// record them).
	DesignFatigueFactor *float64 `json:"design_fatigue_factor"`
	MeanStress          string   `json:"mean_stress,omitempty"`
}

// chainSeq is an assessment's (aliased a) position in its hull's audit
// chain, 0 when it has no chain record: the order of assessments that the
// chain's hashes protect.
const chainSeq = `coalesce((SELECT c.seq FROM audit_chain c WHERE c.hull_id = a.hull_id AND c.kind = 'assessment' AND c.record_key = a.id::text), 0)`

// DiveDamageOf returns the dive's damage per component in the assessment
// in force (the newest that covers the dive).
func (l *Ledger) DiveDamageOf(ctx context.Context, dive uuid.UUID) (map[string]DiveComponentDamage, error) {
	rows, err := l.db.Query(ctx, `
		SELECT `+chainSeq+`, ad.component, ad.cyclic[array_position(ad.dive_ids, $1)], ad.sustained[array_position(ad.dive_ids, $1)], ad.basis, ad.curve, ad.factor, a.config_json
		FROM assessment_damage ad JOIN assessments a ON a.hull_id = ad.hull_id AND a.id = ad.assessment_id
		WHERE ad.hull_id = (SELECT hull_id FROM dives WHERE id = $1) AND $1 = ANY(ad.dive_ids)
		ORDER BY 1 DESC, a.id`, dive)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]DiveComponentDamage{}
	newest := int64(-1)
	for rows.Next() {
		var seq int64
		var name string
		var d DiveComponentDamage
		var cy, su float64
		var cfg string
		if err := rows.Scan(&seq, &name, &cy, &su, &d.Basis, &d.Curve, &d.Factor, &cfg); err != nil {
			return nil, err
		}
		if newest >= 0 && seq != newest {
			break
		}
		newest = seq
		d.Cyclic, d.Sustained = Num(cy), Num(su)
		if r, ok := componentRecords(cfg)[name]; ok {
			d.TransferReason = r.TransferReason
			if r.SettingsReason != "" {
				f := r.DesignFatigueFactor
				d.DesignFatigueFactor, d.MeanStress = &f, r.MeanStress
			}
		}
		out[name] = d
	}
	return out, rows.Err()
}

// DiveLoad is what a dive cost the hull: its counted pressure cycles and
// its damage per component in the assessment in force.
type DiveLoad struct {
	PressureCycles []Cycle                        `json:"pressure_cycles"`
	Damage         map[string]DiveComponentDamage `json:"damage"`
}

// LoadOf returns a dive's cycles and damage.
func (l *Ledger) LoadOf(ctx context.Context, dive uuid.UUID) (*DiveLoad, error) {
	c, err := l.DiveCycles(ctx, dive)
	if err != nil {
		return nil, fmt.Errorf("cycles of dive %s: %w", dive, err)
	}
	d, err := l.DiveDamageOf(ctx, dive)
	if err != nil {
		return nil, fmt.Errorf("damage of dive %s: %w", dive, err)
	}
	return &DiveLoad{PressureCycles: c, Damage: d}, nil
}
