package ledger

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/evidence"
)

// notVoided is the SQL condition that keeps a dive (aliased d) that no
// void record takes out of damage, evidence and status.
const notVoided = `NOT EXISTS (SELECT 1 FROM dive_voids v WHERE v.hull_id = d.hull_id AND v.dive_id = d.id)`

// effectiveEvidence is the SQL expression of a dive's evidence in force
// (aliased d): its newest revision, else the evidence stored at logging.
const effectiveEvidence = `coalesce((SELECT r.evidence_json FROM evidence_revisions r WHERE r.hull_id = d.hull_id AND r.dive_id = d.id ORDER BY r.seq DESC LIMIT 1),
	(SELECT e.evidence_json FROM dive_evidence e WHERE e.hull_id = d.hull_id AND e.dive_id = d.id), '')`

// Void is a record that takes a dive out of damage, evidence and status
// from the time it is recorded (the dive and its readings stay).
type Void struct {
	ID         uuid.UUID `json:"id" db:"id"`
	Dive       uuid.UUID `json:"dive_id" db:"dive_id"`
	Hull       string    `json:"hull" db:"hull"` // the hull's serial
	Reason     string    `json:"reason" db:"reason"`
	Actor      string    `json:"actor" db:"actor"`
	RecordedAt time.Time `json:"recorded_at" db:"recorded_at"`
	// Rejudged lists the later dives whose evidence was judged again.
	Rejudged []uuid.UUID `json:"rejudged" db:"-"`
	// RecordedBy is who recorded it: the actor, which the database checks
	// (migration 012). It stays the last field (the reports' earlier
	// fingerprint leaves it out: reports.Model.Fingerprints).
	RecordedBy string `json:"recorded_by" db:"-"`
}

func voidCanon(hull uuid.UUID, v *Void) []byte {
	c := newCanon("dive_void")
	c.uuid(v.ID)
	c.uuid(hull)
	c.uuid(v.Dive)
	c.str(v.Reason)
	c.str(v.Actor)
	c.time(v.RecordedAt)
	return c.b
}

func revisionCanon(dive uuid.UUID, seq int64, js, reason, cause string, at time.Time) []byte {
	c := newCanon("evidence_revision")
	c.uuid(dive)
	c.i64(seq)
	c.str(js)
	c.str(reason)
	c.str(cause)
	c.time(at)
	return c.b
}

func fingerprintCanon(dive uuid.UUID, fp []byte) []byte {
	c := newCanon("dive_fingerprint")
	c.uuid(dive)
	c.bytes(fp)
	return c.b
}

// ErrAlreadyVoid is returned when a dive is voided twice.
var ErrAlreadyVoid = errors.New("dive already void")

// VoidDive takes a dive out of damage, evidence and status from now on,
// with the reason and who decided; later dives of the hull are judged
// again without it, in the same transaction.
func (l *Ledger) VoidDive(ctx context.Context, id, reason, actor string) (*Void, error) {
	if err := l.writable("VoidDive"); err != nil {
		return nil, err
	}
	if strings.TrimSpace(reason) == "" {
		return nil, inputErr(errors.New("voiding a dive needs a reason (--reason)"))
	}
	actor, err := l.actorFor(actor)
	if err != nil {
		return nil, err
	}
	if strings.TrimSpace(actor) == "" {
		return nil, inputErr(errors.New("voiding a dive needs the name of who decides it"))
	}
	d, err := l.Dive(ctx, id)
	if err != nil {
		return nil, err
	}
	h, err := l.Hull(ctx, d.Hull)
	if err != nil {
		return nil, err
	}
	v := &Void{ID: uuid.New(), Dive: d.ID, Hull: h.Serial, Reason: reason, Actor: actor, RecordedAt: now(), Rejudged: []uuid.UUID{}, RecordedBy: actor}
	err = pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		if err := lockHullDives(ctx, tx, h); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, `INSERT INTO dive_voids (id, hull_id, dive_id, reason, actor, recorded_at) VALUES ($1,$2,$3,$4,$5,$6) ON CONFLICT (hull_id, dive_id) DO NOTHING`,
			v.ID, h.ID, v.Dive, v.Reason, v.Actor, v.RecordedAt)
		if err != nil {
			return fmt.Errorf("voiding dive %s: %w", d.ID, err)
		}
		if tag.RowsAffected() == 0 {
			return inputErr(fmt.Errorf("dive %s: %w", d.ID, ErrAlreadyVoid))
		}
		recs := []chainRec{{kind: "dive_void", key: v.ID.String(), canon: voidCanon(h.ID, v)}}
		ids, rrecs, err := l.rejudge(ctx, tx, h, d.Start, fmt.Sprintf("dive %s voided: %s", d.ID, reason))
		if err != nil {
			return err
		}
		v.Rejudged = ids
		recs = append(recs, rrecs...)
		_, err = appendChain(ctx, tx, h.ID, recs, v.RecordedAt)
		return err
	})
	if err != nil {
		return nil, err
	}
	if err := l.noteStatusAfter(ctx, h.Serial); err != nil {
		return nil, err
	}
	return v, nil
}

