package ledger

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strconv"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/fitness"
	"hulltally/fatigue/implosion"
	"hulltally/fatigue/plan"
	"hulltally/fatigue/seawater"
	"hulltally/ledger/spec"
)

// Fitness is a hull's fitness for service: its status with every reason,
// the open flags, and the facts they were computed from.
type Fitness struct {
	Hull     string     `json:"hull"`
	Status   string     `json:"status"`
	Reasons  []Reason   `json:"reasons"`
	Flags    []Flag     `json:"flags"`
	Damage   *Damages   `json:"damage"`
	LastDive *time.Time `json:"last_dive"`
	// RulesSource names the rule set.
	RulesSource string `json:"rules_source"`
	// MaxPressureMPa is the highest pressure the hull was ever recorded
	// at, proof tests included.
	MaxPressureMPa float64 `json:"max_pressure_ever_mpa"`
	// EvaluatedAt is the moment the status was evaluated at (a hull-level
	// flag is dated then).
	EvaluatedAt time.Time `json:"-"`
	facts       fitness.HullFacts
	verdict     fitness.Verdict
	decisions   []fitness.Decision
	hull        *Hull
}

func (l *Ledger) loadRules() error {
	b, src, err := l.cfg.Rules()
	if err != nil {
		return err
	}
	r, err := fitness.ParseRules(b)
	if err != nil {
		return fmt.Errorf("fitness rules %s: %w", src, err)
	}
	l.rulesSet, l.rulesSrc, l.rulesSHA = r, src, sha256.Sum256(b)
	return nil
}

// FitnessOf evaluates the hull's rules and status at now (in one
// snapshot), appends the status to the hull's history when it changed and
// writes the hull's fleet summary.
func (l *Ledger) FitnessOf(ctx context.Context, h *Hull, now time.Time) (*Fitness, error) {
	if err := l.writable("FitnessOf"); err != nil {
		return nil, err
	}
	return l.evaluateAndNote(ctx, h.Serial, now)
}

// FitnessAt evaluates the hull's status at a time without recording
// anything (for reports and their verification).
func (l *Ledger) FitnessAt(ctx context.Context, h *Hull, at time.Time) (*Fitness, error) {
	return l.fitnessOf(ctx, h, at)
}

func (l *Ledger) fitnessOf(ctx context.Context, h *Hull, now time.Time) (*Fitness, error) {
	r, src := l.rulesSet, l.rulesSrc
	dmg, err := l.HullDamage(ctx, h)
	if err != nil {
		return nil, err
	}
	m, err := l.MaintenanceOf(ctx, h)
	if err != nil {
		return nil, err
	}
	facts, err := l.hullFacts(ctx, h, dmg, m, now)
	if err != nil {
		return nil, err
	}
	flags := fitness.Evaluate(r, facts)
	var decisions []fitness.Decision
	for _, d := range m.Decisions {
		decisions = append(decisions, fitness.Decision{At: d.At, Kind: fitness.DecisionKind(d.Kind), Actor: d.Actor, Reason: d.Reason})
	}
	v := fitness.Status(flags, decisions, fitness.Records{Inspections: facts.Inspections, ProofTests: facts.ProofTests}, now)
	voidLife(dmg, v, r)
	f := &Fitness{Hull: h.Serial, Status: string(v.State), Reasons: reasonViews(v.Reasons), Flags: flagViews(flags), Damage: dmg, RulesSource: src,
		facts: facts, verdict: v, hull: h, decisions: decisions, MaxPressureMPa: facts.MaxPressureMPa, EvaluatedAt: now}
	if n := len(dmg.PerDive); n > 0 {
		t := dmg.PerDive[n-1].Start
		f.LastDive = &t
	}
	return f, nil
}

