package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/evidence"
	"hulltally/ledger/logfile"
)

// Evidence is one dive's evidence of damage, as stored (dive_evidence,
// and evidence_revisions when judged again).
type Evidence struct {
	// Evaluated is false for a dive that never left the surface.
	Evaluated bool   `json:"evaluated"`
	Reason    string `json:"reason,omitempty"`
	// PeakMPa is the profile's peak; HoldStartS and HoldEndS bound the
	// hold (≥ the hold fraction of the peak), seconds from the first
	// sample.
	PeakMPa    float64 `json:"peak_mpa"`
	HoldStartS float64 `json:"hold_start_s"`
	HoldEndS   float64 `json:"hold_end_s"`
	// PreviousMaxMPa is the highest pressure the hull had reached before
	// this dive (every earlier dive that is not void and every proof test,
	// passed or failed): the reference of the Felicity ratio.
	PreviousMaxMPa float64 `json:"previous_max_mpa"`
	// ReferenceSource says which record set the reference.
	ReferenceSource string      `json:"reference_source"`
	AE              *AEEvidence `json:"acoustic_emission"`
	// Channels are the acoustic-emission figures per configured channel.
	Channels []ChannelEv `json:"channels"`
	Strain   []StrainEv  `json:"strain"`
	// MissingGauges are the hull's strain gauges with no column in this
	// dive's file; MissingAE is true when the hull has AE channels and the
	// dive has no hits file. GaugeProblems are gauges whose data is
	// doubtful (constant, out of range): missing evidence too.
	MissingGauges []string          `json:"missing_gauges"`
	MissingAE     bool              `json:"missing_ae"`
	GaugeProblems map[string]string `json:"gauge_problems,omitempty"`
	// BaselineSource says where the compliance baseline came from.
	BaselineSource string `json:"baseline_source"`
	// DataQuality lists what makes the record doubtful.
	DataQuality []Finding `json:"data_quality"`
	// SurfaceTempBeforeC and SurfaceTempAfterC are the mean temperatures
	// at the surface before and after the dive, when temp_c was logged.
	SurfaceTempBeforeC *float64 `json:"surface_temp_before_c,omitempty"`
	SurfaceTempAfterC  *float64 `json:"surface_temp_after_c,omitempty"`
}

// AEEvidence is a dive's acoustic-emission evidence, over all channels.
type AEEvidence struct {
	Hits     int      `json:"hits"`
	OnsetMPa *float64 `json:"onset_mpa"`
	// FelicityRatio is null when it was not evaluated (FelicityReason
	// says why); FelicityLowerBound is what a dive that stayed below the
	// reference without significant emission proves (ratio ≥ bound).
	FelicityRatio      *float64 `json:"felicity_ratio"`
	FelicityLowerBound *float64 `json:"felicity_lower_bound"`
	FelicityEval       bool     `json:"felicity_evaluated"`
	FelicityReason     string   `json:"felicity_reason"`
	BeyondPrevious     bool     `json:"beyond_previous_max"`
	HoldHits           int      `json:"hold_hits"`
	HoldEnergy         float64  `json:"hold_energy"`
	HoldDecays         bool     `json:"hold_decays"`
	// HoldHitsAfterSettle counts the hits after the first settling
	// seconds of the hold; HoldAbsoluteJudged is false when the hold was
	// too short to judge it; HoldSignificant is the verdict (absolute
	// count or no decay).
	HoldHitsAfterSettle int    `json:"hold_hits_after_settle"`
	HoldAbsoluteJudged  bool   `json:"hold_absolute_judged"`
	HoldSignificant     bool   `json:"hold_significant"`
	HoldReason          string `json:"hold_reason"`
	// HistoricIndex and Severity over all channels pooled, for
	// reference only: the rules judge them per channel (Channels).
	HistoricIndex  *float64 `json:"historic_index"`
	Severity       *float64 `json:"severity"`
	OnsetCriterion string   `json:"onset_criterion"`
	// SensorChecks is the number of sensor checks in the hits file.
	SensorChecks int `json:"sensor_checks"`
}

