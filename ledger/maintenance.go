package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Inspection is a recorded inspection of a hull.
type Inspection struct {
	ID         uuid.UUID `json:"id" db:"id"`
	At         time.Time `json:"at" db:"at"`
	Method     string    `json:"method" db:"method"`
	Findings   string    `json:"findings" db:"findings"`
	Result     string    `json:"result" db:"result"`
	Actor      string    `json:"actor" db:"actor"`
	RecordedAt time.Time `json:"recorded_at" db:"recorded_at"`
	// RecordedBy is who recorded it: the actor, which the database checks
	// is the identity of the session that recorded it (migration 012).
	RecordedBy string `json:"recorded_by" db:"-"`
}

// ProofTest is a recorded proof test.
type ProofTest struct {
	ID          uuid.UUID  `json:"id" db:"id"`
	At          time.Time  `json:"at" db:"at"`
	PressureMPa float64    `json:"pressure_mpa" db:"pressure_mpa"`
	Result      string     `json:"result" db:"result"`
	Notes       string     `json:"notes" db:"notes"`
	Actor       string     `json:"actor" db:"actor"`
	DiveID      *uuid.UUID `json:"dive_id,omitempty" db:"dive_id"`
	// Baseline is the compliance per strain gauge (µε per MPa) measured
	// on the test, the baseline of later dives (stored as JSON text in
	// baseline_json: see proofTestRow).
	Baseline   map[string]float64 `json:"baseline_compliance_ue_per_mpa" db:"-"`
	RecordedAt time.Time          `json:"recorded_at" db:"recorded_at"`
	// RecordedBy is who recorded it (the actor, checked by the database).
	RecordedBy string `json:"recorded_by" db:"-"`
}

// proofTestRow is a proof_tests row as read: the record with its
// baseline still JSON text.
type proofTestRow struct {
	ProofTest
	BaselineJSON string `db:"baseline_json"`
}

// Decision is a recorded maintenance decision.
type Decision struct {
	ID         uuid.UUID `json:"id" db:"id"`
	At         time.Time `json:"at" db:"at"`
	Kind       string    `json:"kind" db:"kind"`
	Actor      string    `json:"actor" db:"actor"`
	Reason     string    `json:"reason" db:"reason"`
	RecordedAt time.Time `json:"recorded_at" db:"recorded_at"`
	// RecordedBy is who recorded it (the actor, checked by the database).
	RecordedBy string `json:"recorded_by" db:"-"`
}

// Decision kinds.
const (
	DecisionReturn   = "return_to_service"
	DecisionWithdraw = "withdraw"
)

// stamp gives a new record its id and recording time, defaults its event
// time to now, and refuses an event time ahead of the clock by more than
// the configured tolerance, or before the earliest time accepted.
func (l *Ledger) stamp(at *time.Time) (uuid.UUID, time.Time, []string) {
	rec := now()
	if at.IsZero() {
		*at = rec
	}
	*at = at.UTC().Truncate(time.Microsecond)
	var errs []string
	tol := time.Duration(l.cfg.Ingest.ClockToleranceS * float64(time.Second))
	if at.After(rec.Add(tol)) {
		errs = append(errs, fmt.Sprintf("the time %s is in the future (more than %s ahead of the clock)", at.Format(time.RFC3339), tol))
	}
	if earliest, err := l.cfg.Ingest.Earliest(); err == nil && at.Before(earliest) {
		errs = append(errs, fmt.Sprintf("the time %s is before the earliest time accepted, %s", at.Format(time.RFC3339), earliest.Format(time.RFC3339)))
	}
	return uuid.New(), rec, errs
}

func checkResult(r string) error {
	if r != "pass" && r != "fail" {
		return fmt.Errorf("result must be pass or fail, got %q", r)
	}
	return nil
}