// hullFacts gathers what the rules need from the ledger. Each dive is
// judged against the spec revision in force when it was made (a later
// revision cannot move an old dive under a new rating, or drop a channel
// it was missing); every dive and record carries when the ledger learned
// of it. A dive's evidence in force is its newest revision, and every
// earlier judgement of it is given too (Extra): a re-judgement may raise
// flags, never close one. A void dive takes no part in damage or the
// highest pressure, but its flags stay until the clearing procedure (a
// passing inspection or proof test and a return to service), with a
// finding that it was voided. A proof test recorded without samples is
// judged as a record (Extra) for its overshoot.
func (l *Ledger) hullFacts(ctx context.Context, h *Hull, dmg *Damages, m *Maintenance, now time.Time) (fitness.HullFacts, error) {
	f := fitness.HullFacts{Hull: h.Serial, Now: now, RatedDepthM: h.Spec.RatedDepthM, GoverningComponent: dmg.Governing, DiveCount: dmg.DiveCount,
		CollapsePressureMPa: h.Spec.CollapsePressureMPa, QualifiedCycles: h.Spec.QualifiedPressureCycles}
	if dmg.RemainingStatus != "incomplete" {
		r := float64(dmg.GoverningRatio)
		f.DamageRatio = &r
	}
	proofDives := map[uuid.UUID]bool{}
	for _, p := range m.ProofTests {
		if p.DiveID != nil {
			proofDives[*p.DiveID] = true
			continue
		}
		f.MaxPressureMPa = math.Max(f.MaxPressureMPa, p.PressureMPa)
		// A proof test without samples: judged for its overshoot on its
		// recorded pressure.
		f.Dives = append(f.Dives, fitness.DiveFacts{ID: "proof test " + p.ID.String(), Start: p.At, RecordedAt: p.RecordedAt,
			ProofTest: true, PeakMPa: p.PressureMPa, SpecProofMPa: h.Spec.ProofPressureMPa, CollapseMPa: h.Spec.CollapsePressureMPa,
			DataQualityChecked: true, NoHoldPeriod: true, Extra: true, RatedDepthM: h.Spec.RatedDepthM})
	}
	type diveRow struct {
		id          uuid.UUID
		rev         int32
		start, rec  time.Time
		depth, peak float64
		void        *Void
		js          string
	}
	rows, err := l.db.Query(ctx, `SELECT d.id, d.hull_revision, d.start_time, d.recorded_at, d.max_depth_m, d.max_pressure_mpa,
		v.reason, v.actor, v.recorded_at, `+effectiveEvidence+` FROM dives d LEFT JOIN dive_voids v ON v.hull_id = d.hull_id AND v.dive_id = d.id
		WHERE d.hull_id = $1 ORDER BY d.start_time, d.id`, h.ID)
	if err != nil {
		return f, fmt.Errorf("facts of %s: %w", h.Serial, err)
	}
	ds, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (diveRow, error) {
		var x diveRow
		var vr, va *string
		var vat *time.Time
		err := r.Scan(&x.id, &x.rev, &x.start, &x.rec, &x.depth, &x.peak, &vr, &va, &vat, &x.js)
		if vr != nil && va != nil && vat != nil {
			x.void = &Void{Dive: x.id, Reason: *vr, Actor: *va, RecordedAt: *vat}
		}
		return x, err
	})
	if err != nil {
		return f, fmt.Errorf("facts of %s: %w", h.Serial, err)
	}
	older, err := l.olderJudgements(ctx, h)
	if err != nil {
		return f, err
	}
	revs := map[int32]*spec.Hull{h.Revision: h.Spec}
	var recorded []time.Time
	for _, x := range ds {
		rs, ok := revs[x.rev]
		if !ok {
			if rs, err = l.specOfRevision(ctx, h.ID, x.rev); err != nil {
				return f, err
			}
			revs[x.rev] = rs
		}
		var channels []string
		for _, c := range rs.AEChannels() {
			channels = append(channels, strconv.Itoa(c))
		}
		base := fitness.DiveFacts{ID: x.id.String(), Start: x.start, RecordedAt: x.rec, MaxDepthM: x.depth, PeakMPa: x.peak,
			RatedDepthM: rs.RatedDepthM, SpecProofMPa: rs.ProofPressureMPa, CollapseMPa: rs.CollapsePressureMPa,
			Gauges: rs.StrainGauges(), Channels: channels, ProofTest: proofDives[x.id]}
		if x.void != nil {
			// Out of damage and the highest pressure; its flags stay until
			// the clearing procedure, recorded as learned at the void.
			base.PeakMPa = 0
			base.RecordedAt = x.void.RecordedAt
		} else {
			recorded = append(recorded, x.rec)
			f.MaxPressureMPa = math.Max(f.MaxPressureMPa, x.peak)
		}
		judgements := append(older[x.id], x.js)
		for k, js := range judgements {
			d := base
			d.Extra = k < len(judgements)-1 || x.void != nil
			if js != "" {
				var ev Evidence
				if err := json.Unmarshal([]byte(js), &ev); err != nil {
					return f, fmt.Errorf("dive %s: evidence: %w", x.id, err)
				}
				diveFacts(&d, &ev)
			}
			// Logged before evidence was kept (js empty): nothing is
			// present, which the missing-evidence rule reports.
			if x.void != nil {
				d.DataQualityChecked = true
				d.DataQuality = append(d.DataQuality, fitness.Finding{Code: "dive_voided", Detail: fmt.Sprintf(
					"dive voided on %s by %s (%s): it no longer counts for damage, but its flags stay until a passing inspection or proof test and a return to service",
					x.void.RecordedAt.Format(time.DateOnly), x.void.Actor, x.void.Reason)})
			}
			f.Dives = append(f.Dives, d)
		}
	}
	cycles, err := l.pressureCyclesUsed(ctx, h)
	if err != nil {
		return f, err
	}
	f.CyclesUsed = cycles
	sort.Slice(recorded, func(i, j int) bool { return recorded[i].Before(recorded[j]) })
	// A record's dive count is by recording order: the dives the ledger
	// knew of when the record was made.
	count := func(at time.Time) int {
		return sort.Search(len(recorded), func(i int) bool { return recorded[i].After(at) })
	}
	for _, in := range m.Inspections {
		f.Inspections = append(f.Inspections, fitness.Inspection{At: in.At, RecordedAt: in.RecordedAt, Method: in.Method, Result: fitness.Result(in.Result), Findings: in.Findings, Actor: in.Actor, DiveCount: count(in.RecordedAt)})
	}
	for _, p := range m.ProofTests {
		f.ProofTests = append(f.ProofTests, fitness.ProofTest{At: p.At, RecordedAt: p.RecordedAt, PressureMPa: p.PressureMPa, Result: fitness.Result(p.Result), Actor: p.Actor, DiveCount: count(p.RecordedAt)})
	}
	return f, nil
}

