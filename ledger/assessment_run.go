package ledger

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"sort"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/rainflow"
	"hulltally/ledger/spec"
)

// AssessOptions say who re-assesses and why.
type AssessOptions struct {
	// Hull limits the assessment to one serial; empty means every hull.
	Hull   string
	Reason string
	Actor  string
}

// AssessResult is one hull's new assessment.
type AssessResult struct {
	Hull         string    `json:"hull"`
	AssessmentID uuid.UUID `json:"assessment_id"`
	ConfigHash   string    `json:"config_hash"`
	Dives        int       `json:"dives"`
	// CountedFromRaw is the number of dives whose cycles had to be counted
	// from the raw readings first (logged before cycles were stored).
	CountedFromRaw int      `json:"counted_from_raw"`
	Previous       *Damages `json:"previous"`
	Current        *Damages `json:"current"`
}

// Assess re-assesses hulls from their stored cycles, voided dives left out
// as in the damage in force (no raw readings are read, except to count
// dives logged before cycles were stored), with the configuration in
// force, appending a new assessment per hull in one transaction; the
// earlier ones stay on record.
func (l *Ledger) Assess(ctx context.Context, o AssessOptions) ([]AssessResult, error) {
	if err := l.writable("Assess"); err != nil {
		return nil, err
	}
	var err error
	if o.Actor, err = l.actorFor(o.Actor); err != nil {
		return nil, err
	}
	if o.Reason == "" {
		o.Reason = "re-assessment"
	}
	var hulls []*Hull
	if o.Hull != "" {
		h, err := l.Hull(ctx, o.Hull)
		if err != nil {
			return nil, inputErr(err)
		}
		hulls = []*Hull{h}
	} else {
		var err error
		if hulls, err = l.allHulls(ctx); err != nil {
			return nil, err
		}
	}
	if len(hulls) == 0 {
		return nil, nil
	}
	ids := make([][16]byte, len(hulls))
	byID := map[uuid.UUID]int{}
	comps := make([][]assess.Component, len(hulls))
	asr := make([]*assess.Assessor, len(hulls))
	for i, h := range hulls {
		ids[i] = h.ID
		byID[h.ID] = i
		var err error
		if comps[i], err = l.resolve(h.Spec); err != nil {
			return nil, inputErr(fmt.Errorf("hull %s: %w", h.Serial, err))
		}
		if asr[i], err = assess.NewAssessor(comps[i], l.fat.settings); err != nil {
			return nil, inputErr(fmt.Errorf("hull %s: %w", h.Serial, err))
		}
	}
	// The damage in force before, read a few hulls at a time and kept as
	// totals only: memory is bounded by the largest hull, not the fleet.
	prev := make([]*Damages, len(hulls))
	for lo := 0; lo < len(hulls); lo += assessChunk {
		p, err := l.hullDamages(ctx, hulls[lo:min(lo+assessChunk, len(hulls))])
		if err != nil {
			return nil, err
		}
		for k := range p {
			p[k].PerDive = nil
			prev[lo+k] = p[k]
		}
	}
	out := make([]AssessResult, len(hulls))
	// Dives logged before cycles were stored are counted from their raw
	// readings first.
	missing, err := l.hullsMissingCounts(ctx, ids)
	if err != nil {
		return nil, err
	}
	for _, id := range missing {
		i := byID[id]
		if out[i].CountedFromRaw, err = l.backfillCounts(ctx, hulls[i]); err != nil {
			return nil, fmt.Errorf("assess %s: %w", hulls[i].Serial, err)
		}
	}
	// Every new assessment is appended in one transaction, each hull's as
	// soon as its last dive has been read, so only one hull's dives are
	// held at a time.
	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, err
	}
	defer tx.Rollback(ctx)
	at := now()
	store := func(i int, cols []compDamage, perDive []DiveDamage) error {
		h := hulls[i]
		sort.Slice(perDive, func(a, b int) bool {
			x, y := perDive[a], perDive[b]
			if !x.Start.Equal(y.Start) {
				return x.Start.Before(y.Start)
			}
			return bytes.Compare(x.Dive[:], y.Dive[:]) < 0
		})
		head := &assessmentHead{id: uuid.New(), hull: h.ID, revision: h.Revision, kind: "reassess", configHash: l.fat.hash,
			configJSON: l.fat.json, reason: o.Reason, actor: o.Actor, at: at}
		rec, err := storeAssessment(ctx, tx, head, cols)
		if err != nil {
			return fmt.Errorf("assess %s: %w", h.Serial, err)
		}
		if _, err := appendChain(ctx, tx, h.ID, []chainRec{rec}, at); err != nil {
			return err
		}
		cur := l.newDamages(h)
		cur.PerDive = perDive
		for ci, c := range comps[i] {
			m := &cur.Components[ci]
			m.Basis, m.Factor, m.Curve = string(c.Transfer.Transfer.Basis), c.Transfer.Transfer.Factor, c.Curve.Name
			if c.Rupture != nil {
				m.RuptureCurve = c.Rupture.Name
			}
			// cols is sorted by component now; find this one's record.
			for k := range cols {
				if cols[k].component == c.Name {
					m.setRecord(cols[k].rec)
				}
			}
		}
		cur.Assessments = prev[i].Assessments + 1
		cur.ConfigHash = fmt.Sprintf("%x", l.fat.hash)
		if err := l.finishDamages(h, cur); err != nil {
			return err
		}
		cur.PerDive = nil
		out[i].Hull, out[i].AssessmentID, out[i].ConfigHash = h.Serial, head.id, cur.ConfigHash
		out[i].Dives, out[i].Previous, out[i].Current = len(perDive), prev[i], cur
		return nil
	}
	newCols := func(i int) []compDamage {
		cols := newColumns(comps[i], 1024)
		for k, e := range asr[i].Settings() {
			cols[k].rec.setSettings(e)
		}
		return cols
	}
	// One goroutine reads and decodes the stored cycles, assessChunk hulls
	// at a time (each chunk's rows as they come, unsorted, so reading
	// starts at once and overlaps the computing), then sends a marker; this
	// one computes and, at the marker, stores the chunk's hulls.
	type item struct {
		hull     int // -1: the chunk ending at chunkEnd has been read whole
		id       uuid.UUID
		start    time.Time
		dive     assess.Dive
		chunkEnd int
	}
	items := make(chan item, 256)
	readErr := make(chan error, 1)
	rctx, cancel := context.WithCancel(ctx)
	defer cancel()
	go func() {
		defer close(items)
		readErr <- pgx.BeginTxFunc(rctx, l.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
			if _, err := tx.Exec(rctx, "SET LOCAL work_mem = '64MB'"); err != nil {
				return err
			}
			send := func(it item) error {
				select {
				case items <- it:
					return nil
				case <-rctx.Done():
					return rctx.Err()
				}
			}
			var rg, mn, ct, lv, sec []float64
			var hullID uuid.UUID
			for lo := 0; lo < len(ids); lo += assessChunk {
				hi := min(lo+assessChunk, len(ids))
				later, err := laterPressureParts(rctx, tx, ids[lo:hi], nil)
				if err != nil {
					return fmt.Errorf("assess: %w", err)
				}
				rows, err := tx.Query(rctx, `SELECT d.hull_id, d.id, d.start_time, c.ranges, c.means, c.counts, coalesce(h.levels, '{}'), coalesce(h.seconds, '{}')
					FROM dives d LEFT JOIN dive_cycles c ON c.hull_id = d.hull_id AND c.dive_id = d.id AND c.series = 'pressure' AND c.chunk = 0
					LEFT JOIN dive_holds h ON h.hull_id = d.hull_id AND h.dive_id = d.id
					WHERE d.hull_id = ANY($1) AND `+notVoided, ids[lo:hi])
				if err != nil {
					return fmt.Errorf("assess: reading cycles: %w", err)
				}
				for rows.Next() {
					var it item
					if err := rows.Scan(&hullID, &it.id, &it.start, &rg, &mn, &ct, &lv, &sec); err != nil {
						rows.Close()
						return err
					}
					if rg == nil {
						// Counted before (hullsMissingCounts), so a dive
						// without a first part has lost it: refused, never
						// assessed without its cycles.
						rows.Close()
						return fmt.Errorf("assess: dive %s has no first part of counted pressure cycles (run hulltally verify); nothing was assessed", it.id)
					}
					it.hull = byID[hullID]
					it.dive.PressureCycles = append(joinCyclesInto(nil, rg, mn, ct), later[it.id]...)
					it.dive.Holds = make([]assess.Hold, len(lv))
					for k := range lv {
						it.dive.Holds[k] = assess.Hold{LevelMPa: lv[k], Seconds: sec[k]}
					}
					if err := send(it); err != nil {
						rows.Close()
						return err
					}
				}
				rows.Close()
				if err := rows.Err(); err != nil {
					return fmt.Errorf("assess: reading cycles: %w", err)
				}
				if err := send(item{hull: -1, chunkEnd: hi}); err != nil {
					return err
				}
			}
			return nil
		})
	}()
	var cerr error
	cols := make([][]compDamage, len(hulls))
	perDive := make([][]DiveDamage, len(hulls))
	stored := 0
	for it := range items {
		if cerr != nil {
			continue
		}
		if it.hull < 0 {
			for ; stored < it.chunkEnd && cerr == nil; stored++ {
				if cols[stored] == nil {
					cols[stored] = newCols(stored)
				}
				cerr = store(stored, cols[stored], perDive[stored])
				cols[stored], perDive[stored] = nil, nil
			}
			if cerr != nil {
				cancel()
			}
			continue
		}
		i := it.hull
		if cols[i] == nil {
			cols[i] = newCols(i)
		}
		res, err := asr[i].Dive(it.dive)
		if err != nil {
			cerr = fmt.Errorf("assess %s dive %s: %w", hulls[i].Serial, it.id, err)
			cancel()
			continue
		}
		addDive(cols[i], it.id, res)
		dd := DiveDamage{Dive: it.id, Start: it.start, Damage: make(map[string]damage.Damage, len(res))}
		for _, r := range res {
			dd.Damage[r.Component] = r.Damage
		}
		perDive[i] = append(perDive[i], dd)
	}
	if err := <-readErr; cerr == nil && err != nil {
		cerr = err
	}
	if cerr == nil && stored != len(hulls) {
		cerr = fmt.Errorf("assess: %d of %d hulls were read", stored, len(hulls))
	}
	if cerr != nil {
		return nil, cerr
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("assess: commit: %w", err)
	}
	return out, nil
}

