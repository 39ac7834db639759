package ledger

import (
	"context"
	"fmt"
	"math"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

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
	profile  *profileAcc
	sbuf     [][]float64
	quality  *quality
	tempIdx  int
	// cutRate is the rate of travel, MPa/s, at which the unrecorded leg of
	// a cut-off record is charged.
	cutRate float64
}

// cutLegS is the time charged for the unrecorded leg of a cut-off record
// from pressure p to the surface.
func (c *diveCounter) cutLegS(p float64) float64 { return math.Max(p, 0) / c.cutRate }

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
	var gauges []string
	for i, col := range cols {
		if col.Kind == logfile.KindStrain {
			c.strains = append(c.strains, strainCounter{col: i, gauge: col.Gauge, counter: rainflow.NewCounter(l.fat.gateUE)})
			gauges = append(gauges, col.Gauge)
		}
	}
	c.profile = newProfileAcc(gauges)
	c.sbuf = make([][]float64, len(c.strains))
	c.tempIdx = -1
	for i, col := range cols {
		if col.Kind == logfile.KindTemp {
			c.tempIdx = i
		}
	}
	in := l.cfg.Ingest
	c.quality = newQuality(in.SurfaceToleranceMPa, in.MaxGapS, in.MaxIntervalS, c.tempIdx)
	c.cutRate = in.CutLegMPaPerS
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
	if !c.quality.have && len(c.pbuf) > 0 && c.pbuf[0] > c.quality.surfTol {
		// The record starts below the surface: the dive began from the
		// surface all the same, so its first cycle starts at 0.
		c.pressure.Add([]float64{0})
	}
	c.pressure.Add(c.pbuf)
	c.tbuf = c.tbuf[:0]
	for _, t := range timeNS {
		c.tbuf = append(c.tbuf, float64(t-c.firstNS)/1e9)
	}
	var temp []float64
	if c.tempIdx >= 0 {
		temp = col(c.tempIdx)
	}
	c.quality.add(c.tbuf, c.pbuf, temp)
	c.holds.Add(c.tbuf, c.pbuf)
	for i := range c.strains {
		c.sbuf[i] = col(c.strains[i].col)
		c.strains[i].counter.Add(c.sbuf[i])
	}
	c.profile.add(c.tbuf, c.pbuf, c.sbuf)
}

// finish closes the residues and returns the series (pressure first) and
// the time at pressure; the decimated profile is in c.profile.
func (c *diveCounter) finish() ([]series, []assess.Hold) {
	c.profile.finish()
	q := c.quality
	if q.endsCut() {
		// The record ends below the surface: close the cycle to the
		// surface so it is counted whole, not as a half.
		c.pressure.Add([]float64{0})
	}
	// The unrecorded legs of a cut-off record (from the surface to its
	// first pressure, from its last pressure to the surface) are charged
	// at the highest pressure recorded, for the time they take at the
	// configured slow rate: what happened there is unknown, so never in
	// the hull's favour.
	leg := 0.0
	if q.startsCut() {
		leg += c.cutLegS(q.firstP)
	}
	if q.endsCut() {
		leg += c.cutLegS(q.lastP)
	}
	if leg > 0 {
		c.holds.Add([]float64{q.prevT + leg}, []float64{q.maxP})
	}
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
	rows, err := l.db.Query(ctx, `SELECT id, columns, latitude FROM dives d WHERE hull_id = $1
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

func profileCanon(dive uuid.UUID, p *profileAcc) []byte {
	c := newCanon("dive_profile")
	c.uuid(dive)
	c.f64(p.step)
	c.i64(int64(len(p.TimeS)))
	for i := range p.TimeS {
		c.f64(p.TimeS[i])
		c.f64(p.Press[i])
	}
	c.strs(p.gauges)
	for _, g := range p.Strain {
		for _, v := range g {
			c.f64(v)
		}
	}
	return c.b
}

func flatStrain(p *profileAcc) []float64 {
	out := make([]float64, 0, len(p.Strain)*len(p.TimeS))
	for _, g := range p.Strain {
		out = append(out, g...)
	}
	return out
}

// storeProfile stores a dive's decimated profile in tx.
func storeProfile(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, p *profileAcc) (chainRec, error) {
	gauges := p.gauges
	if gauges == nil {
		gauges = []string{}
	}
	_, err := tx.Exec(ctx, `INSERT INTO dive_profiles (dive_id, hull_id, step_s, time_s, pressure_mpa, gauges, strain_ue) VALUES ($1,$2,$3,$4,$5,$6,$7)`,
		dive, hull, p.step, p.TimeS, p.Press, gauges, flatStrain(p))
	if err != nil {
		return chainRec{}, fmt.Errorf("storing the dive profile: %w", err)
	}
	return chainRec{"dive_profile", dive.String(), profileCanon(dive, p)}, nil
}

// loadProfile reads a dive's stored profile.
func loadProfile(ctx context.Context, q querier, dive uuid.UUID) (*profileAcc, error) {
	p := &profileAcc{}
	var flat []float64
	err := q.QueryRow(ctx, "SELECT step_s, time_s, pressure_mpa, gauges, strain_ue FROM dive_profiles WHERE dive_id = $1", dive).Scan(&p.step, &p.TimeS, &p.Press, &p.gauges, &flat)
	if err != nil {
		return nil, err
	}
	n := len(p.TimeS)
	if len(flat) != n*len(p.gauges) {
		return nil, fmt.Errorf("dive %s: profile strain has %d values for %d gauges × %d points", dive, len(flat), len(p.gauges), n)
	}
	for g := range p.gauges {
		p.Strain = append(p.Strain, flat[g*n:(g+1)*n])
	}
	return p, nil
}