// olderJudgements returns, per dive of the hull, every judgement of its
// evidence before the one in force (the evidence stored at logging and
// all but the newest revision), oldest first.
func (l *Ledger) olderJudgements(ctx context.Context, h *Hull) (map[uuid.UUID][]string, error) {
	rows, err := l.db.Query(ctx, `SELECT e.dive_id, e.evidence_json, 0::bigint AS seq FROM dive_evidence e
		WHERE e.hull_id = $1 AND EXISTS (SELECT 1 FROM evidence_revisions r WHERE r.dive_id = e.dive_id)
		UNION ALL
		SELECT r.dive_id, r.evidence_json, r.seq FROM evidence_revisions r
		WHERE r.hull_id = $1 AND r.seq < (SELECT max(r2.seq) FROM evidence_revisions r2 WHERE r2.dive_id = r.dive_id)
		ORDER BY 1, 3`, h.ID)
	if err != nil {
		return nil, fmt.Errorf("earlier judgements of %s: %w", h.Serial, err)
	}
	defer rows.Close()
	out := map[uuid.UUID][]string{}
	for rows.Next() {
		var id uuid.UUID
		var js string
		var seq int64
		if err := rows.Scan(&id, &js, &seq); err != nil {
			return nil, err
		}
		out[id] = append(out[id], js)
	}
	return out, rows.Err()
}

// specOfRevision returns a hull's spec as recorded in one revision.
func (l *Ledger) specOfRevision(ctx context.Context, hull uuid.UUID, rev int32) (*spec.Hull, error) {
	r, err := loadRevision(ctx, l.db, hull, rev)
	if err != nil {
		return nil, fmt.Errorf("hull revision %d: %w", rev, err)
	}
	var sp spec.Hull
	if err := json.Unmarshal([]byte(r.SpecJSON), &sp); err != nil {
		return nil, fmt.Errorf("hull revision %d: spec: %w", rev, err)
	}
	return &sp, nil
}