func inspectionCanon(hull uuid.UUID, in *Inspection) []byte {
	c := newCanon("inspection")
	c.uuid(in.ID)
	c.uuid(hull)
	c.time(in.At)
	c.str(in.Method)
	c.str(in.Findings)
	c.str(in.Result)
	c.str(in.Actor)
	c.time(in.RecordedAt)
	return c.b
}

func proofCanon(hull uuid.UUID, p *ProofTest, baselineJSON string) []byte {
	c := newCanon("proof_test")
	c.uuid(p.ID)
	c.uuid(hull)
	c.time(p.At)
	c.f64(p.PressureMPa)
	c.str(p.Result)
	c.str(p.Notes)
	c.str(p.Actor)
	if p.DiveID != nil {
		c.uuid(*p.DiveID)
	} else {
		c.tag('n')
	}
	c.str(baselineJSON)
	c.time(p.RecordedAt)
	return c.b
}

func decisionCanon(hull uuid.UUID, d *Decision) []byte {
	c := newCanon("decision")
	c.uuid(d.ID)
	c.uuid(hull)
	c.time(d.At)
	c.str(d.Kind)
	c.str(d.Actor)
	c.str(d.Reason)
	c.time(d.RecordedAt)
	return c.b
}

// canonicalJSON encodes a baseline map with sorted keys (encoding/json
// sorts map keys).
func canonicalJSON(m map[string]float64) string {
	if m == nil {
		m = map[string]float64{}
	}
	b, _ := json.Marshal(m)
	return string(b)
}

// record appends one maintenance record and its chain link.
func (l *Ledger) record(ctx context.Context, serial string, insert func(tx pgx.Tx, h *Hull) (chainRec, error)) error {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return inputErr(err)
	}
	return pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		rec, err := insert(tx, h)
		if err != nil {
			return err
		}
		_, err = appendChain(ctx, tx, h.ID, []chainRec{rec}, now())
		return err
	})
}

// RecordInspection records an inspection of a hull.
func (l *Ledger) RecordInspection(ctx context.Context, serial string, in Inspection) (*Inspection, error) {
	if err := l.writable("RecordInspection"); err != nil {
		return nil, err
	}
	var errs []string
	in.ID, in.RecordedAt, errs = l.stamp(&in.At)
	if strings.TrimSpace(in.Method) == "" {
		errs = append(errs, "the method is required (e.g. visual, ultrasonic, shearography)")
	}
	var aerr error
	if in.Actor, aerr = l.actorFor(in.Actor); aerr != nil {
		return nil, aerr
	}
	if strings.TrimSpace(in.Actor) == "" {
		errs = append(errs, "the inspector's name is required")
	}
	if err := checkResult(in.Result); err != nil {
		errs = append(errs, err.Error())
	}
	if len(errs) > 0 {
		return nil, inputErr(fmt.Errorf("inspection of %s: %s", serial, strings.Join(errs, "; ")))
	}
	err := l.record(ctx, serial, func(tx pgx.Tx, h *Hull) (chainRec, error) {
		_, err := tx.Exec(ctx, `INSERT INTO inspections (id, hull_id, at, method, findings, result, actor, recorded_at) VALUES ($1,$2,$3,$4,$5,$6,$7,$8)`,
			in.ID, h.ID, in.At, in.Method, in.Findings, in.Result, in.Actor, in.RecordedAt)
		return chainRec{kind: "inspection", key: in.ID.String(), canon: inspectionCanon(h.ID, &in)}, err
	})
	if err != nil {
		return nil, err
	}
	if err := l.noteStatusAfter(ctx, serial); err != nil {
		return nil, err
	}
	in.RecordedBy = in.Actor
	return &in, nil
}

