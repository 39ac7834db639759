package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"sort"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/evidence"
	"hulltally/ledger/logfile"
)

// Evidence is one dive's evidence of damage, as stored (dive_evidence).
type Evidence struct {
	// Evaluated is false for a dive that never left the surface.
	Evaluated bool   `json:"evaluated"`
	Reason    string `json:"reason,omitempty"`
	// PeakMPa is the profile's peak; HoldStartS and HoldEndS bound the
	// hold (≥ 95 % of the peak), seconds from the first sample.
	PeakMPa    float64 `json:"peak_mpa"`
	HoldStartS float64 `json:"hold_start_s"`
	HoldEndS   float64 `json:"hold_end_s"`
	// PreviousMaxMPa is the highest pressure the hull had reached before
	// this dive (earlier dives and proof tests).
	PreviousMaxMPa float64     `json:"previous_max_mpa"`
	AE             *AEEvidence `json:"acoustic_emission"`
	Strain         []StrainEv  `json:"strain"`
	// MissingGauges are the hull's strain gauges with no column in this
	// dive's file; MissingAE is true when the hull has AE channels and the
	// dive has no hits file.
	MissingGauges []string `json:"missing_gauges"`
	MissingAE     bool     `json:"missing_ae"`
	// BaselineSource says where the compliance baseline came from.
	BaselineSource string `json:"baseline_source"`
}

// AEEvidence is a dive's acoustic-emission evidence.
type AEEvidence struct {
	Hits           int      `json:"hits"`
	OnsetMPa       *float64 `json:"onset_mpa"`
	FelicityRatio  *float64 `json:"felicity_ratio"`
	FelicityEval   bool     `json:"felicity_evaluated"`
	FelicityReason string   `json:"felicity_reason"`
	BeyondPrevious bool     `json:"beyond_previous_max"`
	HoldHits       int      `json:"hold_hits"`
	HoldEnergy     float64  `json:"hold_energy"`
	HoldDecays     bool     `json:"hold_decays"`
	HoldReason     string   `json:"hold_reason"`
	HistoricIndex  *float64 `json:"historic_index"`
	Severity       *float64 `json:"severity"`
	OnsetCriterion string   `json:"onset_criterion"`
}

// StrainEv is one gauge's strain evidence.
type StrainEv struct {
	Gauge              string   `json:"gauge"`
	ComplianceUEPerMPa *float64 `json:"compliance_ue_per_mpa"`
	R2                 float64  `json:"r2"`
	BaselineUEPerMPa   *float64 `json:"baseline_ue_per_mpa"`
	ComplianceChange   *float64 `json:"compliance_change"`
	ResidualUE         *float64 `json:"residual_ue"`
	Hysteresis         *float64 `json:"hysteresis_normalised"`
	CreepUE            *float64 `json:"creep_ue"`
	Notes              []string `json:"notes,omitempty"`
}

func ptr(v float64) *float64 { return &v }

// toProfile turns the decimated profile into the evidence package's form.
func toProfile(p *profileAcc) evidence.Profile {
	ep := evidence.Profile{TimeS: p.TimeS, Pressure: p.Press, Strain: map[string][]float64{}}
	for g, name := range p.gauges {
		ep.Strain[name] = p.Strain[g]
	}
	return ep
}

// diveEvidence computes the evidence of a dive being logged (in tx, which
// sees the hull's earlier dives and proof tests).
func (l *Ledger) diveEvidence(ctx context.Context, tx pgx.Tx, h *Hull, start time.Time, prof *profileAcc, hits []evidence.Hit, hadAE bool, gauges []string) (*Evidence, error) {
	ev := &Evidence{MissingGauges: []string{}, Strain: []StrainEv{}}
	for _, g := range h.Spec.StrainGauges() {
		if !containsStr(gauges, g) {
			ev.MissingGauges = append(ev.MissingGauges, g)
		}
	}
	ev.MissingAE = len(h.Spec.AEChannels()) > 0 && !hadAE
	// The highest pressure reached before this dive.
	err := tx.QueryRow(ctx, `SELECT greatest(
		coalesce((SELECT max(max_pressure_mpa) FROM dives WHERE hull_id = $1 AND start_time < $2), 0),
		coalesce((SELECT max(pressure_mpa) FROM proof_tests WHERE hull_id = $1 AND at < $2 AND result = 'pass'), 0))`, h.ID, start).Scan(&ev.PreviousMaxMPa)
	if err != nil {
		return nil, fmt.Errorf("evidence: previous maximum pressure: %w", err)
	}
	p := toProfile(prof)
	ph, err := evidence.Phases(p, l.cfg.Evidence.HoldFraction)
	if err != nil {
		ev.Reason = fmt.Sprintf("not evaluated: %v", err)
		return ev, nil
	}
	ev.Evaluated, ev.PeakMPa, ev.HoldStartS, ev.HoldEndS = true, ph.PeakMPa, ph.HoldStartS, ph.HoldEndS
	if hadAE {
		ev.AE = l.aeEvidence(p, ph, hits, ev.PreviousMaxMPa, h.Spec.ProofPressureMPa)
	}
	base, src, err := l.baseline(ctx, tx, h, start)
	if err != nil {
		return nil, err
	}
	ev.BaselineSource = src
	res, err := evidence.Strain(p, ph, base, evidence.DefaultStrainCriterion())
	if err != nil {
		return nil, fmt.Errorf("evidence: strain: %w", err)
	}
	for _, r := range res {
		s := StrainEv{Gauge: r.Gauge}
		if r.Compliance.Computed {
			s.ComplianceUEPerMPa, s.R2 = ptr(r.Compliance.UEPerMPa), r.Compliance.R2
		} else {
			s.Notes = append(s.Notes, "compliance: "+r.Compliance.Reason)
		}
		if r.Change.Computed {
			s.BaselineUEPerMPa, s.ComplianceChange = ptr(r.Change.BaselineUEPerMPa), ptr(r.Change.Fraction)
		} else if r.Change.Reason != "" {
			s.Notes = append(s.Notes, "change: "+r.Change.Reason)
		}
		if r.Residual.Computed {
			s.ResidualUE = ptr(r.Residual.PressureCorrectedUE)
		} else {
			s.Notes = append(s.Notes, "residual: "+r.Residual.Reason)
		}
		if r.Hysteresis.Computed {
			s.Hysteresis = ptr(r.Hysteresis.Normalised)
		}
		if r.Creep.Computed {
			s.CreepUE = ptr(r.Creep.PressureCorrectedUE)
		}
		ev.Strain = append(ev.Strain, s)
	}
	return ev, nil
}