// assessChunk is how many hulls' damage in force Assess reads at once.
const assessChunk = 32

// hullsMissingCounts lists the hulls that have dives without stored cycles.
func (l *Ledger) hullsMissingCounts(ctx context.Context, ids [][16]byte) ([]uuid.UUID, error) {
	rows, err := l.db.Query(ctx, `SELECT DISTINCT d.hull_id FROM dives d LEFT JOIN dive_cycles c ON c.hull_id = d.hull_id AND c.dive_id = d.id AND c.series = 'pressure'
		WHERE d.hull_id = ANY($1) AND c.dive_id IS NULL`, ids)
	if err != nil {
		return nil, fmt.Errorf("looking for dives without counted cycles: %w", err)
	}
	defer rows.Close()
	var out []uuid.UUID
	for rows.Next() {
		var id uuid.UUID
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		out = append(out, id)
	}
	return out, rows.Err()
}

func joinCyclesInto(dst []rainflow.Cycle, r, m, n []float64) []rainflow.Cycle {
	for i := range r {
		dst = append(dst, rainflow.Cycle{Range: r[i], Mean: m[i], Count: n[i]})
	}
	return dst
}

// allHulls returns every hull with its spec in force, by serial.
func (l *Ledger) allHulls(ctx context.Context) ([]*Hull, error) {
	rows, err := l.db.Query(ctx, `SELECT DISTINCT ON (h.serial COLLATE "C") h.id, h.serial, h.recorded_at, r.revision, r.spec_json, r.recorded_at, r.reason, r.actor
		FROM hulls h JOIN hull_revisions r ON r.hull_id = h.id
		ORDER BY h.serial COLLATE "C", r.revision DESC`)
	if err != nil {
		return nil, fmt.Errorf("listing hulls: %w", err)
	}
	defer rows.Close()
	var out []*Hull
	for rows.Next() {
		h := &Hull{}
		var js string
		if err := rows.Scan(&h.ID, &h.Serial, &h.RecordedAt, &h.Revision, &js, &h.RevisedAt, &h.Reason, &h.Actor); err != nil {
			return nil, err
		}
		h.Spec = new(spec.Hull)
		if err := json.Unmarshal([]byte(js), h.Spec); err != nil {
			return nil, fmt.Errorf("hull %s: stored spec: %w", h.Serial, err)
		}
		out = append(out, h)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows.Close()
	for _, h := range out {
		if err := attachProof(ctx, l.db, h); err != nil {
			return nil, err
		}
	}
	return out, nil
}