// RecordProofTest records a proof test without samples (a test with
// samples goes through ProofTestWithSamples). A passing test below the
// spec's proof pressure, less the configured tolerance, is refused.
func (l *Ledger) RecordProofTest(ctx context.Context, serial string, p ProofTest) (*ProofTest, error) {
	if err := l.writable("RecordProofTest"); err != nil {
		return nil, err
	}
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, inputErr(err)
	}
	bj := canonicalJSON(p.Baseline)
	err = pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		if err := lockHullDives(ctx, tx, h); err != nil {
			return err
		}
		recs, err := l.insertProof(ctx, tx, h, &p, nil)
		if err != nil {
			return err
		}
		_, err = appendChain(ctx, tx, h.ID, recs, p.RecordedAt)
		return err
	})
	if err != nil {
		return nil, err
	}
	if err := l.noteStatusAfter(ctx, serial); err != nil {
		return nil, err
	}
	p.Baseline = map[string]float64{}
	_ = json.Unmarshal([]byte(bj), &p.Baseline)
	p.RecordedBy = p.Actor
	return &p, nil
}

// insertProof checks a proof test against the hull's spec and, when it
// has samples, against the samples' own peak (row), then stores it in tx
// and judges again the dives after it (its pressure is part of their
// reference). It returns the chain records to append.
func (l *Ledger) insertProof(ctx context.Context, tx pgx.Tx, h *Hull, p *ProofTest, row *diveRow) ([]chainRec, error) {
	var errs []string
	p.ID, p.RecordedAt, errs = l.stamp(&p.At)
	tol := l.cfg.Proof.Tolerance
	spec := h.Spec.ProofPressureMPa
	if !(p.PressureMPa > 0) || math.IsInf(p.PressureMPa, 0) {
		errs = append(errs, fmt.Sprintf("the test pressure must be a positive number, got %v MPa", p.PressureMPa))
	}
	var aerr error
	if p.Actor, aerr = l.actorFor(p.Actor); aerr != nil {
		return nil, aerr
	}
	if strings.TrimSpace(p.Actor) == "" {
		errs = append(errs, "the name of who ran the test is required")
	}
	if err := checkResult(p.Result); err != nil {
		errs = append(errs, err.Error())
	}
	if p.Result == "pass" && p.PressureMPa < spec*(1-tol) {
		errs = append(errs, fmt.Sprintf("a passing proof test at %.4g MPa is below the spec's proof pressure %.4g MPa less the tolerance of %.3g %% (%.4g MPa): it cannot pass as a proof test; record it as failed, or test to the proof pressure",
			p.PressureMPa, spec, 100*tol, spec*(1-tol)))
	}
	if row != nil {
		// A test with samples is recorded as learned with them, so that
		// it can never clear the flags its own samples raise.
		p.RecordedAt = row.RecordedAt
		if p.At.Before(row.Start) || p.At.After(row.End) {
			errs = append(errs, fmt.Sprintf("the test time %s lies outside its own samples (%s to %s)", p.At.Format(time.RFC3339), row.Start.Format(time.RFC3339), row.End.Format(time.RFC3339)))
		}
	}
	if row != nil && math.Abs(p.PressureMPa-row.MaxPres) > tol*math.Max(p.PressureMPa, row.MaxPres) {
		errs = append(errs, fmt.Sprintf("the recorded test pressure %.4g MPa does not agree with the peak of its samples, %.4g MPa, within the tolerance of %.3g %%: the record contradicts its own data",
			p.PressureMPa, row.MaxPres, 100*tol))
	}
	if len(errs) > 0 {
		return nil, inputErr(fmt.Errorf("proof test of %s: %s", h.Serial, strings.Join(errs, "; ")))
	}
	if p.Baseline == nil {
		p.Baseline = map[string]float64{}
	}
	bj := canonicalJSON(p.Baseline)
	if _, err := tx.Exec(ctx, `INSERT INTO proof_tests (id, hull_id, at, pressure_mpa, result, notes, actor, dive_id, baseline_json, recorded_at)
		VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10)`, p.ID, h.ID, p.At, p.PressureMPa, p.Result, p.Notes, p.Actor, p.DiveID, bj, p.RecordedAt); err != nil {
		return nil, fmt.Errorf("proof test of %s: %w", h.Serial, err)
	}
	recs := []chainRec{{kind: "proof_test", key: p.ID.String(), canon: proofCanon(h.ID, p, bj)}}
	_, rrecs, err := l.rejudge(ctx, tx, h, p.At, fmt.Sprintf("proof test of %s at %.4g MPa recorded", p.At.Format(time.RFC3339), p.PressureMPa))
	if err != nil {
		return nil, err
	}
	return append(recs, rrecs...), nil
}

