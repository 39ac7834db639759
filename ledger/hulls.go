package ledger

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/ledger/spec"
)

// ErrUnknownHull is returned for a serial that is not in the ledger.
var ErrUnknownHull = errors.New("unknown hull serial")

// ErrHullExists is returned when adding a serial that is already recorded.
var ErrHullExists = errors.New("hull serial already recorded")

// querier is what both a pool and a transaction offer.
type querier interface {
	Query(ctx context.Context, sql string, args ...any) (pgx.Rows, error)
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

// Hull is a hull as recorded: its identity and the revision of its spec
// in force.
type Hull struct {
	ID         uuid.UUID  `json:"id"`
	Serial     string     `json:"serial"`
	Revision   int32      `json:"revision"`
	Spec       *spec.Hull `json:"spec"`
	RecordedAt time.Time  `json:"recorded_at"`
	RevisedAt  time.Time  `json:"revised_at"`
	Reason     string     `json:"reason"`
	Actor      string     `json:"actor"`
	// RecordedBy is who recorded the revision: the actor, which the
	// database checks (migration 012). It stays the last field.
	RecordedBy string `json:"recorded_by"`
}

type revisionRow struct {
	HullID                         uuid.UUID
	Revision                       int32
	Name, Material, Shape          string
	InnerR, Wall                   float64
	Length                         *float64
	Rated, Design, Proof, Collapse float64
	SpecJSON, Reason, Actor        string
	RecordedAt                     time.Time
	Components                     []componentRow
	Gauges                         []gaugeRow
}

type componentRow struct {
	Name    string   `db:"name"`
	Kind    string   `db:"kind"`
	Basis   string   `db:"transfer_basis"`
	Factor  *float64 `db:"transfer_factor"`
	Curve   string   `db:"curve"`
	Rupture string   `db:"rupture_curve"`
}

type gaugeRow struct {
	Name      string `db:"name"`
	Kind      string `db:"kind"`
	Component string `db:"component"`
	Position  string `db:"position"`
	Direction string `db:"direction"`
	Channel   *int32 `db:"channel"`
}

func (r *revisionRow) canon() []byte {
	c := newCanon("hull_revision")
	c.uuid(r.HullID)
	c.i64(int64(r.Revision))
	c.str(r.Name)
	c.str(r.Material)
	c.str(r.Shape)
	c.f64(r.InnerR)
	c.f64(r.Wall)
	c.optF64(r.Length)
	c.f64(r.Rated)
	c.f64(r.Design)
	c.f64(r.Proof)
	c.f64(r.Collapse)
	c.str(r.SpecJSON)
	c.str(r.Reason)
	c.str(r.Actor)
	c.time(r.RecordedAt)
	c.i64(int64(len(r.Components)))
	for _, k := range r.Components {
		c.str(k.Name)
		c.str(k.Kind)
		c.str(k.Basis)
		c.optF64(k.Factor)
		c.str(k.Curve)
		c.str(k.Rupture)
	}
	c.i64(int64(len(r.Gauges)))
	for _, g := range r.Gauges {
		c.str(g.Name)
		c.str(g.Kind)
		c.str(g.Component)
		c.str(g.Position)
		c.str(g.Direction)
		c.optInt(g.Channel)
	}
	return c.b
}

func hullCanon(id uuid.UUID, serial string, at time.Time) []byte {
	c := newCanon("hull")
	c.uuid(id)
	c.str(serial)
	c.time(at)
	return c.b
}

// AddHullOptions say who records a hull and, for a revision, why.
type AddHullOptions struct {
	Actor  string
	Reason string
	// Revise records a new revision of an existing serial's spec.
	Revise bool
}

// AddHull records a new hull, or with Revise a new revision of a hull's
// specification (the earlier revision stays on record).
func (l *Ledger) AddHull(ctx context.Context, h *spec.Hull, o AddHullOptions) (*Hull, error) {
	if err := l.writable("AddHull"); err != nil {
		return nil, err
	}
	if err := h.Validate(); err != nil {
		return nil, err
	}
	if err := l.checkCurves(h); err != nil {
		return nil, inputErr(err)
	}
	// The curves fit each component's stress (a tensile part is not read
	// on a compression curve, nor its sustained load on the other side's
	// rupture curve) and its own settings are valid. A hull being added
	// has no proof test yet: the check is on the designer's factor, else
	// Lamé; a later gauge calibration of the other sign is not used.
	g := assess.Geometry{Shape: h.Shape, InnerRadiusM: h.InnerRadiusM, WallM: h.WallThicknessM}
	if err := assess.Check(g, componentSpecs(h), l.fat.lib, l.fat.settings); err != nil {
		return nil, inputErr(fmt.Errorf("hull spec %s: %w", h.Serial, err))
	}
	var err error
	if o.Actor, err = l.actorFor(o.Actor); err != nil {
		return nil, err
	}
	if o.Revise && strings.TrimSpace(o.Reason) == "" {
		return nil, errors.New("revising a hull spec: a reason is required")
	}
	if o.Reason == "" {
		o.Reason = "initial specification"
	}
	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
	}
	defer tx.Rollback(ctx)
	if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, hashtext($2))", lockHull, h.Serial); err != nil {
		return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
	}
	t := now()
	var id uuid.UUID
	var rev int32
	err = tx.QueryRow(ctx, `SELECT h.id, coalesce(max(r.revision), 0) FROM hulls h LEFT JOIN hull_revisions r ON r.hull_id = h.id WHERE h.serial = $1 GROUP BY h.id`, h.Serial).Scan(&id, &rev)
	var recs []chainRec
	switch {
	case err == pgx.ErrNoRows:
		if o.Revise {
			return nil, fmt.Errorf("revising hull %s: %w", h.Serial, ErrUnknownHull)
		}
		id = uuid.New()
		if _, err := tx.Exec(ctx, "INSERT INTO hulls (id, serial, recorded_at) VALUES ($1, $2, $3)", id, h.Serial, t); err != nil {
			return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
		}
		recs = append(recs, chainRec{kind: "hull", key: id.String(), canon: hullCanon(id, h.Serial, t)})
	case err != nil:
		return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
	case !o.Revise:
		return nil, fmt.Errorf("%w: %s (revision %d); to record a changed specification use --revise with --reason", ErrHullExists, h.Serial, rev)
	}
	r := revisionFromSpec(id, rev+1, h, o, t)
	if err := insertRevision(ctx, tx, r); err != nil {
		return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
	}
	recs = append(recs, chainRec{kind: "hull_revision", key: fmt.Sprintf("%s/%d", id, r.Revision), canon: r.canon()})
	if _, err := appendChain(ctx, tx, id, recs, t); err != nil {
		return nil, err
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("adding hull %s: %w", h.Serial, err)
	}
	if _, err := l.evaluateAndNote(ctx, h.Serial, now()); err != nil {
		return nil, fmt.Errorf("hull %s recorded; writing its fleet summary failed: %w", h.Serial, err)
	}
	return l.Hull(ctx, h.Serial)
}