func (l *Ledger) aeEvidence(p evidence.Profile, ph evidence.Phase, hits []evidence.Hit, prevMax, proof float64) *AEEvidence {
	cfg := l.cfg.Evidence
	ae := &AEEvidence{Hits: len(hits)}
	pr := evidence.PressureAt(p, hits)
	ref := prevMax
	if !(ref > 0) {
		ref = proof
	}
	crit := evidence.DefaultOnsetCriterion(ref)
	crit.IncrementMPa, crit.Threshold, crit.MinAmplitudeDB = cfg.OnsetIncrementFrac*ref, cfg.OnsetHits, cfg.MinAmplitudeDB
	ae.OnsetCriterion = fmt.Sprintf("%s ≥ %g per %.3g MPa increment, amplitude ≥ %g dB_AE", crit.Measure, crit.Threshold, crit.IncrementMPa, crit.MinAmplitudeDB)
	if on, err := evidence.Onset(hits, pr, ph, crit); err == nil {
		ae.OnsetMPa = on.OnsetMPa
	}
	f := evidence.Felicity(ae.OnsetMPa, prevMax, ph.PeakMPa)
	ae.FelicityRatio, ae.FelicityEval, ae.FelicityReason, ae.BeyondPrevious = f.Ratio, f.Evaluated, f.Reason, f.BeyondPrevious
	hc := evidence.HoldCriterion{Windows: cfg.HoldWindows, DecayFraction: cfg.HoldDecayFraction, QuietHits: cfg.HoldQuietHits,
		MinHits: cfg.HoldMinHits, MinAmplitudeDB: cfg.MinAmplitudeDB}
	hr := evidence.HoldEmission(hits, pr, ph, hc)
	ae.HoldHits, ae.HoldEnergy, ae.HoldDecays, ae.HoldReason = hr.Hits, hr.Energy, hr.Decays, hr.Reason
	if !hr.Evaluated {
		ae.HoldDecays = false // not judged: lean to the safe side
	}
	counted := evidence.FilterAmplitude(hits, crit.MinAmplitudeDB)
	if v, ok := evidence.HistoricIndex(counted, evidence.DefaultK); ok {
		ae.HistoricIndex = ptr(v)
	}
	if v, ok := evidence.Severity(counted, evidence.DefaultSeverityJ); ok {
		ae.Severity = ptr(v)
	}
	return ae
}