// RecordDecision records a decision to return a hull to service or to
// withdraw it, by a named person with a reason.
func (l *Ledger) RecordDecision(ctx context.Context, serial string, d Decision) (*Decision, error) {
	if err := l.writable("RecordDecision"); err != nil {
		return nil, err
	}
	var errs []string
	d.ID, d.RecordedAt, errs = l.stamp(&d.At)
	if d.Kind != DecisionReturn && d.Kind != DecisionWithdraw {
		errs = append(errs, fmt.Sprintf("the decision must be %s or %s, got %q", DecisionReturn, DecisionWithdraw, d.Kind))
	}
	var aerr error
	if d.Actor, aerr = l.actorFor(d.Actor); aerr != nil {
		return nil, aerr
	}
	if strings.TrimSpace(d.Actor) == "" {
		errs = append(errs, "a decision needs the name of who takes it")
	}
	if strings.TrimSpace(d.Reason) == "" {
		errs = append(errs, "a decision needs its reason")
	}
	if len(errs) > 0 {
		return nil, inputErr(fmt.Errorf("decision on %s: %s", serial, strings.Join(errs, "; ")))
	}
	err := l.record(ctx, serial, func(tx pgx.Tx, h *Hull) (chainRec, error) {
		_, err := tx.Exec(ctx, `INSERT INTO decisions (id, hull_id, at, kind, actor, reason, recorded_at) VALUES ($1,$2,$3,$4,$5,$6,$7)`,
			d.ID, h.ID, d.At, d.Kind, d.Actor, d.Reason, d.RecordedAt)
		return chainRec{kind: "decision", key: d.ID.String(), canon: decisionCanon(h.ID, &d)}, err
	})
	if err != nil {
		return nil, err
	}
	if err := l.noteStatusAfter(ctx, serial); err != nil {
		return nil, err
	}
	d.RecordedBy = d.Actor
	return &d, nil
}

// Maintenance is a hull's maintenance record, oldest first.
type Maintenance struct {
	Inspections []Inspection `json:"inspections"`
	ProofTests  []ProofTest  `json:"proof_tests"`
	Decisions   []Decision   `json:"decisions"`
}

// MaintenanceOf reads a hull's maintenance records.
func (l *Ledger) MaintenanceOf(ctx context.Context, h *Hull) (*Maintenance, error) {
	m := &Maintenance{Inspections: []Inspection{}, ProofTests: []ProofTest{}, Decisions: []Decision{}}
	rows, err := l.db.Query(ctx, "SELECT id, at, method, findings, result, actor, recorded_at FROM inspections WHERE hull_id = $1 ORDER BY at, recorded_at", h.ID)
	if err != nil {
		return nil, fmt.Errorf("inspections of %s: %w", h.Serial, err)
	}
	ins, err := pgx.CollectRows(rows, pgx.RowToStructByName[Inspection])
	if err != nil {
		return nil, fmt.Errorf("inspections of %s: %w", h.Serial, err)
	}
	for i := range ins {
		ins[i].RecordedBy = ins[i].Actor
	}
	m.Inspections = append(m.Inspections, ins...)
	rows, err = l.db.Query(ctx, "SELECT id, at, pressure_mpa, result, notes, actor, dive_id, baseline_json, recorded_at FROM proof_tests WHERE hull_id = $1 ORDER BY at, recorded_at", h.ID)
	if err != nil {
		return nil, fmt.Errorf("proof tests of %s: %w", h.Serial, err)
	}
	prs, err := pgx.CollectRows(rows, pgx.RowToStructByName[proofTestRow])
	if err != nil {
		return nil, fmt.Errorf("proof tests of %s: %w", h.Serial, err)
	}
	for _, r := range prs {
		p := r.ProofTest
		p.RecordedBy = p.Actor
		if err := json.Unmarshal([]byte(r.BaselineJSON), &p.Baseline); err != nil {
			return nil, fmt.Errorf("proof test %s: baseline: %w", p.ID, err)
		}
		m.ProofTests = append(m.ProofTests, p)
	}
	rows, err = l.db.Query(ctx, "SELECT id, at, kind, actor, reason, recorded_at FROM decisions WHERE hull_id = $1 ORDER BY at, recorded_at", h.ID)
	if err != nil {
		return nil, fmt.Errorf("decisions of %s: %w", h.Serial, err)
	}
	ds, err := pgx.CollectRows(rows, pgx.RowToStructByName[Decision])
	if err != nil {
		return nil, fmt.Errorf("decisions of %s: %w", h.Serial, err)
	}
	for i := range ds {
		ds[i].RecordedBy = ds[i].Actor
	}
	m.Decisions = append(m.Decisions, ds...)
	sort.SliceStable(m.Decisions, func(i, j int) bool { return m.Decisions[i].At.Before(m.Decisions[j].At) })
	return m, nil
}

