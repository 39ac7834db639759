package ledger

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger/blocks"
)

// Dives lists a hull's dives, oldest first.
func (l *Ledger) Dives(ctx context.Context, serial string) ([]Dive, error) {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, err
	}
	rows, err := l.db.Query(ctx, "SELECT "+prefixed("d.", diveColumns)+", NOT "+notVoided+" AS voided, EXISTS (SELECT 1 FROM proof_tests p WHERE p.hull_id = d.hull_id AND p.dive_id = d.id) AS proof_test FROM dives d WHERE d.hull_id = $1 ORDER BY d.start_time, d.id", h.ID)
	if err != nil {
		return nil, fmt.Errorf("listing dives of %s: %w", serial, err)
	}
	return l.listed(rows, h, serial)
}

// listed reads the rows of a dive list (diveColumns, voided,
// proof_test).
func (l *Ledger) listed(rows pgx.Rows, h *Hull, serial string) ([]Dive, error) {
	type listed struct {
		diveRow
		Voided    bool `db:"voided"`
		ProofTest bool `db:"proof_test"`
	}
	rs, err := pgx.CollectRows(rows, pgx.RowToStructByName[listed])
	if err != nil {
		return nil, fmt.Errorf("listing dives of %s: %w", serial, err)
	}
	var out []Dive
	for i := range rs {
		r := &rs[i]
		d := diveFromRow(&r.diveRow, serial, h.Spec.RatedDepthM, false)
		d.Voided, d.ProofTest = r.Voided, r.ProofTest
		d.BeyondRated = d.BeyondRated && !r.ProofTest
		out = append(out, *d)
	}
	return out, nil
}

// ErrUnknownDive is returned for a dive id not in the ledger.
var ErrUnknownDive = errors.New("unknown dive")

// Dive returns one dive by id (a unique prefix of at least 8 characters
// of the id is enough).
func (l *Ledger) Dive(ctx context.Context, id string) (*Dive, error) {
	id = strings.ToLower(strings.TrimSpace(id))
	if strings.Trim(id, "0123456789abcdef-") != "" || len(id) > 36 {
		return nil, inputErr(fmt.Errorf("%w: %q is not a dive id (hexadecimal digits and dashes)", ErrUnknownDive, id))
	}
	if len(id) < 8 {
		return nil, inputErr(fmt.Errorf("%w: %q: give the dive id or at least its first 8 characters", ErrUnknownDive, id))
	}
	rows, err := l.db.Query(ctx, "SELECT "+diveColumns+", (SELECT serial FROM hulls WHERE hulls.id = dives.hull_id) AS serial FROM dives WHERE id::text LIKE $1 || '%' LIMIT 2", id)
	if err != nil {
		return nil, fmt.Errorf("reading dive %s: %w", id, err)
	}
	type found1 struct {
		diveRow
		Serial string `db:"serial"`
	}
	rs, err := pgx.CollectRows(rows, pgx.RowToStructByName[found1])
	if err != nil {
		return nil, fmt.Errorf("reading dive %s: %w", id, err)
	}
	var found []*Dive
	for i := range rs {
		found = append(found, diveFromRow(&rs[i].diveRow, rs[i].Serial, 0, false))
	}
	switch len(found) {
	case 0:
		return nil, inputErr(fmt.Errorf("%w: %s (hulltally dive list --hull SERIAL shows the ids)", ErrUnknownDive, id))
	case 2:
		return nil, inputErr(fmt.Errorf("dive id prefix %s is ambiguous: give more characters", id))
	}
	d := found[0]
	h, err := l.Hull(ctx, d.Hull)
	if err != nil {
		return nil, err
	}
	d.RatedDepthM = h.Spec.RatedDepthM
	if err := l.applyCorrections(ctx, d); err != nil {
		return nil, err
	}
	if d.Void, err = l.VoidOf(ctx, d.ID); err != nil {
		return nil, err
	}
	d.Voided = d.Void != nil
	if err := l.db.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM proof_tests WHERE dive_id = $1)", d.ID).Scan(&d.ProofTest); err != nil {
		return nil, err
	}
	d.BeyondRated = d.BeyondRated && !d.ProofTest
	ev, err := l.EvidenceOf(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	d.Evidence = ev.View()
	return d, nil
}

// DecodedBlock is a block of a dive's readings: TimeNS and, per column of
// the dive's file (Dive.Columns), Values (nil for the time column).
type DecodedBlock = blocks.Decoded

// ReadBlocks streams a dive's decoded reading blocks in order.
func (l *Ledger) ReadBlocks(ctx context.Context, dive uuid.UUID, fn func(*DecodedBlock) error) error {
	rows, err := l.db.Query(ctx, "SELECT data FROM reading_blocks WHERE dive_id = $1 AND hull_id = "+diveHull+" ORDER BY block_no", dive)
	if err != nil {
		return fmt.Errorf("reading blocks of dive %s: %w", dive, err)
	}
	defer rows.Close()
	for rows.Next() {
		var data []byte
		if err := rows.Scan(&data); err != nil {
			return err
		}
		d, err := blocks.Decode(data)
		if err != nil {
			return fmt.Errorf("dive %s: %w", dive, err)
		}
		if err := fn(d); err != nil {
			return err
		}
	}
	return rows.Err()
}

// DivesPage lists a page of a hull's dives, newest first: limit dives
// after skipping offset, as Dives gives them (void dives too), with the
// number of every dive of the hull.
func (l *Ledger) DivesPage(ctx context.Context, serial string, offset, limit int) ([]Dive, int, error) {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, 0, err
	}
	var total int
	if err := l.db.QueryRow(ctx, "SELECT count(*) FROM dives WHERE hull_id = $1", h.ID).Scan(&total); err != nil {
		return nil, 0, fmt.Errorf("counting the dives of %s: %w", serial, err)
	}
	rows, err := l.db.Query(ctx, "SELECT "+prefixed("d.", diveColumns)+", NOT "+notVoided+" AS voided, EXISTS (SELECT 1 FROM proof_tests p WHERE p.hull_id = d.hull_id AND p.dive_id = d.id) AS proof_test FROM dives d WHERE d.hull_id = $1 ORDER BY d.start_time DESC, d.id DESC OFFSET $2 LIMIT $3", h.ID, max(offset, 0), max(limit, 0))
	if err != nil {
		return nil, 0, fmt.Errorf("listing dives of %s: %w", serial, err)
	}
	ds, err := l.listed(rows, h, serial)
	return ds, total, err
}