// pressureCyclesUsed counts the hull's pressure cycles as a qualification
// counts them: every rainflow cycle of gauge pressure (a half cycle as a
// half) whose range is at least a tenth of the design pressure, over the
// dives that are not void. A yo-yo dive counts every cycle it made.
func (l *Ledger) pressureCyclesUsed(ctx context.Context, h *Hull) (float64, error) {
	min := 0.1 * h.Spec.DesignPressureMPa
	var n float64
	// unnest, not c.ranges[i] over generate_subscripts: a subscript
	// de-TOASTs the whole array each time, which made this quadratic in a
	// dive's cycles (1.3 s for one 10 h dive with sensor noise).
	var broken *uuid.UUID
	err := l.db.QueryRow(ctx, `SELECT coalesce(sum(u.cnt), 0), `+brokenPressureParts+` FROM dive_cycles c JOIN dives d ON d.hull_id = c.hull_id AND d.id = c.dive_id,
		unnest(c.ranges, c.counts) AS u(rng, cnt)
		WHERE c.hull_id = $1 AND c.series = 'pressure' AND u.rng >= $2 AND `+notVoided, h.ID, min).Scan(&n, &broken)
	if err != nil {
		return 0, fmt.Errorf("pressure cycles of %s: %w", h.Serial, err)
	}
	if err := brokenPartsErr(broken); err != nil {
		return 0, err
	}
	return n, nil
}

// diveFacts fills a dive's facts from its evidence.
func diveFacts(d *fitness.DiveFacts, ev *Evidence) {
	for _, s := range ev.Strain {
		if s.ComplianceUEPerMPa != nil || s.ResidualUE != nil || s.ResidualNotComparable != "" {
			d.GaugesPresent = append(d.GaugesPresent, s.Gauge)
		}
		if s.ComplianceChange != nil {
			setF(&d.ComplianceChange, s.Gauge, *s.ComplianceChange)
		}
		if s.ResidualUE != nil {
			setF(&d.ResidualStrain, s.Gauge, *s.ResidualUE)
		}
		if s.ResidualNotComparable != "" {
			if d.ResidualNotComparable == nil {
				d.ResidualNotComparable = map[string]string{}
			}
			d.ResidualNotComparable[s.Gauge] = s.ResidualNotComparable
		}
		if s.CreepUE != nil {
			setF(&d.Creep, s.Gauge, *s.CreepUE)
		}
		if s.Hysteresis != nil {
			setF(&d.Hysteresis, s.Gauge, *s.Hysteresis)
		}
	}
	if len(ev.GaugeProblems) > 0 {
		d.GaugeProblems = map[string]string{}
		for g, why := range ev.GaugeProblems {
			d.GaugeProblems[g] = why
		}
	}
	if ev.DataQuality != nil {
		d.DataQualityChecked = true
		for _, q := range ev.DataQuality {
			d.DataQuality = append(d.DataQuality, fitness.Finding{Code: q.Code, Detail: q.Detail})
		}
	}
	if ae := ev.AE; ae != nil {
		d.FelicityRatio, d.FelicityLowerBound, d.FelicityReason = ae.FelicityRatio, ae.FelicityLowerBound, ae.FelicityReason
		decays, sig, after := ae.HoldDecays, ae.HoldSignificant, ae.HoldHitsAfterSettle
		d.HoldDecays, d.HoldEmissionSignificant = &decays, &sig
		if ae.HoldAbsoluteJudged {
			d.HoldHitsAfterSettle = &after
		}
		d.ChannelFacts = map[string]fitness.ChannelFacts{}
		for _, c := range ev.Channels {
			name := strconv.Itoa(c.Channel)
			d.ChannelFacts[name] = fitness.ChannelFacts{Present: c.Present, Checked: c.Checked, HistoricIndex: c.HistoricIndex,
				HistoricIndexTooFewHits: c.HistoricIndexTooFew, Severity: c.Severity, SeverityTooFewHits: c.SeverityTooFew,
				HighAmplitudeHits: c.HighAmplitudeHits, TotalCounts: c.TotalCounts, Reason: c.Notes, Hits: c.Hits}
			if c.Present {
				d.ChannelsPresent = append(d.ChannelsPresent, name)
			}
		}
	}
	if !ev.Evaluated {
		d.NoHoldPeriod = true
	}
}

func setF(m *map[string]float64, k string, v float64) {
	if *m == nil {
		*m = map[string]float64{}
	}
	(*m)[k] = v
}

func statusCanon(hull uuid.UUID, seq int64, status, reasons string, at time.Time) []byte {
	c := newCanon("status")
	c.uuid(hull)
	c.i64(seq)
	c.str(status)
	c.str(reasons)
	c.time(at)
	return c.b
}

// StatusChange is one entry of a hull's status history.
type StatusChange struct {
	Status     string    `json:"status" db:"status"`
	RecordedAt time.Time `json:"recorded_at" db:"recorded_at"`
}