// ProofTestWithSamples records a proof test; when req names a samples
// file, the file is logged as a dive of the hull in the same transaction
// as the proof record (so that its load counts towards damage, its peak
// becomes part of the Felicity reference, and the strain compliance
// measured on it becomes the new baseline), after the record is checked
// against its samples: all of it is stored, or nothing.
func (l *Ledger) ProofTestWithSamples(ctx context.Context, serial string, p ProofTest, req LogRequest) (*ProofTest, error) {
	if err := l.writable("ProofTestWithSamples"); err != nil {
		return nil, err
	}
	if req.Samples == "" && req.Upload == nil {
		return l.RecordProofTest(ctx, serial, p)
	}
	// A name that is not who is signed in is refused before the file is
	// read, not after it was parsed and stored in a transaction.
	var err error
	if p.Actor, err = l.actorFor(p.Actor); err != nil {
		return nil, err
	}
	req.proof = &p
	d, err := l.LogDive(ctx, req)
	if err != nil {
		return nil, err
	}
	if !d.Duplicate && l.hasGaugeBasis(ctx, serial) {
		// The test calibrates the load transfer of a gauge-basis part:
		// assess every dive of the hull again on it, so that no earlier
		// dive keeps a fallback that may show less damage.
		if _, err := l.Assess(ctx, AssessOptions{Hull: serial, Reason: fmt.Sprintf("proof test of %s with strain: gauge calibration of the load transfer", p.At.Format(time.DateOnly)), Actor: p.Actor}); err != nil {
			return nil, fmt.Errorf("proof test recorded; re-assessing the hull on its calibration failed (run hulltally assess --hull %s): %w", serial, err)
		}
	}
	if d.Duplicate {
		var n int
		if err := l.db.QueryRow(ctx, "SELECT count(*) FROM proof_tests WHERE dive_id = $1", d.ID).Scan(&n); err != nil {
			return nil, err
		}
		if n > 0 {
			return nil, inputErr(fmt.Errorf("these samples are already recorded as the proof test of dive %s; nothing was added", d.ID))
		}
		return nil, inputErr(fmt.Errorf("these samples are already recorded as dive %s, not as a proof test; a dive is not turned into a proof test afterwards", d.ID))
	}
	p.RecordedBy = p.Actor
	return &p, nil
}

// hasGaugeBasis reports whether a hull has a part whose load transfer is
// calibrated from the strain gauges of a proof test.
func (l *Ledger) hasGaugeBasis(ctx context.Context, serial string) bool {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return false
	}
	for _, c := range h.Spec.Components {
		if c.Transfer.Basis == "gauge" {
			return true
		}
	}
	return false
}
