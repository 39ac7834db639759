package ledger

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"sort"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// series is one counted series of a dive. While a long dive is counted,
// most of its cycles are in spill (parts written out as they were
// counted); cycles is the rest, the last part.
type series struct {
	name, unit string
	gate       float64
	cycles     []rainflow.Cycle
	// spilled are the parts of the series in spill, in counting order.
	spilled []spillPart
}

// n is the series' number of cycles.
func (s *series) n() int64 {
	n := int64(len(s.cycles))
	for _, p := range s.spilled {
		n += int64(p.n)
	}
	return n
}

// parts hands the series' cycles to fn part by part, in counting order:
// the spilled parts, then the last (which may be empty; a series with no
// cycles at all is one empty part). The slice is valid only during fn.
func (s *series) parts(sp *cycleSpill, fn func([]rainflow.Cycle) error) error {
	for k := range s.numParts() {
		cs, err := s.part(sp, k)
		if err != nil {
			return err
		}
		if err := fn(cs); err != nil {
			return err
		}
	}
	return nil
}

// numParts is the number of parts the series is stored in: the spilled
// ones, then the last unless it is empty after spilled ones (a series
// with no cycles at all is one empty part). The canonical bytes and the
// stored rows both go by it.
func (s *series) numParts() int {
	if len(s.cycles) == 0 && len(s.spilled) > 0 {
		return len(s.spilled)
	}
	return len(s.spilled) + 1
}

// part is part k of the series (k < numParts); a spilled part's slice is
// reused by the next read.
func (s *series) part(sp *cycleSpill, k int) ([]rainflow.Cycle, error) {
	if k < len(s.spilled) {
		return sp.read(s.spilled[k])
	}
	return s.cycles, nil
}

func cyclesCanon(dive uuid.UUID, ss []series) []byte {
	var b bytes.Buffer
	// Without a spill every part is in memory: writing cannot fail.
	_ = writeCyclesCanon(&b, dive, ss, nil)
	return b.Bytes()
}

// writeCyclesCanon writes the canonical bytes of a dive's counted cycles
// to w, reading spilled parts back from sp as it goes: the same bytes for
// a series stored in one part or in many.
func writeCyclesCanon(w io.Writer, dive uuid.UUID, ss []series, sp *cycleSpill) error {
	c := newCanon("dive_cycles")
	c.uuid(dive)
	c.i64(int64(len(ss)))
	flush := func() error {
		_, err := w.Write(c.b)
		c.b = c.b[:0]
		return err
	}
	for i := range ss {
		s := &ss[i]
		c.str(s.name)
		c.str(s.unit)
		c.f64(s.gate)
		c.i64(s.n())
		err := s.parts(sp, func(cs []rainflow.Cycle) error {
			c.growF64(3 * len(cs))
			for _, y := range cs {
				c.f64(y.Range)
				c.f64(y.Mean)
				c.f64(y.Count)
			}
			return flush()
		})
		if err != nil {
			return err
		}
	}
	return flush()
}

func holdsCanon(dive uuid.UUID, bin float64, hs []assess.Hold) []byte {
	c := newCanon("dive_holds")
	c.uuid(dive)
	c.f64(bin)
	c.i64(int64(len(hs)))
	c.growF64(2 * len(hs))
	for _, h := range hs {
		c.f64(h.LevelMPa)
		c.f64(h.Seconds)
	}
	return c.b
}

// splitCycles splits cycles into the three stored arrays, reusing r, m
// and n.
func splitCycles(cs []rainflow.Cycle, r, m, n []float64) ([]float64, []float64, []float64) {
	if r == nil {
		// Never nil: an empty series is stored as empty arrays, not NULL.
		r, m, n = make([]float64, 0, len(cs)), make([]float64, 0, len(cs)), make([]float64, 0, len(cs))
	}
	r, m, n = r[:0], m[:0], n[:0]
	for _, c := range cs {
		r, m, n = append(r, c.Range), append(m, c.Mean), append(n, c.Count)
	}
	return r, m, n
}

func joinCycles(r, m, n []float64) []rainflow.Cycle {
	return joinCyclesInto(make([]rainflow.Cycle, 0, len(r)), r, m, n)
}