// ChannelEv is one acoustic-emission channel's figures for one dive.
type ChannelEv struct {
	Channel       int      `json:"channel"`
	Hits          int      `json:"hits"`
	HistoricIndex *float64 `json:"historic_index"`
	Severity      *float64 `json:"severity"`
	// HistoricIndexTooFew and SeverityTooFew say that the figure was not
	// computed because the channel had too few hits (no sign of damage).
	HistoricIndexTooFew bool    `json:"historic_index_too_few_hits,omitempty"`
	SeverityTooFew      bool    `json:"severity_too_few_hits,omitempty"`
	HighAmplitudeHits   int     `json:"high_amplitude_hits"`
	TotalCounts         float64 `json:"total_counts"`
	// Present is true when the channel recorded a hit or passed a sensor
	// check in the dive; Checked when it passed a check.
	Present bool   `json:"present"`
	Checked bool   `json:"checked"`
	Notes   string `json:"notes,omitempty"`
}

// StrainEv is one gauge's strain evidence.
type StrainEv struct {
	Gauge              string   `json:"gauge"`
	ComplianceUEPerMPa *float64 `json:"compliance_ue_per_mpa"`
	R2                 float64  `json:"r2"`
	BaselineUEPerMPa   *float64 `json:"baseline_ue_per_mpa"`
	ComplianceChange   *float64 `json:"compliance_change"`
	ResidualUE         *float64 `json:"residual_ue"`
	// ResidualNotComparable says why the residual cannot be compared
	// (surface temperatures differ), when it cannot.
	ResidualNotComparable string   `json:"residual_not_comparable,omitempty"`
	Hysteresis            *float64 `json:"hysteresis_normalised"`
	CreepUE               *float64 `json:"creep_ue"`
	Notes                 []string `json:"notes,omitempty"`
}

func ptr(v float64) *float64 { return &v }

