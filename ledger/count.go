package ledger

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"slices"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

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

// profileCanon is the profile's canonical bytes.
func profileCanon(dive uuid.UUID, p *profileAcc) []byte {
	c := profileCanonHead(nil, dive, p.step, len(p.TimeS))
	c.growF64(len(p.TimeS) * (2 + len(p.Strain)))
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

// profileCanonHead starts a profile's canonical bytes on dst: the kind,
// the dive, the step and the number of points.
func profileCanonHead(dst []byte, dive uuid.UUID, step float64, n int) *canon {
	c := &canon{b: dst}
	c.str("dive_profile")
	c.uuid(dive)
	c.f64(step)
	c.i64(int64(n))
	return c
}

// appendProfileCanonSent appends the canonical bytes of a stored profile
// to dst straight from its stored series (array_send form, migration
// 019), without decoding them: the same bytes as profileCanon of
// the profile fromSent reads, and the same finding where fromSent finds
// one (TestProfileCanonSentMatches, FuzzProfileCanonSent). Hand-written
// for a measured reason: a stored element is a length word and the
// value's eight big-endian bytes, a canonical one a tag and the same
// eight bytes, so the values are moved, not decoded and encoded again;
// decoding and encoding the profiles took 17 % of verify's CPU time on
// the 500 × 100 fleet (pprof), profiles being most of its bytes.
func appendProfileCanonSent(dst []byte, dive uuid.UUID, step float64, gauges []string, ts, press, strain []byte) ([]byte, string) {
	tb, pb, sb, why := profileSent(gauges, ts, press, strain)
	if why != "" {
		return dst, why
	}
	n, m := len(tb)/12, len(sb)/12
	c := profileCanonHead(dst, dive, step, n)
	c.growF64(2*n + m)
	o := len(c.b)
	c.b = c.b[:o+18*n]
	for i := 0; i < n; i++ {
		d := c.b[o+18*i:]
		d[0] = 'f'
		binary.LittleEndian.PutUint64(d[1:], binary.LittleEndian.Uint64(tb[12*i+4:])) // the bytes as they are
		d[9] = 'f'
		binary.LittleEndian.PutUint64(d[10:], binary.LittleEndian.Uint64(pb[12*i+4:]))
	}
	c.strs(gauges)
	c.b = slices.Grow(c.b, 9*m)
	o = len(c.b)
	c.b = c.b[:o+9*m]
	for i := 0; i < m; i++ {
		d := c.b[o+9*i:]
		d[0] = 'f'
		binary.LittleEndian.PutUint64(d[1:], binary.LittleEndian.Uint64(sb[12*i+4:]))
	}
	return c.b, ""
}

// profileSent checks a stored profile's series (migration 019) for the
// profile's gauges and returns their elements (float8Checked), or a
// finding: a form hulltally never stores, or series that do not pair up
// (the record was changed). fromSent and appendProfileCanonSent judge
// alike through it.
func profileSent(gauges []string, ts, press, strain []byte) (tb, pb, sb []byte, why string) {
	tb, err := float8Checked(ts)
	if err == nil {
		if pb, err = float8Checked(press); err == nil {
			sb, err = float8Checked(strain)
		}
	}
	if err != nil {
		return nil, nil, nil, fmt.Sprintf("profile: %v (the stored record was changed)", err)
	}
	n := len(tb) / 12
	if m := len(pb) / 12; m != n {
		return nil, nil, nil, fmt.Sprintf("profile has %d times and %d pressures (the stored record was changed)", n, m)
	}
	if m := len(sb) / 12; m != n*len(gauges) {
		return nil, nil, nil, fmt.Sprintf("profile strain has %d values for %d gauges × %d points", m, len(gauges), n)
	}
	return tb, pb, sb, ""
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
		dive, hull, p.step, appendFloat8Sent(nil, p.TimeS), appendFloat8Sent(nil, p.Press), gauges, appendFloat8Sent(nil, flatStrain(p)))
	if err != nil {
		return chainRec{}, fmt.Errorf("storing the dive profile: %w", err)
	}
	return chainRec{kind: "dive_profile", key: dive.String(), canon: profileCanon(dive, p)}, nil
}

// fromSent fills the profile's series from their stored bytes (migration
// 019), the profile's gauges already read; a stored form it cannot read,
// or series that do not pair up, is returned as a finding (the ledger
// never stores one: the record was changed).
func (p *profileAcc) fromSent(ts, press, strain []byte) string {
	tb, pb, sb, why := profileSent(p.gauges, ts, press, strain)
	if why != "" {
		return why
	}
	p.TimeS = appendFloat8Body(p.TimeS[:0], tb)
	p.Press = appendFloat8Body(p.Press[:0], pb)
	p.flat = appendFloat8Body(p.flat[:0], sb)
	n := len(p.TimeS)
	p.Strain = p.Strain[:0]
	for g := range p.gauges {
		p.Strain = append(p.Strain, p.flat[g*n:(g+1)*n])
	}
	return ""
}

// errProfileChanged is a stored profile hulltally cannot read as one: it
// was changed (verify reports it as a broken record).
var errProfileChanged = errors.New("the stored profile is not one hulltally wrote")

// diveHull is the hull of the dive $1, for the readers that read a dive's
// rows by its id: they read the rows of the dive's own hull only, so rows
// stored under a hull id that is no hull are never used, and a dive
// stored under two hulls is refused (the subquery returns two rows) —
// both of which verify reports (rows_of_no_hull, dive_of_two_hulls).
const diveHull = "(SELECT d.hull_id FROM dives d WHERE d.id = $1)"

// loadProfile reads a dive's stored profile.
func loadProfile(ctx context.Context, q querier, dive uuid.UUID) (*profileAcc, error) {
	p := &profileAcc{}
	var ts, press, strain []byte
	err := q.QueryRow(ctx, "SELECT step_s, time_s, pressure_mpa, gauges, strain_ue FROM dive_profiles WHERE dive_id = $1 AND hull_id = "+diveHull, dive).Scan(&p.step, &ts, &press, &p.gauges, &strain)
	if err != nil {
		return nil, err
	}
	if why := p.fromSent(ts, press, strain); why != "" {
		return nil, fmt.Errorf("dive %s: %w: %s", dive, errProfileChanged, why)
	}
	return p, nil
}