func splitHolds(hs []assess.Hold) (lv, s []float64) {
	lv, s = make([]float64, len(hs)), make([]float64, len(hs))
	for i, h := range hs {
		lv[i], s[i] = h.LevelMPa, h.Seconds
	}
	return
}

// storeCounts stores a dive's counted series and holds in tx, each series
// in one row per part (chunk 0, 1, ...), read back from sp part by part so
// that a long dive is never held whole. Each pressure part is also handed
// to pressure (the dive's damage summed as the parts pass), in order. The
// counted cycles' chain record reads sp again when it is hashed: sp must
// stay open until the records are appended.
func storeCounts(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, ss []series, sp *cycleSpill, bin float64, hs []assess.Hold, pressure func([]rainflow.Cycle) error) ([]chainRec, error) {
	sort.Slice(ss, func(i, j int) bool { return ss[i].name < ss[j].name })
	src := &chunkSource{ctx: ctx, dive: dive, hull: hull, ss: ss, sp: sp, pressure: pressure}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_cycles"}, []string{"dive_id", "hull_id", "series", "unit", "gate", "chunk", "ranges", "means", "counts"}, src); err != nil {
		if src.err != nil {
			return nil, src.err
		}
		return nil, fmt.Errorf("storing counted cycles: %w", err)
	}
	if src.err != nil {
		return nil, src.err
	}
	lv, sec := splitHolds(hs)
	if _, err := tx.Exec(ctx, "INSERT INTO dive_holds (dive_id, hull_id, bin_mpa, levels, seconds) VALUES ($1,$2,$3,$4,$5)", dive, hull, bin, lv, sec); err != nil {
		return nil, fmt.Errorf("storing time at pressure: %w", err)
	}
	return []chainRec{
		{kind: "dive_cycles", key: dive.String(), write: func(w io.Writer) error { return writeCyclesCanon(w, dive, ss, sp) }},
		{kind: "dive_holds", key: dive.String(), canon: holdsCanon(dive, bin, hs)},
	}, nil
}

// chunkSource feeds COPY one row per part of each series, reading one
// part at a time. pgx encodes each row before asking for the next, so the
// arrays are reused.
type chunkSource struct {
	ctx        context.Context
	dive, hull uuid.UUID
	ss         []series
	sp         *cycleSpill
	pressure   func([]rainflow.Cycle) error
	// i is the series and k the part of it to send next.
	i, k    int
	cur     []any
	r, m, n []float64
	err     error
}

func (s *chunkSource) Next() bool {
	for s.err == nil && s.i < len(s.ss) {
		se := &s.ss[s.i]
		k := s.k
		if k == se.numParts() {
			s.i, s.k = s.i+1, 0
			continue
		}
		var cs []rainflow.Cycle
		if cs, s.err = se.part(s.sp, k); s.err != nil {
			return false
		}
		s.k++
		if se.name == "pressure" && s.pressure != nil {
			if err := s.pressure(cs); err != nil {
				s.err = fmt.Errorf("assessing the dive: %w", err)
				return false
			}
		}
		s.r, s.m, s.n = splitCycles(cs, s.r, s.m, s.n)
		s.cur = []any{[16]byte(s.dive), [16]byte(s.hull), se.name, se.unit, se.gate, int32(k), s.r, s.m, s.n}
		return true
	}
	return false
}

func (s *chunkSource) Values() ([]any, error) { return s.cur, nil }
func (s *chunkSource) Err() error             { return s.err }

// seriesJoiner joins a dive's stored rows, ordered by series (COLLATE "C")
// and chunk, back into its series. A series whose chunks are not numbered
// 0, 1, 2, ... without a gap or repeat, or whose chunks disagree on unit
// or gate, is not taken: why says so, and the record must fail its check
// (a lost or repeated part is never read as a whole series).
type seriesJoiner struct {
	ss   []series
	next int32
	why  string
}