func revisionFromSpec(id uuid.UUID, rev int32, h *spec.Hull, o AddHullOptions, t time.Time) *revisionRow {
	r := &revisionRow{HullID: id, Revision: rev, Name: h.Name, Material: h.MaterialSystem, Shape: h.Shape,
		InnerR: h.InnerRadiusM, Wall: h.WallThicknessM, Rated: h.RatedDepthM, Design: h.DesignPressureMPa,
		Proof: h.ProofPressureMPa, Collapse: h.CollapsePressureMPa, SpecJSON: h.JSON(), Reason: o.Reason, Actor: o.Actor, RecordedAt: t}
	if h.Shape == "cylinder" {
		l := h.LengthM
		r.Length = &l
	}
	for _, c := range h.Components {
		r.Components = append(r.Components, componentRow{Name: c.Name, Kind: c.Kind, Basis: c.Transfer.Basis, Factor: c.Transfer.FactorMPaPerMPa, Curve: c.Curve, Rupture: c.RuptureCurve})
	}
	for _, g := range h.Gauges {
		gr := gaugeRow{Name: g.Name, Kind: g.Kind, Component: g.Component, Position: g.Position, Direction: g.Direction}
		if g.Channel != nil {
			ch := int32(*g.Channel)
			gr.Channel = &ch
		}
		r.Gauges = append(r.Gauges, gr)
	}
	sort.Slice(r.Components, func(i, j int) bool { return r.Components[i].Name < r.Components[j].Name })
	sort.Slice(r.Gauges, func(i, j int) bool { return r.Gauges[i].Name < r.Gauges[j].Name })
	return r
}