// VoidOf returns the void record of a dive, or nil.
func (l *Ledger) VoidOf(ctx context.Context, dive uuid.UUID) (*Void, error) {
	rows, err := l.db.Query(ctx, `SELECT v.id, v.dive_id, h.serial AS hull, v.reason, v.actor, v.recorded_at FROM dive_voids v JOIN hulls h ON h.id = v.hull_id WHERE v.dive_id = $1`, dive)
	if err != nil {
		return nil, fmt.Errorf("void of dive %s: %w", dive, err)
	}
	v, err := pgx.CollectOneRow(rows, pgx.RowToAddrOfStructByName[Void])
	if errors.Is(err, pgx.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("void of dive %s: %w", dive, err)
	}
	v.RecordedBy = v.Actor
	return v, nil
}

// lockHullDives serialises the writes that judge a hull's dives (one hull, one
// dive at a time).
func lockHullDives(ctx context.Context, tx pgx.Tx, h *Hull) error {
	if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, hashtext($2))", lockDive, h.ID.String()); err != nil {
		return fmt.Errorf("locking hull %s: %w", h.Serial, err)
	}
	return nil
}

// rejudge judges again the evidence of every dive of the hull (not void)
// that started after from, in start order, against what the ledger holds
// now (in tx): the reference pressure, the Felicity ratio and the
// compliance baseline. A dive whose evidence changes gets a new evidence
// revision that supersedes the old (nothing is edited). It returns the
// dives re-judged and the chain records to append.
func (l *Ledger) rejudge(ctx context.Context, tx pgx.Tx, h *Hull, from time.Time, cause string) ([]uuid.UUID, []chainRec, error) {
	type later struct {
		id     uuid.UUID
		start  time.Time
		gauges []string
		hadAE  bool
		js     string
	}
	rows, err := tx.Query(ctx, `SELECT d.id, d.start_time, d.gauges, d.ae_source_sha256 IS NOT NULL, `+effectiveEvidence+` FROM dives d
		WHERE d.hull_id = $1 AND d.start_time > $2 AND `+notVoided+` ORDER BY d.start_time, d.id`, h.ID, from)
	if err != nil {
		return nil, nil, fmt.Errorf("re-judging later dives of %s: %w", h.Serial, err)
	}
	ls, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (later, error) {
		var x later
		err := r.Scan(&x.id, &x.start, &x.gauges, &x.hadAE, &x.js)
		return x, err
	})
	if err != nil {
		return nil, nil, fmt.Errorf("re-judging later dives of %s: %w", h.Serial, err)
	}
	out := []uuid.UUID{}
	var recs []chainRec
	for _, x := range ls {
		if x.js == "" {
			continue // logged before evidence was kept: nothing to judge again
		}
		var old Evidence
		if err := json.Unmarshal([]byte(x.js), &old); err != nil {
			return nil, nil, fmt.Errorf("dive %s: evidence: %w", x.id, err)
		}
		prof, err := loadProfile(ctx, tx, x.id)
		if err != nil {
			return nil, nil, fmt.Errorf("dive %s: profile: %w", x.id, err)
		}
		hits, checks, err := loadHits(ctx, tx, x.id)
		if err != nil {
			return nil, nil, err
		}
		in := evidenceInput{dive: x.id, start: x.start, prof: prof, hits: hits, checks: checks, hadAE: x.hadAE, gauges: x.gauges,
			quality: old.DataQuality, tempBefore: old.SurfaceTempBeforeC, tempAfter: old.SurfaceTempAfterC}
		ev, err := l.diveEvidence(ctx, tx, h, in)
		if err != nil {
			return nil, nil, err
		}
		b, err := json.Marshal(ev)
		if err != nil {
			return nil, nil, err
		}
		js := string(b)
		if js == x.js {
			continue
		}
		at := now()
		reason := "judged again: " + describeChange(&old, ev)
		var seq int64
		if err := tx.QueryRow(ctx, `INSERT INTO evidence_revisions (dive_id, hull_id, evidence_json, reason, cause, recorded_at) VALUES ($1,$2,$3,$4,$5,$6) RETURNING seq`,
			x.id, h.ID, js, reason, cause, at).Scan(&seq); err != nil {
			return nil, nil, fmt.Errorf("dive %s: storing the evidence judged again: %w", x.id, err)
		}
		recs = append(recs, chainRec{kind: "evidence_revision", key: fmt.Sprintf("%s/%d", x.id, seq), canon: revisionCanon(x.id, seq, js, reason, cause, at)})
		out = append(out, x.id)
	}
	return out, recs, nil
}

