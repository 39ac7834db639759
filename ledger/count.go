package ledger

import (
	"context"
	"fmt"

	"github.com/google/uuid"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/seawater"
	"hulltally/fatigue/stream"
	"hulltally/ledger/logfile"
)

// diveCounter counts a dive's load while its samples stream past: it
// converts the logged load column to gauge pressure (through the seawater
// depth table for a depth column) and times to seconds from the first
// sample, and feeds fatigue/stream, which counts the rainflow cycles of
// gauge pressure and of each strain gauge, the time at pressure, the
// decimated profile and the data-quality findings.
type diveCounter struct {
	loadIdx    int
	load       logfile.Column
	depth      *seawater.DepthTable
	strainCols []int
	gauges     []string
	tempIdx    int
	gateMPa    float64
	gateUE     float64
	firstNS    int64
	started    bool
	pbuf       []float64
	tbuf       []float64
	sbuf       [][]float64
	dive       *stream.Dive
	// quality is the record's data-quality watch.
	quality *quality
	// profile is the decimated profile, filled by finish.
	profile *profileAcc
	// spill takes each series' cycles part by part as they are counted
	// (cyclePart at a time), spilled[i] says where series i's parts are,
	// and err is the first error spilling.
	spill   *cycleSpill
	spilled [][]spillPart
	err     error
}

// newDiveCounter makes a dive's counter; the cycles of a long dive go to
// sp part by part.
func (l *Ledger) newDiveCounter(cols []logfile.Column, loadIdx int, lat float64, sp *cycleSpill) *diveCounter {
	c := &diveCounter{loadIdx: loadIdx, load: cols[loadIdx], gateMPa: l.fat.gateMPa, gateUE: l.fat.gateUE, tempIdx: -1, spill: sp}
	if c.load.Load == logfile.LoadDepth {
		c.depth = seawater.NewDepthTable(lat)
	}
	for i, col := range cols {
		switch col.Kind {
		case logfile.KindStrain:
			c.strainCols = append(c.strainCols, i)
			c.gauges = append(c.gauges, col.Gauge)
		case logfile.KindTemp:
			c.tempIdx = i
		}
	}
	c.sbuf = make([][]float64, len(c.strainCols))
	in := l.cfg.Ingest
	c.dive = stream.NewDive(stream.Config{GateMPa: l.fat.gateMPa, GateUE: l.fat.gateUE, HoldBinMPa: l.fat.binMPa, HoldMaxBins: l.fat.maxBins,
		SurfaceToleranceMPa: in.SurfaceToleranceMPa, MaxGapS: in.MaxGapS, MaxIntervalS: in.MaxIntervalS, CutLegMPaPerS: in.CutLegMPaPerS}, c.gauges)
	c.quality = &quality{c.dive.Quality()}
	c.profile = &profileAcc{step: 1, gauges: c.gauges}
	c.spilled = make([][]spillPart, 1+len(c.gauges))
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
	c.tbuf = c.tbuf[:0]
	for _, t := range timeNS {
		c.tbuf = append(c.tbuf, float64(t-c.firstNS)/1e9)
	}
	var temp []float64
	if c.tempIdx >= 0 {
		temp = col(c.tempIdx)
	}
	for i, k := range c.strainCols {
		c.sbuf[i] = col(k)
	}
	c.dive.Add(c.tbuf, c.pbuf, c.sbuf, temp)
	if c.err == nil {
		c.dive.Drain(cyclePart, func(i int, cs []rainflow.Cycle) {
			if c.err != nil {
				return
			}
			p, err := c.spill.put(cs)
			if err != nil {
				c.err = err
				return
			}
			c.spilled[i] = append(c.spilled[i], p)
		})
	}
}

// finish closes the residues and returns the series (pressure first, each
// with its spilled parts) and the time at pressure; the decimated profile
// is then in c.profile. It fails if a part could not be spilled.
func (c *diveCounter) finish() ([]series, []assess.Hold, error) {
	if c.err != nil {
		return nil, nil, c.err
	}
	r := c.dive.Finish()
	*c.profile = profileAcc{step: r.Profile.StepS, gauges: r.Profile.Gauges, TimeS: r.Profile.TimeS, Press: r.Profile.PressureMPa, Strain: r.Profile.Strain}
	ss := []series{{name: "pressure", unit: "MPa", gate: c.gateMPa, cycles: r.Pressure, spilled: c.spilled[0]}}
	for i, g := range c.gauges {
		ss = append(ss, series{name: "strain:" + g, unit: "microstrain", gate: c.gateUE, cycles: r.Strain[i], spilled: c.spilled[i+1]})
	}
	return ss, r.Holds, nil
}

// backfillCounts counts, from the raw readings, the dives of a hull that
// have no stored cycles (dives logged before cycles were kept), and stores
// their cycles and time at pressure as new records.
func (l *Ledger) backfillCounts(ctx context.Context, h *Hull) (int, error) {
	rows, err := l.db.Query(ctx, `SELECT id, columns, latitude FROM dives d WHERE hull_id = $1
		AND NOT EXISTS (SELECT 1 FROM dive_cycles c WHERE c.hull_id = d.hull_id AND c.dive_id = d.id) ORDER BY start_time`, h.ID)
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
		if err := l.backfillDive(ctx, h, t.id, hdr, t.lat); err != nil {
			return 0, fmt.Errorf("dive %s: storing counted cycles: %w", t.id, err)
		}
	}
	return len(list), nil
}

// backfillDive counts one dive from its stored readings and stores its
// cycles and time at pressure.
func (l *Ledger) backfillDive(ctx context.Context, h *Hull, dive uuid.UUID, hdr logfile.Header, lat float64) error {
	sp := &cycleSpill{}
	defer sp.Close()
	c := l.newDiveCounter(hdr.Columns, hdr.Load, lat, sp)
	err := l.ReadBlocks(ctx, dive, func(b *DecodedBlock) error {
		c.add(b.TimeNS, func(i int) []float64 { return b.Values[i] })
		return nil
	})
	if err != nil {
		return err
	}
	ss, holds, err := c.finish()
	if err != nil {
		return err
	}
	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback(ctx)
	recs, err := storeCounts(ctx, tx, dive, h.ID, ss, sp, l.fat.binMPa, holds, nil)
	if err != nil {
		return err
	}
	if _, err := appendChain(ctx, tx, h.ID, recs, now()); err != nil {
		return err
	}
	return tx.Commit(ctx)
}