// fin is v when it is a finite number, nil otherwise: a figure that came
// out NaN or infinite (a constant gauge's fit, say) is not a figure.
func fin(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// toProfile turns the decimated profile into the evidence package's form.
func toProfile(p *profileAcc) evidence.Profile {
	ep := evidence.Profile{TimeS: p.TimeS, Pressure: p.Press, Strain: map[string][]float64{}}
	for g, name := range p.gauges {
		ep.Strain[name] = p.Strain[g]
	}
	return ep
}

// evidenceInput is what a dive's evidence is judged from: its profile,
// hits and sensor checks, and what logging found about the record.
type evidenceInput struct {
	dive       uuid.UUID
	start      time.Time
	prof       *profileAcc
	hits       []evidence.Hit
	checks     []evidence.SensorCheck
	hadAE      bool
	gauges     []string
	quality    []Finding
	tempBefore *float64
	tempAfter  *float64
}

// reference returns the highest pressure the hull had reached before
// start (every earlier dive that is not void, other than the dive itself,
// and every proof test, passed or failed) and which record it is.
func reference(ctx context.Context, q querier, h *Hull, dive uuid.UUID, start time.Time) (float64, string, error) {
	var dp, pp float64
	var dat, pat *time.Time
	err := q.QueryRow(ctx, `SELECT
		coalesce((SELECT max(d.max_pressure_mpa) FROM dives d WHERE d.hull_id = $1 AND d.start_time < $2 AND d.id <> $3 AND `+notVoided+`), 0),
		(SELECT d.start_time FROM dives d WHERE d.hull_id = $1 AND d.start_time < $2 AND d.id <> $3 AND `+notVoided+` ORDER BY d.max_pressure_mpa DESC LIMIT 1),
		coalesce((SELECT max(pressure_mpa) FROM proof_tests WHERE hull_id = $1 AND at < $2), 0),
		(SELECT at FROM proof_tests WHERE hull_id = $1 AND at < $2 ORDER BY pressure_mpa DESC LIMIT 1)`, h.ID, start, dive).Scan(&dp, &dat, &pp, &pat)
	if err != nil {
		return 0, "", fmt.Errorf("evidence: reference pressure: %w", err)
	}
	switch {
	case pp >= dp && pat != nil:
		return pp, "proof test of " + pat.UTC().Format(time.DateOnly), nil
	case dat != nil:
		return dp, "dive of " + dat.UTC().Format(time.RFC3339), nil
	}
	return 0, "none: no earlier dive or proof test", nil
}

// diveEvidence judges a dive's evidence (in q, which sees the hull's
// earlier dives and proof tests).
func (l *Ledger) diveEvidence(ctx context.Context, q querier, h *Hull, in evidenceInput) (*Evidence, error) {
	ev := &Evidence{MissingGauges: []string{}, Strain: []StrainEv{}, Channels: []ChannelEv{}, DataQuality: in.quality,
		SurfaceTempBeforeC: in.tempBefore, SurfaceTempAfterC: in.tempAfter}
	if ev.DataQuality == nil {
		ev.DataQuality = []Finding{}
	}
	for _, g := range h.Spec.StrainGauges() {
		if !containsStr(in.gauges, g) {
			ev.MissingGauges = append(ev.MissingGauges, g)
		}
	}
	ev.MissingAE = len(h.Spec.AEChannels()) > 0 && !in.hadAE
	var err error
	ev.PreviousMaxMPa, ev.ReferenceSource, err = reference(ctx, q, h, in.dive, in.start)
	if err != nil {
		return nil, err
	}
	p := toProfile(in.prof)
	ph, err := evidence.Phases(p, l.cfg.Evidence.HoldFraction)
	if err != nil {
		ev.Reason = fmt.Sprintf("not evaluated: %v", err)
		return ev, nil
	}
	ev.Evaluated, ev.PeakMPa, ev.HoldStartS, ev.HoldEndS = true, ph.PeakMPa, ph.HoldStartS, ph.HoldEndS
	if in.hadAE {
		ev.AE, ev.Channels = l.aeEvidence(p, ph, in.hits, in.checks, h.Spec.AEChannels(), ev.PreviousMaxMPa)
	}
	base, src, err := l.baseline(ctx, q, h, in.start)
	if err != nil {
		return nil, err
	}
	ev.BaselineSource = src
	res, err := evidence.Strain(p, ph, base, evidence.DefaultStrainCriterion())
	if err != nil {
		return nil, fmt.Errorf("evidence: strain: %w", err)
	}
	tempNote := ""
	if in.tempBefore != nil && in.tempAfter != nil {
		if d := math.Abs(*in.tempAfter - *in.tempBefore); d > l.cfg.Evidence.ResidualTempToleranceC {
			tempNote = fmt.Sprintf("not comparable: the surface temperature after the dive (%.1f °C) differs from before (%.1f °C) by %.1f °C, more than %.1f °C",
				*in.tempAfter, *in.tempBefore, d, l.cfg.Evidence.ResidualTempToleranceC)
		}
	}
	for _, r := range res {
		s := StrainEv{Gauge: r.Gauge}
		if !r.QualityOK {
			if ev.GaugeProblems == nil {
				ev.GaugeProblems = map[string]string{}
			}
			ev.GaugeProblems[r.Gauge] = r.QualityReason
		}
		if r.Compliance.Computed {
			s.ComplianceUEPerMPa = fin(r.Compliance.UEPerMPa)
			if v := fin(r.Compliance.R2); v != nil {
				s.R2 = *v
			}
		} else {
			s.Notes = append(s.Notes, "compliance: "+r.Compliance.Reason)
		}
		if r.Change.Computed {
			s.BaselineUEPerMPa, s.ComplianceChange = fin(r.Change.BaselineUEPerMPa), fin(r.Change.Fraction)
		} else if r.Change.Reason != "" {
			s.Notes = append(s.Notes, "change: "+r.Change.Reason)
		}
		switch {
		case r.Residual.Computed && tempNote != "":
			s.ResidualNotComparable = tempNote
			s.Notes = append(s.Notes, "residual: "+tempNote)
		case r.Residual.Computed:
			s.ResidualUE = fin(r.Residual.PressureCorrectedUE)
		default:
			s.Notes = append(s.Notes, "residual: "+r.Residual.Reason)
		}
		if r.Hysteresis.Computed {
			s.Hysteresis = fin(r.Hysteresis.Normalised)
		} else if r.Hysteresis.Reason != "" {
			s.Notes = append(s.Notes, "hysteresis: "+r.Hysteresis.Reason)
		}
		if r.Creep.Computed {
			s.CreepUE = fin(r.Creep.PressureCorrectedUE)
		} else if r.Creep.Reason != "" {
			s.Notes = append(s.Notes, "creep: "+r.Creep.Reason)
		}
		if !r.QualityOK {
			s.Notes = append(s.Notes, "doubtful gauge: "+r.QualityReason+" (its figures are kept and judged; it counts as missing evidence)")
		}
		ev.Strain = append(ev.Strain, s)
	}
	return ev, nil
}

// aeEvidence judges the acoustic emission of a dive: onset by a sliding
// window, Felicity ratio against the reference, emission in the hold (an
// absolute count beside the decay test), and per channel figures with
// the sensors that said nothing.
func (l *Ledger) aeEvidence(p evidence.Profile, ph evidence.Phase, hits []evidence.Hit, checks []evidence.SensorCheck, channels []int, ref float64) (*AEEvidence, []ChannelEv) {
	cfg := l.cfg.Evidence
	hits = checksAtDepthAsHits(p, hits, checks, l.cfg.Ingest.SurfaceToleranceMPa)
	ae := &AEEvidence{Hits: len(hits), SensorChecks: len(checks)}
	pr := evidence.PressureAt(p, hits)
	crit := evidence.DefaultOnsetCriterion(ref)
	crit.IncrementMPa, crit.Threshold, crit.MinAmplitudeDB = cfg.OnsetIncrementFrac*ref, cfg.OnsetHits, cfg.MinAmplitudeDB
	ae.OnsetCriterion = fmt.Sprintf("%s ≥ %g within any rise of %.3g MPa (%.3g %% of the reference %.4g MPa), amplitude ≥ %g dB_AE",
		crit.Measure, crit.Threshold, crit.IncrementMPa, 100*cfg.OnsetIncrementFrac, ref, crit.MinAmplitudeDB)
	onsetOK := false
	if on, err := evidence.Onset(hits, pr, ph, crit); err == nil {
		ae.OnsetMPa, onsetOK = on.OnsetMPa, true
	} else {
		ae.OnsetCriterion += fmt.Sprintf(" (not evaluated: %v)", err)
	}
	if onsetOK {
		f := evidence.FelicityWindow(ae.OnsetMPa, ref, ph, crit.IncrementMPa)
		ae.FelicityRatio, ae.FelicityLowerBound, ae.FelicityEval, ae.FelicityReason, ae.BeyondPrevious = f.Ratio, f.LowerBound, f.Evaluated, f.Reason, f.BeyondPrevious
	} else {
		ae.FelicityReason = "Felicity ratio not evaluated: the onset of significant emission could not be judged (no reference pressure)"
	}
	hc := evidence.HoldCriterion{Windows: cfg.HoldWindows, DecayFraction: cfg.HoldDecayFraction, QuietHits: cfg.HoldQuietHits,
		MinHits: cfg.HoldMinHits, MinAmplitudeDB: cfg.MinAmplitudeDB, SettleS: cfg.HoldSettleS, MaxHitsAfterSettle: cfg.HoldMaxHitsAfterSettle}
	hr := evidence.HoldEmission(hits, pr, ph, hc)
	ae.HoldHits, ae.HoldEnergy, ae.HoldDecays, ae.HoldReason = hr.Hits, hr.Energy, hr.Decays, hr.Reason
	ae.HoldHitsAfterSettle, ae.HoldAbsoluteJudged, ae.HoldSignificant = hr.HitsAfterSettle, hr.AbsoluteJudged, hr.Significant
	if !hr.Evaluated {
		ae.HoldDecays, ae.HoldSignificant = false, true // not judged: lean to the safe side
	}
	counted := evidence.FilterAmplitude(hits, crit.MinAmplitudeDB)
	if v, ok := evidence.HistoricIndex(counted, evidence.DefaultK); ok {
		ae.HistoricIndex = ptr(v)
	}
	if v, ok := evidence.Severity(counted, evidence.DefaultSeverityJ); ok {
		ae.Severity = ptr(v)
	}
	cc := evidence.DefaultChannelCriterion()
	cc.MinAmplitudeDB, cc.HighAmplitudeDB, cc.CheckMinDB = cfg.MinAmplitudeDB, cfg.HighAmplitudeDB, cfg.SensorCheckMinDB
	var out []ChannelEv
	for _, r := range evidence.Channels(hits, channels, checks, cc) {
		c := ChannelEv{Channel: r.Channel, Hits: r.Hits, HighAmplitudeHits: r.HighAmplitudeHits, TotalCounts: r.TotalCounts,
			Present: r.Present, Checked: r.Checked, Notes: r.Reason}
		c.HistoricIndex, c.Severity = r.HistoricIndex, r.Severity
		// Too few hits for the figure is no sign of damage; anything
		// else that left it out is missing.
		c.HistoricIndexTooFew = r.HistoricIndex == nil && evidence.DefaultK(r.Hits) < 0
		c.SeverityTooFew = r.Severity == nil && r.Hits < evidence.DefaultSeverityJ
		out = append(out, c)
	}
	return ae, out
}

// baseline is the compliance per gauge that a dive starting at start is
// compared with: the latest passing proof test with strain before it,
// else the mean of the hull's first dives (not void).
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
	rows, err := q.Query(ctx, `SELECT e.evidence_json FROM dive_evidence e JOIN dives d ON d.hull_id = e.hull_id AND d.id = e.dive_id
		WHERE d.hull_id = $1 AND d.start_time < $2 AND `+notVoided+` ORDER BY d.recorded_at, d.start_time LIMIT $3`, h.ID, start, l.cfg.Evidence.BaselineDives)
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
	return chainRec{kind: "dive_evidence", key: dive.String(), canon: evidenceCanon(dive, js)}, nil
}