// baseline is the compliance per gauge that a dive starting at start is
// compared with: the latest passing proof test with strain before it,
// else the mean of the hull's first dives.
func (l *Ledger) baseline(ctx context.Context, q querier, h *Hull, start time.Time) (map[string]float64, string, error) {
	var bj string
	var at time.Time
	err := q.QueryRow(ctx, `SELECT baseline_json, at FROM proof_tests WHERE hull_id = $1 AND at < $2 AND result = 'pass' AND baseline_json <> '{}'
		ORDER BY at DESC LIMIT 1`, h.ID, start).Scan(&bj, &at)
	if err == nil {
		m := map[string]float64{}
		if err := json.Unmarshal([]byte(bj), &m); err != nil {
			return nil, "", fmt.Errorf("proof test baseline: %w", err)
		}
		return m, "proof test of " + at.UTC().Format("2006-01-02"), nil
	}
	if err != pgx.ErrNoRows {
		return nil, "", fmt.Errorf("evidence: baseline: %w", err)
	}
	rows, err := q.Query(ctx, `SELECT e.evidence_json FROM dive_evidence e JOIN dives d ON d.id = e.dive_id
		WHERE d.hull_id = $1 AND d.start_time < $2 ORDER BY d.start_time LIMIT $3`, h.ID, start, l.cfg.Evidence.BaselineDives)
	if err != nil {
		return nil, "", fmt.Errorf("evidence: baseline dives: %w", err)
	}
	defer rows.Close()
	sum, n := map[string]float64{}, map[string]int{}
	dives := 0
	for rows.Next() {
		var js string
		if err := rows.Scan(&js); err != nil {
			return nil, "", err
		}
		var e Evidence
		if err := json.Unmarshal([]byte(js), &e); err != nil {
			return nil, "", err
		}
		dives++
		for _, s := range e.Strain {
			if s.ComplianceUEPerMPa != nil {
				sum[s.Gauge] += *s.ComplianceUEPerMPa
				n[s.Gauge]++
			}
		}
	}
	if err := rows.Err(); err != nil {
		return nil, "", err
	}
	if dives < l.cfg.Evidence.BaselineDives {
		return nil, fmt.Sprintf("none yet: no proof test with strain, and fewer than %d earlier dives", l.cfg.Evidence.BaselineDives), nil
	}
	m := map[string]float64{}
	for g, s := range sum {
		m[g] = s / float64(n[g])
	}
	return m, fmt.Sprintf("mean of the hull's first %d dives (no proof test with strain recorded)", l.cfg.Evidence.BaselineDives), nil
}

func evidenceCanon(dive uuid.UUID, js string) []byte {
	c := newCanon("dive_evidence")
	c.uuid(dive)
	c.str(js)
	return c.b
}

func storeEvidence(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, ev *Evidence) (chainRec, error) {
	b, err := json.Marshal(ev)
	if err != nil {
		return chainRec{}, err
	}
	js := string(b)
	if _, err := tx.Exec(ctx, "INSERT INTO dive_evidence (dive_id, hull_id, evidence_json) VALUES ($1,$2,$3)", dive, hull, js); err != nil {
		return chainRec{}, fmt.Errorf("storing evidence: %w", err)
	}
	return chainRec{"dive_evidence", dive.String(), evidenceCanon(dive, js)}, nil
}

// EvidenceOf returns a dive's stored evidence (nil for dives logged before
// evidence was kept).
func (l *Ledger) EvidenceOf(ctx context.Context, dive uuid.UUID) (*Evidence, error) {
	var js string
	err := l.pool.QueryRow(ctx, "SELECT evidence_json FROM dive_evidence WHERE dive_id = $1", dive).Scan(&js)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var e Evidence
	if err := json.Unmarshal([]byte(js), &e); err != nil {
		return nil, fmt.Errorf("dive %s: evidence: %w", dive, err)
	}
	return &e, nil
}

// HullEvidence returns the stored evidence of every dive of a hull, by
// dive (dives logged before evidence was kept are absent).
func (l *Ledger) HullEvidence(ctx context.Context, hull uuid.UUID) (map[uuid.UUID]*Evidence, error) {
	rows, err := l.pool.Query(ctx, "SELECT dive_id, evidence_json FROM dive_evidence WHERE hull_id = $1", hull)
	if err != nil {
		return nil, fmt.Errorf("evidence of hull %s: %w", hull, err)
	}
	defer rows.Close()
	out := map[uuid.UUID]*Evidence{}
	for rows.Next() {
		var id uuid.UUID
		var js string
		if err := rows.Scan(&id, &js); err != nil {
			return nil, err
		}
		e := new(Evidence)
		if err := json.Unmarshal([]byte(js), e); err != nil {
			return nil, fmt.Errorf("dive %s: evidence: %w", id, err)
		}
		out[id] = e
	}
	return out, rows.Err()
}

// complianceOf returns the compliance per gauge measured on a dive (a
// proof test's baseline).
func (l *Ledger) complianceOf(ctx context.Context, dive uuid.UUID) (map[string]float64, error) {
	e, err := l.EvidenceOf(ctx, dive)
	if err != nil {
		return nil, err
	}
	m := map[string]float64{}
	if e == nil {
		return m, nil
	}
	for _, s := range e.Strain {
		if s.ComplianceUEPerMPa != nil {
			m[s.Gauge] = *s.ComplianceUEPerMPa
		}
	}
	return m, nil
}

// hitsForEvidence converts parsed hits to the evidence package's form.
func hitsForEvidence(hs []logfile.Hit, firstNS int64) []evidence.Hit {
	out := make([]evidence.Hit, len(hs))
	for i, h := range hs {
		out[i] = evidence.Hit{TimeS: float64(h.TimeNS-firstNS) / 1e9, Channel: h.Channel, AmplitudeDB: h.AmplitudeDB,
			Energy: h.Energy, Counts: float64(h.Counts), DurationUS: h.DurationUS, RiseUS: h.RiseUS}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].TimeS < out[j].TimeS })
	return out
}
