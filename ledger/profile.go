package ledger

import (
	"context"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// profileAcc is a dive's decimated profile as the ledger stores it: the
// means over windows of step seconds built by stream.Decimator (times in s
// from the dive's first sample, gauge pressures in MPa, per gauge strains
// in µε).
type profileAcc struct {
	step   float64
	gauges []string
	TimeS  []float64
	Press  []float64
	Strain [][]float64 // per gauge
	// flat is the strain of every gauge end to end, as stored; Strain's
	// series are slices of it.
	flat []float64
}

// Profile is a dive's stored decimated profile.
type Profile struct {
	TimeS       []float64
	PressureMPa []float64
	// Strain per gauge, µε.
	Strain map[string][]float64
}

// ProfileOf returns a dive's decimated profile (nil for dives logged
// before profiles were kept).
func (l *Ledger) ProfileOf(ctx context.Context, dive uuid.UUID) (*Profile, error) {
	p, err := loadProfile(ctx, l.db, dive)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	out := &Profile{TimeS: p.TimeS, PressureMPa: p.Press, Strain: map[string][]float64{}}
	for i, g := range p.gauges {
		out.Strain[g] = p.Strain[i]
	}
	return out, nil
}

// HullCycles returns every pressure cycle of a hull's dives (range, count
// pairs), for the histogram of its load.
func (l *Ledger) HullCycles(ctx context.Context, hull uuid.UUID) (ranges, counts []float64, err error) {
	// In dive order: the report's fingerprint covers these lists, so their
	// order must not follow the table's physical order (which a migration,
	// VACUUM FULL or CLUSTER changes).
	if err := checkPressureParts(ctx, l.db, hull); err != nil {
		return nil, nil, err
	}
	rows, err := l.db.Query(ctx, `SELECT c.ranges, c.counts FROM dive_cycles c JOIN dives d ON d.hull_id = c.hull_id AND d.id = c.dive_id
		WHERE c.hull_id = $1 AND c.series = 'pressure' ORDER BY d.start_time, d.id, c.chunk`, hull)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var r, c []float64
		if err := rows.Scan(&r, &c); err != nil {
			return nil, nil, err
		}
		ranges, counts = append(ranges, r...), append(counts, c...)
	}
	return ranges, counts, rows.Err()
}
