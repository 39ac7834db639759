package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// Correction is a recorded correction of a dive's descriptive field. The
// corrected row stays as it was; readers apply the newest correction of
// each field.
type Correction struct {
	ID         uuid.UUID `json:"id" db:"id"`
	Dive       uuid.UUID `json:"dive_id" db:"-"` // stored as target_key text
	Field      string    `json:"field" db:"field"`
	Value      string    `json:"value" db:"-"` // stored as JSON text in value_json
	Reason     string    `json:"reason" db:"reason"`
	Actor      string    `json:"actor" db:"actor"`
	RecordedAt time.Time `json:"recorded_at" db:"recorded_at"`
	// RecordedBy is who recorded it: the actor, which the database checks
	// (migration 012). It stays the last field (the reports' earlier
	// fingerprint leaves it out: reports.Model.Fingerprints).
	RecordedBy string `json:"recorded_by" db:"-"`
}

// correctionRow is a corrections row as read: the record with its value
// still JSON text.
type correctionRow struct {
	Correction
	ValueJSON string `db:"value_json"`
}

// correctionDive is the target_kind of a correction of a dive, the only
// kind recorded so far.
const correctionDive = "dive"

// CorrectableFields are the dive fields a correction may set. Fields that
// feed the damage (the readings, the latitude) are not among them: such an
// error is corrected by logging the right file, never by editing.
var correctableFields = []string{"site", "operator"}

// correctionCanon is a correction's canonical bytes: every column of its
// corrections row. kind and targetKey are the stored target_kind and
// target_key, byte for byte. Every correction ever written has kind
// "dive" and the dive id's canonical text as its key, which are the bytes
// the first records were hashed with (they wrote the constant "dive"), so
// taking the stored values changes no existing hash, while a kind or key
// changed behind the chain (to another kind, or to another spelling of the
// same id that the dive's readers would no longer find) breaks it.
func correctionCanon(hull uuid.UUID, c *Correction, kind, targetKey, valueJSON string) []byte {
	k := newCanon("correction")
	k.uuid(c.ID)
	k.uuid(hull)
	k.str(kind)
	k.str(targetKey)
	k.str(c.Field)
	k.str(valueJSON)
	k.str(c.Reason)
	k.str(c.Actor)
	k.time(c.RecordedAt)
	return k.b
}

// CorrectDive records a correction of a dive's site or operator.
func (l *Ledger) CorrectDive(ctx context.Context, id string, field, value, reason, actor string) (*Correction, error) {
	if err := l.writable("CorrectDive"); err != nil {
		return nil, err
	}
	d, err := l.Dive(ctx, id)
	if err != nil {
		return nil, err
	}
	if !containsStr(correctableFields, field) {
		return nil, inputErr(fmt.Errorf("field %q cannot be corrected (correctable: %s); a reading or the latitude is corrected by logging the right file", field, strings.Join(correctableFields, ", ")))
	}
	if actor, err = l.actorFor(actor); err != nil {
		return nil, err
	}
	if strings.TrimSpace(reason) == "" || strings.TrimSpace(actor) == "" {
		return nil, inputErr(fmt.Errorf("a correction needs a reason and the name of who makes it"))
	}
	c := &Correction{ID: uuid.New(), Dive: d.ID, Field: field, Value: value, Reason: reason, Actor: actor, RecordedAt: now(), RecordedBy: actor}
	vj, _ := json.Marshal(value)
	err = l.record(ctx, d.Hull, func(tx pgx.Tx, h *Hull) (chainRec, error) {
		_, err := tx.Exec(ctx, `INSERT INTO corrections (id, hull_id, target_kind, target_key, field, value_json, reason, actor, recorded_at)
			VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9)`, c.ID, h.ID, correctionDive, c.Dive.String(), field, string(vj), reason, actor, c.RecordedAt)
		return chainRec{kind: "correction", key: c.ID.String(), canon: correctionCanon(h.ID, c, correctionDive, c.Dive.String(), string(vj))}, err
	})
	if err != nil {
		return nil, err
	}
	if _, err := l.evaluateAndNote(ctx, d.Hull, now()); err != nil {
		return nil, fmt.Errorf("correction recorded; writing the hull's fleet summary failed: %w", err)
	}
	return c, nil
}

// correctionsOf returns a dive's corrections, oldest first.
func (l *Ledger) correctionsOf(ctx context.Context, dive uuid.UUID) ([]Correction, error) {
	rows, err := l.db.Query(ctx, `SELECT id, field, value_json, reason, actor, recorded_at FROM corrections
		WHERE target_kind = 'dive' AND target_key = $1 ORDER BY recorded_at, id`, dive.String())
	if err != nil {
		return nil, err
	}
	rs, err := pgx.CollectRows(rows, pgx.RowToStructByName[correctionRow])
	if err != nil {
		return nil, err
	}
	var out []Correction
	for _, r := range rs {
		c := r.Correction
		c.Dive, c.RecordedBy = dive, c.Actor
		if err := json.Unmarshal([]byte(r.ValueJSON), &c.Value); err != nil {
			return nil, fmt.Errorf("correction %s: %w", c.ID, err)
		}
		out = append(out, c)
	}
	return out, nil
}

// applyCorrections sets the dive's corrected fields and lists the
// corrections on it.
func (l *Ledger) applyCorrections(ctx context.Context, d *Dive) error {
	cs, err := l.correctionsOf(ctx, d.ID)
	if err != nil {
		return err
	}
	for _, c := range cs {
		switch c.Field {
		case "site":
			d.Site = c.Value
		case "operator":
			d.Operator = c.Value
		}
	}
	d.Corrections = cs
	return nil
}