// StatusHistory lists a hull's status changes, oldest first.
func (l *Ledger) StatusHistory(ctx context.Context, h *Hull) ([]StatusChange, error) {
	rows, err := l.db.Query(ctx, "SELECT status, recorded_at FROM status_history WHERE hull_id = $1 ORDER BY seq", h.ID)
	if err != nil {
		return nil, err
	}
	out, err := pgx.CollectRows(rows, pgx.RowToStructByName[StatusChange])
	if err != nil {
		return nil, err
	}
	if out == nil {
		out = []StatusChange{} // an empty history is [] in JSON, never null
	}
	return out, nil
}

// Clearance is a pre-dive go or no-go.
type Clearance struct {
	Hull                 string     `json:"hull"`
	Go                   bool       `json:"go"`
	Status               string     `json:"status"`
	DepthM               float64    `json:"planned_depth_m"`
	PressureMPa          float64    `json:"planned_pressure_mpa"`
	CollapsePressureMPa  float64    `json:"collapse_pressure_mpa"`
	Implosion            *Implosion `json:"implosion"`
	BottomTimeMin        float64    `json:"planned_bottom_time_min"`
	PredictedDamageRatio Num        `json:"predicted_damage_ratio"`
	PredictionBasis      string     `json:"prediction_basis"`
	Reasons              []Reason   `json:"reasons"`
}

// Clear answers whether the hull is cleared for a planned dive.
func (l *Ledger) Clear(ctx context.Context, serial string, depthM, bottomMin float64, now time.Time) (*Clearance, error) {
	var out *Clearance
	// One snapshot: the status and the prediction from the same moment.
	err := l.Snapshot(ctx, func(s *Ledger) error {
		var err error
		out, err = s.clear(ctx, serial, depthM, bottomMin, now)
		return err
	})
	return out, err
}

func (l *Ledger) clear(ctx context.Context, serial string, depthM, bottomMin float64, now time.Time) (*Clearance, error) {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, inputErr(err)
	}
	if !(depthM > 0) || depthM > 11500 || bottomMin < 0 || math.IsNaN(bottomMin) {
		return nil, inputErr(fmt.Errorf("planned depth %v m and bottom time %v min: the depth must be between 0 and 11 500 m, the bottom time not negative", depthM, bottomMin))
	}
	f, err := l.FitnessAt(ctx, h, now) // a read: it records nothing
	if err != nil {
		return nil, err
	}
	r := l.rulesSet
	pred, basis, err := l.predict(ctx, h, depthM, bottomMin)
	if err != nil {
		return nil, err
	}
	pMPa := seawater.DepthToMPa(depthM, 90) // the most pressure per metre: the safe side
	c := fitness.Clear(f.verdict, f.facts, fitness.Plan{DepthM: depthM, PressureMPa: pMPa, BottomTimeMin: bottomMin, PredictedDamageRatio: pred}, r)
	imp, err := ImplosionOf(h, pMPa)
	if err != nil {
		return nil, err
	}
	return &Clearance{Hull: serial, Go: c.Go, Status: f.Status, DepthM: depthM, PressureMPa: pMPa, BottomTimeMin: bottomMin,
		CollapsePressureMPa: h.Spec.CollapsePressureMPa, PredictedDamageRatio: Num(pred), PredictionBasis: basis,
		Reasons: reasonViews(c.Reasons), Implosion: imp}, nil
}

// Implosion is the implosion hazard of a hull at a pressure: order of
// magnitude figures for planning safety distances, with their
// assumptions.
type Implosion struct {
	InternalVolumeM3        float64  `json:"internal_volume_m3"`
	PressureMPa             float64  `json:"pressure_mpa"`
	DepthM                  float64  `json:"depth_m,omitempty"`
	EnergyMJ                float64  `json:"energy_mj"`
	PVEnergyMJ              float64  `json:"pv_energy_mj"`
	WaterElasticMJ          float64  `json:"water_elastic_energy_mj"`
	TNTEquivalentKg         float64  `json:"tnt_equivalent_kg"`
	CollapseTimeMS          float64  `json:"collapse_time_ms"`
	EquivalentSphereRadiusM float64  `json:"equivalent_sphere_radius_m"`
	BulkModulusGPa          float64  `json:"bulk_modulus_gpa"`
	EndClosure              string   `json:"end_closure,omitempty"`
	Assumptions             []string `json:"assumptions"`
}