func insertRevision(ctx context.Context, tx pgx.Tx, r *revisionRow) error {
	_, err := tx.Exec(ctx, `INSERT INTO hull_revisions (hull_id, revision, name, material_system, shape, inner_radius_m,
		wall_thickness_m, length_m, rated_depth_m, design_pressure_mpa, proof_pressure_mpa, collapse_pressure_mpa,
		spec_json, reason, actor, recorded_at) VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10,$11,$12,$13,$14,$15,$16)`,
		r.HullID, r.Revision, r.Name, r.Material, r.Shape, r.InnerR, r.Wall, r.Length, r.Rated, r.Design, r.Proof, r.Collapse,
		r.SpecJSON, r.Reason, r.Actor, r.RecordedAt)
	if err != nil {
		return err
	}
	for _, c := range r.Components {
		if _, err := tx.Exec(ctx, `INSERT INTO hull_components (hull_id, revision, name, kind, transfer_basis, transfer_factor, curve, rupture_curve)
			VALUES ($1,$2,$3,$4,$5,$6,$7,$8)`, r.HullID, r.Revision, c.Name, c.Kind, c.Basis, c.Factor, c.Curve, c.Rupture); err != nil {
			return fmt.Errorf("component %s: %w", c.Name, err)
		}
	}
	for _, g := range r.Gauges {
		if _, err := tx.Exec(ctx, `INSERT INTO gauges (hull_id, revision, name, kind, component, position, direction, channel)
			VALUES ($1,$2,$3,$4,$5,$6,$7,$8)`, r.HullID, r.Revision, g.Name, g.Kind, g.Component, g.Position, g.Direction, g.Channel); err != nil {
			return fmt.Errorf("gauge %s: %w", g.Name, err)
		}
	}
	return nil
}

func loadRevision(ctx context.Context, q querier, hull uuid.UUID, rev int32) (*revisionRow, error) {
	r := &revisionRow{HullID: hull, Revision: rev}
	err := q.QueryRow(ctx, `SELECT name, material_system, shape, inner_radius_m, wall_thickness_m, length_m, rated_depth_m,
		design_pressure_mpa, proof_pressure_mpa, collapse_pressure_mpa, spec_json, reason, actor, recorded_at
		FROM hull_revisions WHERE hull_id = $1 AND revision = $2`, hull, rev).Scan(
		&r.Name, &r.Material, &r.Shape, &r.InnerR, &r.Wall, &r.Length, &r.Rated, &r.Design, &r.Proof, &r.Collapse,
		&r.SpecJSON, &r.Reason, &r.Actor, &r.RecordedAt)
	if err != nil {
		return nil, err
	}
	rows, err := q.Query(ctx, `SELECT name, kind, transfer_basis, transfer_factor, curve, rupture_curve FROM hull_components
		WHERE hull_id = $1 AND revision = $2 ORDER BY name COLLATE "C"`, hull, rev)
	if err != nil {
		return nil, err
	}
	if r.Components, err = pgx.CollectRows(rows, pgx.RowToStructByName[componentRow]); err != nil {
		return nil, err
	}
	rows, err = q.Query(ctx, `SELECT name, kind, component, position, direction, channel FROM gauges
		WHERE hull_id = $1 AND revision = $2 ORDER BY name COLLATE "C"`, hull, rev)
	if err != nil {
		return nil, err
	}
	if r.Gauges, err = pgx.CollectRows(rows, pgx.RowToStructByName[gaugeRow]); err != nil {
		return nil, err
	}
	return r, nil
}

// Hull returns the hull with its specification in force.
func (l *Ledger) Hull(ctx context.Context, serial string) (*Hull, error) {
	return hullBySerial(ctx, l.db, serial)
}

func hullBySerial(ctx context.Context, q querier, serial string) (*Hull, error) {
	h := &Hull{Serial: serial}
	var js string
	err := q.QueryRow(ctx, `SELECT h.id, h.recorded_at, r.revision, r.spec_json, r.recorded_at, r.reason, r.actor
		FROM hulls h JOIN hull_revisions r ON r.hull_id = h.id WHERE h.serial = $1
		ORDER BY r.revision DESC LIMIT 1`, serial).Scan(&h.ID, &h.RecordedAt, &h.Revision, &js, &h.RevisedAt, &h.Reason, &h.Actor)
	if err == pgx.ErrNoRows {
		return nil, fmt.Errorf("%w: %q (hulltally hull list shows the recorded serials)", ErrUnknownHull, serial)
	}
	if err != nil {
		return nil, fmt.Errorf("reading hull %s: %w", serial, err)
	}
	h.RecordedBy = h.Actor
	h.Spec = new(spec.Hull)
	if err := json.Unmarshal([]byte(js), h.Spec); err != nil {
		return nil, fmt.Errorf("hull %s: stored spec: %w", serial, err)
	}
	if err := attachProof(ctx, q, h); err != nil {
		return nil, err
	}
	return h, nil
}

