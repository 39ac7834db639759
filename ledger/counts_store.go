package ledger

import (
	"context"
	"fmt"
	"sort"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// series is one counted series of a dive.
type series struct {
	name, unit string
	gate       float64
	cycles     []rainflow.Cycle
}

func cyclesCanon(dive uuid.UUID, ss []series) []byte {
	c := newCanon("dive_cycles")
	c.uuid(dive)
	c.i64(int64(len(ss)))
	for _, s := range ss {
		c.str(s.name)
		c.str(s.unit)
		c.f64(s.gate)
		c.i64(int64(len(s.cycles)))
		for _, y := range s.cycles {
			c.f64(y.Range)
			c.f64(y.Mean)
			c.f64(y.Count)
		}
	}
	return c.b
}

func holdsCanon(dive uuid.UUID, bin float64, hs []assess.Hold) []byte {
	c := newCanon("dive_holds")
	c.uuid(dive)
	c.f64(bin)
	c.i64(int64(len(hs)))
	for _, h := range hs {
		c.f64(h.LevelMPa)
		c.f64(h.Seconds)
	}
	return c.b
}

func splitCycles(cs []rainflow.Cycle) (r, m, n []float64) {
	r, m, n = make([]float64, len(cs)), make([]float64, len(cs)), make([]float64, len(cs))
	for i, c := range cs {
		r[i], m[i], n[i] = c.Range, c.Mean, c.Count
	}
	return
}

func joinCycles(r, m, n []float64) []rainflow.Cycle {
	out := make([]rainflow.Cycle, len(r))
	for i := range r {
		out[i] = rainflow.Cycle{Range: r[i], Mean: m[i], Count: n[i]}
	}
	return out
}

func splitHolds(hs []assess.Hold) (lv, s []float64) {
	lv, s = make([]float64, len(hs)), make([]float64, len(hs))
	for i, h := range hs {
		lv[i], s[i] = h.LevelMPa, h.Seconds
	}
	return
}

// storeCounts stores a dive's counted series and holds in tx.
func storeCounts(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, ss []series, bin float64, hs []assess.Hold) ([]chainRec, error) {
	sort.Slice(ss, func(i, j int) bool { return ss[i].name < ss[j].name })
	rows := make([][]any, len(ss))
	for i, s := range ss {
		r, m, n := splitCycles(s.cycles)
		rows[i] = []any{[16]byte(dive), [16]byte(hull), s.name, s.unit, s.gate, r, m, n}
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_cycles"}, []string{"dive_id", "hull_id", "series", "unit", "gate", "ranges", "means", "counts"}, pgx.CopyFromRows(rows)); err != nil {
		return nil, fmt.Errorf("storing counted cycles: %w", err)
	}
	lv, sec := splitHolds(hs)
	if _, err := tx.Exec(ctx, "INSERT INTO dive_holds (dive_id, hull_id, bin_mpa, levels, seconds) VALUES ($1,$2,$3,$4,$5)", dive, hull, bin, lv, sec); err != nil {
		return nil, fmt.Errorf("storing time at pressure: %w", err)
	}
	return []chainRec{
		{"dive_cycles", dive.String(), cyclesCanon(dive, ss)},
		{"dive_holds", dive.String(), holdsCanon(dive, bin, hs)},
	}, nil
}