// ImplosionOf states the implosion hazard of hull h at gauge pressure
// pMPa. A cylinder whose spec names no end closure is taken with
// hemispherical heads beyond its length: the larger volume, the safe
// side for planning.
func ImplosionOf(h *Hull, pMPa float64) (*Implosion, error) {
	g := implosion.Geometry{Shape: implosion.Shape(h.Spec.Shape), InnerRadiusM: h.Spec.InnerRadiusM}
	var extra []string
	if h.Spec.Shape == "cylinder" {
		g.LengthM = h.Spec.LengthM
		g.EndClosure = implosion.EndClosure(h.Spec.EndClosure)
		if g.EndClosure == "" {
			g.EndClosure = implosion.EndHemispherical
			extra = append(extra, "end closures not specified in the hull spec: hemispherical heads beyond the length assumed (the larger volume, the safe side for planning); state end_closure in the spec")
		}
	}
	r, err := implosion.Estimate(g, pMPa)
	if err != nil {
		return nil, fmt.Errorf("implosion hazard of %s: %w", h.Serial, err)
	}
	return &Implosion{InternalVolumeM3: r.InternalVolumeM3, PressureMPa: r.PressureMPa, DepthM: seawater.MPaToDepth(pMPa, 90),
		EnergyMJ: r.EnergyMJ, PVEnergyMJ: r.PVEnergyMJ, WaterElasticMJ: r.WaterElasticMJ, TNTEquivalentKg: r.TNTEquivalentKg,
		CollapseTimeMS: r.CollapseTimeMS, EquivalentSphereRadiusM: r.EquivalentSphereRadiusM, BulkModulusGPa: r.BulkModulusGPa,
		EndClosure: string(g.EndClosure), Assumptions: append(extra, r.Assumptions...)}, nil
}

// predict estimates the damage of a planned dive as a ratio of the
// allowable, for the component it costs most: the hull's typical profile
// (the one of its last 10 dives with a pressure peak — surface trials
// left out, so ten of them do not hide the deep dives before — whose peak
// is nearest the planned pressure) scaled to the planned depth, its time
// at depth scaled to the planned bottom time. A hull with no dives gets a plain profile: one
// cycle from the surface to the planned pressure and the bottom time at
// it, never less than the design dive's (fatigue.design_bottom_time_min).
func (l *Ledger) predict(ctx context.Context, h *Hull, depthM, bottomMin float64) (float64, string, error) {
	target := seawater.DepthToMPa(depthM, 90) // the most pressure per metre: the safe side
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return math.Inf(1), "", inputErr(err)
	}
	rows, err := l.db.Query(ctx, `SELECT d.id, d.max_pressure_mpa, c.ranges, c.means, c.counts, coalesce(hd.levels, '{}'), coalesce(hd.seconds, '{}')
		FROM dives d LEFT JOIN dive_cycles c ON c.hull_id = d.hull_id AND c.dive_id = d.id AND c.series = 'pressure' AND c.chunk = 0 LEFT JOIN dive_holds hd ON hd.hull_id = d.hull_id AND hd.dive_id = d.id
		WHERE d.hull_id = $1 AND `+notVoided+` AND d.max_pressure_mpa > 0 ORDER BY d.start_time DESC LIMIT 10`, h.ID)
	if err != nil {
		return 0, "", err
	}
	defer rows.Close()
	var recent []plan.Recent
	for rows.Next() {
		var id uuid.UUID
		var peak float64
		var rg, mn, ct, lv, sec []float64
		if err := rows.Scan(&id, &peak, &rg, &mn, &ct, &lv, &sec); err != nil {
			return 0, "", err
		}
		if rg == nil {
			// A recent dive without its first part of counted cycles is
			// not left out of the prediction: it is refused.
			return 0, "", fmt.Errorf("dive %s has no counted pressure cycles (count them with hulltally assess; if they were counted, their first part is missing: run hulltally verify): no prediction is made without it", id)
		}
		r := plan.Recent{ID: id.String(), PeakMPa: peak, Cycles: joinCycles(rg, mn, ct)}
		for i := range lv {
			r.Holds = append(r.Holds, assess.Hold{LevelMPa: lv[i], Seconds: sec[i]})
		}
		recent = append(recent, r)
	}
	if err := rows.Err(); err != nil {
		return 0, "", err
	}
	rows.Close()
	ids := make([]uuid.UUID, len(recent))
	for i, r := range recent {
		ids[i] = uuid.MustParse(r.ID)
	}
	later, err := laterPressureParts(ctx, l.db, []uuid.UUID{h.ID}, ids)
	if err != nil {
		return 0, "", err
	}
	for i := range recent {
		recent[i].Cycles = append(recent[i].Cycles, later[ids[i]]...)
	}
	d, basis := plan.Predict(recent, target, bottomMin, l.cfg.Fatigue.DesignBottomTimeMin)
	res, err := assess.DiveDamage(d, comps, l.fat.settings)
	if err != nil {
		return 0, "", err
	}
	worst := 0.0
	for _, r := range res {
		ratio := l.fat.limits.Ratio(r.Damage)
		worst = math.Max(worst, ratio)
	}
	return worst, basis, nil
}