// attachProof attaches to the hull's spec (spec.Hull.Proof) the strain
// compliance of its latest passing proof test with samples that are not
// void: the gauge calibration of its components with transfer basis
// gauge. A hull without one keeps Proof nil.
func attachProof(ctx context.Context, q querier, h *Hull) error {
	var at time.Time
	var dive uuid.UUID
	var bj string
	err := q.QueryRow(ctx, `SELECT p.at, p.dive_id, p.baseline_json FROM proof_tests p JOIN dives d ON d.hull_id = p.hull_id AND d.id = p.dive_id
		WHERE p.hull_id = $1 AND p.result = 'pass' AND p.baseline_json <> '{}' AND `+notVoided+`
		ORDER BY p.at DESC, p.recorded_at DESC LIMIT 1`, h.ID).Scan(&at, &dive, &bj)
	if err == pgx.ErrNoRows {
		return nil
	}
	if err != nil {
		return fmt.Errorf("hull %s: latest proof test with strain: %w", h.Serial, err)
	}
	m := map[string]float64{}
	if err := json.Unmarshal([]byte(bj), &m); err != nil {
		return fmt.Errorf("hull %s: proof test of %s: compliance: %w", h.Serial, at.UTC().Format(time.RFC3339), err)
	}
	h.Spec.Proof = &spec.ProofStrain{Source: fmt.Sprintf("proof test of %s (dive %s)", at.UTC().Format(time.RFC3339), dive), ComplianceUEPerMPa: m}
	return nil
}

// HullSummary is one line of the hull list.
type HullSummary struct {
	Serial         string  `json:"serial" db:"serial"`
	Name           string  `json:"name" db:"name"`
	MaterialSystem string  `json:"material_system" db:"material_system"`
	Shape          string  `json:"shape" db:"shape"`
	RatedDepthM    float64 `json:"rated_depth_m" db:"rated_depth_m"`
	Revision       int32   `json:"revision" db:"revision"`
	DiveCount      int64   `json:"dive_count" db:"dive_count"`
	MaxPressureMPa float64 `json:"max_pressure_mpa" db:"max_pressure_mpa"`
	MaxDepthM      float64 `json:"max_depth_m" db:"max_depth_m"`
	// BeyondRated counts the dives beyond the rated depth, proof tests
	// not included; void dives count nowhere in the summary.
	BeyondRated int64      `json:"dives_beyond_rated" db:"dives_beyond_rated"`
	LastDive    *time.Time `json:"last_dive,omitempty" db:"last_dive"`
}

// Hulls lists every hull with its dive totals, by serial.
func (l *Ledger) Hulls(ctx context.Context) ([]HullSummary, error) {
	return l.hullSummaries(ctx, nil)
}

// HullSummary returns one hull's dive totals.
func (l *Ledger) HullSummary(ctx context.Context, id uuid.UUID) (*HullSummary, error) {
	hs, err := l.hullSummaries(ctx, &id)
	if err != nil {
		return nil, err
	}
	if len(hs) != 1 {
		return nil, fmt.Errorf("hull %s: %w", id, ErrUnknownHull)
	}
	return &hs[0], nil
}

func (l *Ledger) hullSummaries(ctx context.Context, id *uuid.UUID) ([]HullSummary, error) {
	rows, err := l.db.Query(ctx, `
		SELECT h.serial, r.name, r.material_system, r.shape, r.rated_depth_m, r.revision,
		       count(d.id) AS dive_count, coalesce(max(d.max_pressure_mpa), 0) AS max_pressure_mpa, coalesce(max(d.max_depth_m), 0) AS max_depth_m,
		       count(d.id) FILTER (WHERE d.beyond_rated AND NOT EXISTS (SELECT 1 FROM proof_tests p WHERE p.hull_id = d.hull_id AND p.dive_id = d.id)) AS dives_beyond_rated,
		       max(d.start_time) AS last_dive
		FROM hulls h
		JOIN LATERAL (SELECT * FROM hull_revisions r WHERE r.hull_id = h.id ORDER BY revision DESC LIMIT 1) r ON true
		LEFT JOIN dives d ON d.hull_id = h.id AND `+notVoided+`
		WHERE $1::uuid IS NULL OR h.id = $1
		GROUP BY h.serial, r.name, r.material_system, r.shape, r.rated_depth_m, r.revision
		ORDER BY h.serial COLLATE "C"`, id)
	if err != nil {
		return nil, fmt.Errorf("listing hulls: %w", err)
	}
	out, err := pgx.CollectRows(rows, pgx.RowToStructByName[HullSummary])
	if err != nil {
		return nil, fmt.Errorf("listing hulls: %w", err)
	}
	if len(out) == 0 {
		return nil, nil // as before: no hulls lists as null
	}
	return out, nil
}