// add takes the next row.
func (j *seriesJoiner) add(name, unit string, gate float64, chunk int32, r, m, n []float64) {
	if j.why != "" {
		return
	}
	k := len(j.ss) - 1
	if k < 0 || j.ss[k].name != name {
		if chunk != 0 {
			j.why = fmt.Sprintf("counted series %s starts at part %d, not 0: a part is missing", name, chunk)
			return
		}
		j.ss = append(j.ss, series{name: name, unit: unit, gate: gate})
		k, j.next = k+1, 0
	}
	s := &j.ss[k]
	switch {
	case chunk != j.next:
		j.why = fmt.Sprintf("counted series %s: part %d follows part %d; parts are missing or repeated", name, chunk, j.next-1)
		return
	case s.unit != unit || s.gate != gate:
		j.why = fmt.Sprintf("counted series %s: part %d says unit %q and gate %v, part 0 says %q and %v", name, chunk, unit, gate, s.unit, s.gate)
		return
	}
	j.next++
	s.cycles = joinCyclesInto(s.cycles, r, m, n)
}

// laterPressureParts reads the pressure cycles stored after the first part
// (chunk > 0: only long dives have them) of the dives of the given hulls,
// or of the given dives when dives is not nil, joined in order per dive.
// Readers that take chunk 0 in a join add these. A gap or repeat in the
// parts is an error, never a shorter series.
func laterPressureParts(ctx context.Context, q querier, hulls any, dives []uuid.UUID) (map[uuid.UUID][]rainflow.Cycle, error) {
	sql := `SELECT dive_id, chunk, ranges, means, counts FROM dive_cycles WHERE hull_id = ANY($1) AND series = 'pressure' AND chunk > 0 ORDER BY dive_id, chunk`
	args := []any{hulls}
	if dives != nil {
		sql = `SELECT dive_id, chunk, ranges, means, counts FROM dive_cycles WHERE hull_id = ANY($1) AND dive_id = ANY($2) AND series = 'pressure' AND chunk > 0 ORDER BY dive_id, chunk`
		args = append(args, dives)
	}
	rows, err := q.Query(ctx, sql, args...)
	if err != nil {
		return nil, fmt.Errorf("reading the later parts of long dives' pressure cycles: %w", err)
	}
	defer rows.Close()
	out := map[uuid.UUID][]rainflow.Cycle{}
	var cur uuid.UUID
	var next int32
	for rows.Next() {
		var id uuid.UUID
		var chunk int32
		var r, m, n []float64
		if err := rows.Scan(&id, &chunk, &r, &m, &n); err != nil {
			return nil, err
		}
		if id != cur {
			cur, next = id, 1
		}
		if chunk != next {
			return nil, fmt.Errorf("dive %s: its pressure cycles' part %d follows part %d: parts are missing or repeated (run hulltally verify)", id, chunk, next-1)
		}
		next++
		out[id] = joinCyclesInto(out[id], r, m, n)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("reading the later parts of long dives' pressure cycles: %w", err)
	}
	return out, nil
}

// checkPressureParts fails if any dive of the hull has its pressure cycles
// in parts that are not numbered 0, 1, 2, ... without a gap or repeat:
// readers that sum over every part (cycles used toward the qualification,
// the load histogram) must not sum fewer than the dive counted.
func checkPressureParts(ctx context.Context, q querier, hull uuid.UUID) error {
	var dive *uuid.UUID
	if err := q.QueryRow(ctx, "SELECT "+brokenPressureParts, hull).Scan(&dive); err != nil {
		return fmt.Errorf("checking the parts of the counted pressure cycles: %w", err)
	}
	return brokenPartsErr(dive)
}

// brokenPressureParts is a scalar subquery: a dive of hull $1 whose
// pressure parts are not numbered 0, 1, 2, ... without a gap or repeat,
// or NULL. A query that sums the parts selects it beside its sum, so the
// check costs no second round trip.
const brokenPressureParts = `(SELECT dive_id FROM dive_cycles WHERE hull_id = $1 AND series = 'pressure'
		GROUP BY dive_id HAVING min(chunk) <> 0 OR max(chunk) <> count(*) - 1 LIMIT 1)`

// brokenPartsErr is the error for a dive brokenPressureParts found.
func brokenPartsErr(dive *uuid.UUID) error {
	if dive == nil {
		return nil
	}
	return fmt.Errorf("dive %s: its counted pressure cycles have a part missing or repeated (run hulltally verify); nothing is summed from them", *dive)
}