// Reason is a reason behind a status or a clearance, for output.
type Reason struct {
	Kind  string     `json:"kind"`
	Code  string     `json:"code,omitempty"`
	State string     `json:"state"`
	NoGo  bool       `json:"no_go"`
	Text  string     `json:"text"`
	At    *time.Time `json:"at,omitempty"`
}

// Flag is a raised rule, for output (a missing value prints as null).
type Flag struct {
	Rule      string  `json:"rule"`
	Title     string  `json:"title"`
	Level     string  `json:"level"`
	Value     Num     `json:"value"`
	Threshold float64 `json:"threshold"`
	When      string  `json:"comparison"`
	Unit      string  `json:"unit,omitempty"`
	Missing   bool    `json:"missing"`
	Detail    string  `json:"detail,omitempty"`
	Basis     string  `json:"basis"`
	Source    string  `json:"source"`
	Dive      string  `json:"dive,omitempty"`
	// At is when the event happened (the logger's clock for a dive);
	// RecordedAt when the ledger learned of it. Only a record later in
	// both clears the flag.
	At         *time.Time `json:"at,omitempty"`
	RecordedAt *time.Time `json:"recorded_at,omitempty"`
}

func when(t time.Time) *time.Time {
	if t.IsZero() {
		return nil
	}
	return &t
}

func reasonViews(rs []fitness.Reason) []Reason {
	out := make([]Reason, len(rs))
	for i, r := range rs {
		out[i] = Reason{Kind: r.Kind, Code: r.Code, State: string(r.State), NoGo: r.NoGo, Text: r.Text, At: when(r.At)}
	}
	return out
}

func flagViews(fs []fitness.Flag) []Flag {
	out := make([]Flag, len(fs))
	for i, f := range fs {
		out[i] = Flag{Rule: f.Rule, Title: f.Title, Level: string(f.Level), Value: Num(f.Value), Threshold: f.Threshold, When: string(f.When),
			Unit: f.Unit, Missing: f.Missing, Detail: f.Detail, Basis: f.Basis, Source: f.Source, Dive: f.Dive, At: when(f.At), RecordedAt: when(f.RecordedAt)}
	}
	return out
}

// BasisInfo is what a report states as its basis.
type BasisInfo struct {
	DFF         float64
	MeanStress  string
	Combine     string
	Curves      []CurveBasis
	Rules       []RuleBasis
	RulesSource string
}

// CurveBasis is a curve used, with its source.
type CurveBasis struct {
	Name, Source, Basis string
	Illustrative        bool
	// Kind is "S-N" or "stress-rupture"; Material, Mode (an S-N curve's
	// loading mode, a rupture curve's side), Application and Environment
	// (in words) are the library's.
	Kind, Material, Mode, Application, Environment string
}

// RuleBasis is a rule with its thresholds and source.
type RuleBasis struct {
	ID, Title, Thresholds, Source string
	// Measure and the thresholds as numbers (nil when the rule has no
	// such level).
	Measure     fitness.Measure
	Watch, Hold *fitness.Threshold
}