// EvidenceOf returns a dive's stored evidence (nil for dives logged before
// evidence was kept).
func (l *Ledger) EvidenceOf(ctx context.Context, dive uuid.UUID) (*Evidence, error) {
	var js string
	err := l.db.QueryRow(ctx, "SELECT "+effectiveEvidence+" FROM dives d WHERE d.id = $1", dive).Scan(&js)
	if err == pgx.ErrNoRows || (err == nil && js == "") {
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
	rows, err := l.db.Query(ctx, "SELECT d.id, "+effectiveEvidence+" FROM dives d WHERE d.hull_id = $1", hull)
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
		if js == "" {
			continue
		}
		e := new(Evidence)
		if err := json.Unmarshal([]byte(js), e); err != nil {
			return nil, fmt.Errorf("dive %s: evidence: %w", id, err)
		}
		out[id] = e
	}
	return out, rows.Err()
}

// hitsForEvidence converts parsed hits to the evidence package's form:
// the hits, and the sensor checks apart, in time order.
func hitsForEvidence(hs []logfile.Hit, firstNS int64) ([]evidence.Hit, []evidence.SensorCheck) {
	var out []evidence.Hit
	var checks []evidence.SensorCheck
	for _, h := range hs {
		t := float64(h.TimeNS-firstNS) / 1e9
		if h.Event != logfile.EventHit {
			checks = append(checks, evidence.SensorCheck{Channel: h.Channel, TimeS: t, Kind: h.Event.String(), AmplitudeDB: h.AmplitudeDB})
			continue
		}
		out = append(out, evidence.Hit{TimeS: t, Channel: h.Channel, AmplitudeDB: h.AmplitudeDB,
			Energy: h.Energy, Counts: float64(h.Counts), DurationUS: h.DurationUS, RiseUS: h.RiseUS})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].TimeS < out[j].TimeS })
	return out, checks
}