// describeChange says in words what changed between two judgements of a
// dive's evidence.
func describeChange(old, ev *Evidence) string {
	var parts []string
	if old.PreviousMaxMPa != ev.PreviousMaxMPa {
		parts = append(parts, fmt.Sprintf("reference pressure %.4g → %.4g MPa", old.PreviousMaxMPa, ev.PreviousMaxMPa))
	}
	if old.AE != nil && ev.AE != nil && fmtOpt(old.AE.FelicityRatio) != fmtOpt(ev.AE.FelicityRatio) {
		parts = append(parts, fmt.Sprintf("Felicity ratio %s → %s", fmtOpt(old.AE.FelicityRatio), fmtOpt(ev.AE.FelicityRatio)))
	}
	if old.BaselineSource != ev.BaselineSource {
		parts = append(parts, "compliance baseline now "+ev.BaselineSource)
	}
	if len(parts) == 0 {
		return "evidence figures changed"
	}
	return strings.Join(parts, "; ")
}

func fmtOpt(v *float64) string {
	if v == nil {
		return "not evaluated"
	}
	return fmt.Sprintf("%.3f", *v)
}

// loadHits reads a dive's stored acoustic-emission hits and sensor checks
// in the evidence package's form (time from the dive's first sample).
func loadHits(ctx context.Context, q querier, dive uuid.UUID) ([]evidence.Hit, []evidence.SensorCheck, error) {
	var firstNS int64
	if err := q.QueryRow(ctx, "SELECT t_first_ns FROM reading_blocks WHERE dive_id = $1 AND block_no = 0 AND hull_id = "+diveHull, dive).Scan(&firstNS); err != nil {
		return nil, nil, fmt.Errorf("dive %s: first sample: %w", dive, err)
	}
	rows, err := q.Query(ctx, "SELECT t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us, event FROM ae_hits WHERE dive_id = $1 AND hull_id = "+diveHull+" ORDER BY seq", dive)
	if err != nil {
		return nil, nil, fmt.Errorf("dive %s: hits: %w", dive, err)
	}
	defer rows.Close()
	var hits []evidence.Hit
	var checks []evidence.SensorCheck
	for rows.Next() {
		var t, counts int64
		var ch int32
		var h evidence.Hit
		var event string
		if err := rows.Scan(&t, &ch, &h.AmplitudeDB, &h.Energy, &counts, &h.DurationUS, &h.RiseUS, &event); err != nil {
			return nil, nil, err
		}
		h.TimeS, h.Channel, h.Counts = float64(t-firstNS)/1e9, int(ch), float64(counts)
		if event != "hit" {
			checks = append(checks, evidence.SensorCheck{Channel: h.Channel, TimeS: h.TimeS, Kind: event, AmplitudeDB: h.AmplitudeDB})
			continue
		}
		hits = append(hits, h)
	}
	return hits, checks, rows.Err()
}

// HitsOf returns a dive's stored acoustic-emission hits and sensor checks
// (times in seconds from the dive's first sample), for reports.
func (l *Ledger) HitsOf(ctx context.Context, dive uuid.UUID) ([]evidence.Hit, []evidence.SensorCheck, error) {
	return loadHits(ctx, l.db, dive)
}