// ReportBasis lists the settings, the curves the hulls use and the rules.
func (l *Ledger) ReportBasis(hulls []*spec.Hull) (*BasisInfo, error) {
	r, src := l.rulesSet, l.rulesSrc
	b := &BasisInfo{DFF: l.fat.settings.DFF, MeanStress: string(l.fat.settings.MeanStress), Combine: string(l.fat.limits.Combination()), RulesSource: src}
	seen := map[string]bool{}
	for _, h := range hulls {
		for _, c := range h.Components {
			for _, name := range []string{c.Curve, c.RuptureCurve} {
				if name == "" || seen[name] {
					continue
				}
				seen[name] = true
				if cv, err := l.fat.lib.Curve(name); err == nil {
					b.Curves = append(b.Curves, CurveBasis{Name: name, Source: cv.Source, Basis: string(cv.Basis), Illustrative: cv.Illustrative,
						Kind: "S-N", Material: cv.Material, Mode: string(cv.Mode), Application: cv.Application, Environment: cv.Environment.Describe()})
				} else if rp, err := l.fat.lib.Rupture(name); err == nil {
					b.Curves = append(b.Curves, CurveBasis{Name: name, Source: rp.Source, Basis: string(rp.Basis), Illustrative: rp.Illustrative,
						Kind: "stress-rupture", Material: rp.Material, Mode: string(rp.Side), Application: rp.Application})
				}
			}
		}
	}
	sort.Slice(b.Curves, func(i, j int) bool { return b.Curves[i].Name < b.Curves[j].Name })
	for _, rule := range r.Rules {
		th := ""
		if rule.Watch != nil {
			th += "watch " + rule.Watch.String()
		}
		if rule.Hold != nil {
			if th != "" {
				th += "; "
			}
			th += "hold " + rule.Hold.String()
		}
		b.Rules = append(b.Rules, RuleBasis{ID: rule.ID, Title: rule.Title, Thresholds: th, Source: rule.Source,
			Measure: rule.Measure, Watch: rule.Watch, Hold: rule.Hold})
	}
	return b, nil
}

// isEvidenceMeasure reports whether a measure's flags are evidence of
// damage (acoustic emission, strain, an overload): while one is open, a
// fatigue projection means nothing.
func isEvidenceMeasure(m fitness.Measure) bool {
	switch m {
	case fitness.MeasureFelicityRatio, fitness.MeasureHoldEmission, fitness.MeasureComplianceChange,
		fitness.MeasureResidualStrain, fitness.MeasureResidualGrowth:
		return true
	}
	switch string(m) {
	case "hold_hits_after_settle", "historic_index", "severity", "high_amplitude_hits", "total_counts", "creep_strain", "strain_hysteresis", "proof_overshoot", "collapse_fraction":
		return true
	}
	return false
}

// voidLife takes the remaining-life figure away while the hull is on hold
// or withdrawn, or while a flag of evidence of damage is open: a figure
// is not shown where it is void.
func voidLife(dmg *Damages, v fitness.Verdict, r *fitness.Rules) {
	why := ""
	switch v.State {
	case fitness.Hold:
		why = "the hull is on hold"
	case fitness.Withdrawn:
		why = "the hull is withdrawn from service"
	}
	if why == "" && r != nil {
		measure := map[string]fitness.Measure{}
		for _, rule := range r.Rules {
			measure[rule.ID] = rule.Measure
		}
		for _, rs := range v.Reasons {
			if rs.Kind == "flag" && rs.State != fitness.Fit && isEvidenceMeasure(measure[rs.Code]) {
				why = "a flag of evidence of damage is open (" + rs.Code + ")"
				break
			}
		}
	}
	if why == "" {
		return
	}
	dmg.RemainingDives, dmg.RemainingAtRecentMean, dmg.RemainingAtDesignDive, dmg.RemainingMoreThan = nil, nil, nil, false
	dmg.RemainingAtRecentMeanMoreThan, dmg.RemainingAtDesignDiveMoreThan = false, false
	dmg.RemainingStatus = string(damage.LifeVoid)
	dmg.RemainingReason = damage.LifeVoidReason + ": " + why
}

// SurfaceToleranceMPa is the gauge pressure below which a sample is at
// the surface (ingest.surface_tolerance_mpa): a sensor check above it is
// counted as emission too.
func (l *Ledger) SurfaceToleranceMPa() float64 { return l.cfg.Ingest.SurfaceToleranceMPa }

// noteStatusAfter evaluates a hull's status after a write and appends it
// to the status history when it changed, so that every change is kept
// whoever wrote (the CLI, the demo, a script).
func (l *Ledger) noteStatusAfter(ctx context.Context, serial string) error {
	_, err := l.statusAfter(ctx, serial)
	return err
}

// statusAfter is noteStatusAfter returning the status it noted.
func (l *Ledger) statusAfter(ctx context.Context, serial string) (*Fitness, error) {
	f, err := l.evaluateAndNote(ctx, serial, now())
	if err != nil {
		return nil, fmt.Errorf("recorded; noting the hull's status failed: %w", err)
	}
	return f, nil
}