// EvidenceView is a dive's evidence as people read it (dive show --json,
// dive log --json): the Felicity ratio with its reference, the onset,
// the hold emission, the figures per channel and per gauge, and the
// data-quality findings.
type EvidenceView struct {
	Evaluated          bool     `json:"evaluated"`
	Reason             string   `json:"reason,omitempty"`
	PeakMPa            float64  `json:"peak_mpa"`
	FelicityRatio      *float64 `json:"felicity_ratio"`
	FelicityLowerBound *float64 `json:"felicity_lower_bound"`
	FelicityReason     string   `json:"felicity_reason"`
	OnsetMPa           *float64 `json:"onset_mpa"`
	OnsetCriterion     string   `json:"onset_criterion,omitempty"`
	// ReferencePressureMPa is null when the hull had no earlier dive or
	// proof test (no reference).
	ReferencePressureMPa *float64 `json:"reference_pressure_mpa"`
	ReferenceSource      string   `json:"reference_source"`
	// HoldEmission is nil for a dive without acoustic-emission data.
	HoldEmission  *HoldView         `json:"hold_emission"`
	AEHits        int               `json:"ae_hits"`
	SensorChecks  int               `json:"sensor_checks"`
	MissingAE     bool              `json:"missing_ae"`
	Channels      []ChannelEv       `json:"channels"`
	Gauges        []StrainEv        `json:"gauges"`
	MissingGauges []string          `json:"missing_gauges"`
	GaugeProblems map[string]string `json:"gauge_problems"`
	Baseline      string            `json:"baseline_source"`
	DataQuality   []Finding         `json:"data_quality"`
}

