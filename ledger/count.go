package ledger

import (
	"context"
	"fmt"

	"github.com/google/uuid"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/seawater"
	"hulltally/ledger/logfile"
)

// diveCounter counts a dive's load while its samples stream past: the
// rainflow cycles of gauge pressure and of each strain gauge, and the time
// at pressure.
type diveCounter struct {
	loadIdx  int
	load     logfile.Column
	depth    *seawater.DepthTable
	pressure *rainflow.Counter
	holds    *assess.HoldHistogram
	strains  []strainCounter
	gateMPa  float64
	gateUE   float64
	maxBins  int
	firstNS  int64
	started  bool
	pbuf     []float64
	tbuf     []float64
}

type strainCounter struct {
	col     int
	gauge   string
	counter *rainflow.Counter
}

func (l *Ledger) newDiveCounter(cols []logfile.Column, loadIdx int, lat float64) *diveCounter {
	c := &diveCounter{loadIdx: loadIdx, load: cols[loadIdx], pressure: rainflow.NewCounter(l.fat.gateMPa),
		holds: assess.NewHoldHistogram(l.fat.binMPa), gateMPa: l.fat.gateMPa, gateUE: l.fat.gateUE, maxBins: l.fat.maxBins}
	if c.load.Load == logfile.LoadDepth {
		c.depth = seawater.NewDepthTable(lat)
	}
	for i, col := range cols {
		if col.Kind == logfile.KindStrain {
			c.strains = append(c.strains, strainCounter{col: i, gauge: col.Gauge, counter: rainflow.NewCounter(l.fat.gateUE)})
		}
	}
	return c
}

// add feeds a block: its time stamps and a function giving each column's
// values.
func (c *diveCounter) add(timeNS []int64, col func(int) []float64) {
	if len(timeNS) == 0 {
		return
	}
	if !c.started {
		c.firstNS, c.started = timeNS[0], true
	}
	vals := col(c.loadIdx)
	c.pbuf = c.pbuf[:0]
	switch c.load.Load {
	case logfile.LoadDepth:
		for _, z := range vals {
			c.pbuf = append(c.pbuf, c.depth.MPa(z))
		}
	case logfile.LoadPressureGauge:
		for _, v := range vals {
			c.pbuf = append(c.pbuf, v*c.load.ToMPa)
		}
	case logfile.LoadPressureAbsolute:
		for _, v := range vals {
			c.pbuf = append(c.pbuf, v*c.load.ToMPa-seawater.StandardAtmosphereMPa)
		}
	}
	c.pressure.Add(c.pbuf)
	c.tbuf = c.tbuf[:0]
	for _, t := range timeNS {
		c.tbuf = append(c.tbuf, float64(t-c.firstNS)/1e9)
	}
	c.holds.Add(c.tbuf, c.pbuf)
	for i := range c.strains {
		c.strains[i].counter.Add(col(c.strains[i].col))
	}
}

// finish closes the residues and returns the series (pressure first) and
// the time at pressure.
func (c *diveCounter) finish() ([]series, []assess.Hold) {
	ss := []series{{name: "pressure", unit: "MPa", gate: c.gateMPa, cycles: c.pressure.Finish()}}
	for _, sc := range c.strains {
		ss = append(ss, series{name: "strain:" + sc.gauge, unit: "microstrain", gate: c.gateUE, cycles: sc.counter.Finish()})
	}
	return ss, c.holds.Holds(c.maxBins)
}

// backfillCounts counts, from the raw readings, the dives of a hull that
// have no stored cycles (dives logged before cycles were kept), and stores
// their cycles and time at pressure as new records.
func (l *Ledger) backfillCounts(ctx context.Context, h *Hull) (int, error) {
	rows, err := l.pool.Query(ctx, `SELECT id, columns, latitude FROM dives d WHERE hull_id = $1
		AND NOT EXISTS (SELECT 1 FROM dive_cycles c WHERE c.dive_id = d.id) ORDER BY start_time`, h.ID)
	if err != nil {
		return 0, fmt.Errorf("looking for dives without counted cycles: %w", err)
	}
	type todo struct {
		id   uuid.UUID
		cols []string
		lat  float64
	}
	var list []todo
	for rows.Next() {
		var t todo
		if err := rows.Scan(&t.id, &t.cols, &t.lat); err != nil {
			rows.Close()
			return 0, err
		}
		list = append(list, t)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return 0, err
	}
	for _, t := range list {
		hdr, err := logfile.HeaderOf(t.cols)
		if err != nil {
			return 0, fmt.Errorf("dive %s: stored columns: %w", t.id, err)
		}
		c := l.newDiveCounter(hdr.Columns, hdr.Load, t.lat)
		err = l.ReadBlocks(ctx, t.id, func(b *DecodedBlock) error {
			c.add(b.TimeNS, func(i int) []float64 { return b.Values[i] })
			return nil
		})
		if err != nil {
			return 0, err
		}
		ss, holds := c.finish()
		tx, err := l.pool.Begin(ctx)
		if err != nil {
			return 0, err
		}
		recs, err := storeCounts(ctx, tx, t.id, h.ID, ss, l.fat.binMPa, holds)
		if err == nil {
			_, err = appendChain(ctx, tx, h.ID, recs, now())
		}
		if err == nil {
			err = tx.Commit(ctx)
		}
		tx.Rollback(ctx)
		if err != nil {
			return 0, fmt.Errorf("dive %s: storing counted cycles: %w", t.id, err)
		}
	}
	return len(list), nil
}