// HoldView is the emission during the hold at depth.
type HoldView struct {
	Hits            int     `json:"hits"`
	HitsAfterSettle int     `json:"hits_after_settle"`
	AbsoluteJudged  bool    `json:"absolute_judged"`
	Decays          bool    `json:"decays"`
	Significant     bool    `json:"significant"`
	Energy          float64 `json:"energy"`
	Reason          string  `json:"reason"`
}

// View turns stored evidence into its reading form; nil gives nil.
func (e *Evidence) View() *EvidenceView {
	if e == nil {
		return nil
	}
	v := &EvidenceView{Evaluated: e.Evaluated, Reason: e.Reason, PeakMPa: e.PeakMPa, ReferencePressureMPa: fin(e.PreviousMaxMPa),
		ReferenceSource: e.ReferenceSource, MissingAE: e.MissingAE, Channels: e.Channels, Gauges: e.Strain,
		MissingGauges: e.MissingGauges, GaugeProblems: e.GaugeProblems, Baseline: e.BaselineSource, DataQuality: e.DataQuality}
	if e.PreviousMaxMPa <= 0 {
		v.ReferencePressureMPa = nil
	}
	if v.Channels == nil {
		v.Channels = []ChannelEv{}
	}
	if v.Gauges == nil {
		v.Gauges = []StrainEv{}
	}
	if v.GaugeProblems == nil {
		v.GaugeProblems = map[string]string{}
	}
	if v.DataQuality == nil {
		v.DataQuality = []Finding{}
	}
	if ae := e.AE; ae != nil {
		v.FelicityRatio, v.FelicityLowerBound, v.FelicityReason = ae.FelicityRatio, ae.FelicityLowerBound, ae.FelicityReason
		v.OnsetMPa, v.OnsetCriterion, v.AEHits, v.SensorChecks = ae.OnsetMPa, ae.OnsetCriterion, ae.Hits, ae.SensorChecks
		v.HoldEmission = &HoldView{Hits: ae.HoldHits, HitsAfterSettle: ae.HoldHitsAfterSettle, AbsoluteJudged: ae.HoldAbsoluteJudged,
			Decays: ae.HoldDecays, Significant: ae.HoldSignificant, Energy: ae.HoldEnergy, Reason: ae.HoldReason}
	} else {
		v.FelicityReason = "no acoustic-emission data for this dive: Felicity ratio not evaluated"
	}
	return v
}

// checksAtDepthAsHits returns the hits with every sensor check made below
// the surface added as a hit too: a check shows its channel alive, but a
// row labelled a check while the hull is under load could as well be
// emission from the hull, and must not hide it (the safe side: a test
// pulse counted as emission can only make the hull look worse).
func checksAtDepthAsHits(p evidence.Profile, hits []evidence.Hit, checks []evidence.SensorCheck, surfaceMPa float64) []evidence.Hit {
	if len(checks) == 0 {
		return hits
	}
	as := make([]evidence.Hit, len(checks))
	for i, c := range checks {
		as[i] = evidence.Hit{TimeS: c.TimeS, Channel: c.Channel, AmplitudeDB: c.AmplitudeDB}
	}
	pr := evidence.PressureAt(p, as)
	out := hits
	added := false
	for i, h := range as {
		if i < len(pr) && pr[i] > surfaceMPa {
			if !added {
				out = append([]evidence.Hit(nil), hits...)
				added = true
			}
			out = append(out, h)
		}
	}
	if added {
		sort.SliceStable(out, func(i, j int) bool { return out[i].TimeS < out[j].TimeS })
	}
	return out
}
