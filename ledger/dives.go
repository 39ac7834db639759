package ledger

import (
	"context"
	"crypto/sha256"
	"errors"
	"fmt"
	"hash"
	"io"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/seawater"
	"hulltally/ledger/blocks"
	"hulltally/ledger/files"
	"hulltally/ledger/logfile"
)

// LogRequest is one dive to record.
type LogRequest struct {
	Hull    string // serial
	Samples string // path of the samples file
	AE      string // path of the acoustic-emission hits file, optional
	// Latitude in degrees; nil means the configured default, else the
	// conservative latitude for the logged column.
	Latitude *float64
	Site     string
	Operator string
	// Start is the time of t_s = 0 for files with relative times.
	Start *time.Time
	// Progress, if set, is called after each stored block with the samples
	// stored so far.
	Progress func(samples int64)
	// proof, when set, is the proof test these samples record: it is
	// checked against them and stored in the same transaction.
	proof *ProofTest
}

// Dive is a recorded dive's summary.
type Dive struct {
	ID              uuid.UUID `json:"dive_id"`
	Hull            string    `json:"hull"`
	HullRevision    int32     `json:"hull_revision"`
	Duplicate       bool      `json:"duplicate"`
	Source          string    `json:"source"`
	SourceSHA256    string    `json:"source_sha256"`
	AESource        string    `json:"ae_source,omitempty"`
	Start           time.Time `json:"start_time"`
	End             time.Time `json:"end_time"`
	DurationS       float64   `json:"duration_s"`
	Samples         int64     `json:"samples"`
	Blocks          int32     `json:"blocks"`
	MaxDepthM       float64   `json:"max_depth_m"`
	MaxPressureMPa  float64   `json:"max_pressure_mpa"`
	RatedDepthM     float64   `json:"rated_depth_m"`
	BeyondRated     bool      `json:"beyond_rated"`
	LoadColumn      string    `json:"load_column"`
	Columns         []string  `json:"columns"`
	Gauges          []string  `json:"gauges"`
	AEHits          int32     `json:"ae_hits"`
	Latitude        float64   `json:"latitude"`
	LatitudeAssumed bool      `json:"latitude_assumed"`
	Site            string    `json:"site"`
	Operator        string    `json:"operator"`
	RecordedAt      time.Time `json:"recorded_at"`
	// Corrections recorded on the dive (applied to Site and Operator).
	Corrections []Correction `json:"corrections,omitempty"`
	// Voided is true when a void record took the dive out of damage,
	// evidence and status; Void is that record (dive show).
	Voided bool  `json:"voided"`
	Void   *Void `json:"void,omitempty"`
	// ProofTest is true when the dive records a proof test: it is judged
	// as one, never as a dive beyond the rated depth.
	ProofTest bool `json:"proof_test"`
	// Evidence is the dive's evidence in force (dive show and dive log).
	Evidence *EvidenceView `json:"evidence,omitempty"`
	// Rejudged lists the later dives whose evidence was judged again
	// because this dive was logged late (dive log only).
	Rejudged []uuid.UUID `json:"rejudged,omitempty"`
	// Replaces names a void dive of another hull recorded from the same
	// samples (dive log only).
	Replaces *uuid.UUID `json:"replaces_void_dive,omitempty"`
}

// diveRow is the stored dive row, for canonical bytes.
type diveRow struct {
	ID, HullID                  uuid.UUID
	HullRevision                int32
	SourceName                  string
	SHA                         []byte
	SourceBytes                 int64
	AEName                      string
	AESHA                       []byte
	Start, End                  time.Time
	Lat                         float64
	LatAssumed                  bool
	Site, Operator, LoadColumn  string
	Columns, Gauges             []string
	Samples                     int64
	Blocks                      int32
	Duration, MaxDepth, MaxPres float64
	Beyond                      bool
	AEHits                      int32
	RecordedAt                  time.Time
	// fingerprint is the SHA-256 of the normalised samples (not a dive
	// column: stored in dive_fingerprints).
	fingerprint []byte
	// evidence is the dive's evidence as judged at logging.
	evidence *Evidence
}

func (d *diveRow) canon() []byte {
	c := newCanon("dive")
	c.uuid(d.ID)
	c.uuid(d.HullID)
	c.i64(int64(d.HullRevision))
	c.str(d.SourceName)
	c.bytes(d.SHA)
	c.i64(d.SourceBytes)
	c.str(d.AEName)
	c.bytes(d.AESHA)
	c.time(d.Start)
	c.time(d.End)
	c.f64(d.Lat)
	c.boolean(d.LatAssumed)
	c.str(d.Site)
	c.str(d.Operator)
	c.str(d.LoadColumn)
	c.strs(d.Columns)
	c.strs(d.Gauges)
	c.i64(d.Samples)
	c.i64(int64(d.Blocks))
	c.f64(d.Duration)
	c.f64(d.MaxDepth)
	c.f64(d.MaxPres)
	c.boolean(d.Beyond)
	c.i64(int64(d.AEHits))
	c.time(d.RecordedAt)
	return c.b
}

const diveColumns = `id, hull_id, hull_revision, source_name, source_sha256, source_bytes, ae_source_name, ae_source_sha256,
	start_time, end_time, latitude, latitude_assumed, site, operator, load_column, columns, gauges, sample_count,
	block_count, duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, recorded_at`

func (d *diveRow) scanArgs() []any {
	return []any{&d.ID, &d.HullID, &d.HullRevision, &d.SourceName, &d.SHA, &d.SourceBytes, &d.AEName, &d.AESHA,
		&d.Start, &d.End, &d.Lat, &d.LatAssumed, &d.Site, &d.Operator, &d.LoadColumn, &d.Columns, &d.Gauges, &d.Samples,
		&d.Blocks, &d.Duration, &d.MaxDepth, &d.MaxPres, &d.Beyond, &d.AEHits, &d.RecordedAt}
}

func (d *diveRow) values() []any {
	return []any{d.ID, d.HullID, d.HullRevision, d.SourceName, d.SHA, d.SourceBytes, d.AEName, d.AESHA,
		d.Start, d.End, d.Lat, d.LatAssumed, d.Site, d.Operator, d.LoadColumn, d.Columns, d.Gauges, d.Samples,
		d.Blocks, d.Duration, d.MaxDepth, d.MaxPres, d.Beyond, d.AEHits, d.RecordedAt}
}

func blockCanon(dive, hull uuid.UUID, no int32, first int64, n int32, t0, t1 int64, dataSHA []byte) []byte {
	c := newCanon("reading_block")
	c.uuid(dive)
	c.uuid(hull)
	c.i64(int64(no))
	c.i64(first)
	c.i64(int64(n))
	c.i64(t0)
	c.i64(t1)
	c.bytes(dataSHA) // SHA-256 of the encoded readings, recomputed from the data
	return c.b
}

func hitsCanon(dive uuid.UUID, n int32, digest []byte) []byte {
	c := newCanon("ae_hits")
	c.uuid(dive)
	c.i64(int64(n))
	c.bytes(digest) // SHA-256 over the canonical bytes of every hit, in order
	return c.b
}

func hitBytes(dst []byte, seq int32, h *logfile.Hit) []byte {
	c := canon{b: dst}
	c.i64(int64(seq))
	c.i64(h.TimeNS)
	c.i64(int64(h.Channel))
	c.f64(h.AmplitudeDB)
	c.f64(h.Energy)
	c.i64(h.Counts)
	c.f64(h.DurationUS)
	c.f64(h.RiseUS)
	if h.Event != logfile.EventHit {
		// A sensor check; hits keep the bytes they had before checks
		// were recorded.
		c.str(h.Event.String())
	}
	return c.b
}

// InputError wraps a problem with the user's input (as opposed to the
// database): the command exits with the input-error code.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

func inputErr(err error) error {
	var ie *InputError
	if errors.As(err, &ie) {
		return err
	}
	return &InputError{err}
}

// LogDive records a dive from its data-logger files in one transaction:
// all of it or nothing. The same samples file for the same hull is the
// same dive: it is reported as a duplicate and nothing is added.
func (l *Ledger) LogDive(ctx context.Context, req LogRequest) (*Dive, error) {
	if err := l.writable("LogDive"); err != nil {
		return nil, err
	}
	h, err := l.Hull(ctx, req.Hull)
	if err != nil {
		if errors.Is(err, ErrUnknownHull) {
			return nil, inputErr(err)
		}
		return nil, err
	}
	if req.Latitude != nil && !seawater.ValidLatitude(*req.Latitude) {
		return nil, inputErr(fmt.Errorf("latitude %v: must be between -90 and 90 degrees", *req.Latitude))
	}
	sha, size, err := hashFile(ctx, req.Samples)
	if err != nil {
		return nil, fileErr(ctx, err)
	}
	var aeSHA []byte
	if req.AE != "" {
		if aeSHA, _, err = hashFile(ctx, req.AE); err != nil {
			return nil, fileErr(ctx, err)
		}
	}
	if d, err := l.existingDive(ctx, l.db, h, sha, aeSHA); d != nil || err != nil {
		return d, err
	}
	replaces, err := l.elsewhere(ctx, l.db, h, "source_sha256", sha, "samples file")
	if err != nil {
		return nil, err
	}

	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, fmt.Errorf("logging dive: %w", err)
	}
	defer tx.Rollback(ctx)
	// One hull, one dive at a time: a second process logging the same file
	// (or another dive of the hull) waits here, then finds the first one's
	// dive.
	if err := lockHullDives(ctx, tx, h); err != nil {
		return nil, fmt.Errorf("logging dive: %w", err)
	}
	if d, err := l.existingDive(ctx, tx, h, sha, aeSHA); d != nil || err != nil {
		return d, err
	}

	row, recs, err := l.ingest(ctx, tx, h, req, sha, size, aeSHA)
	if err != nil {
		return nil, err
	}
	if row.fingerprint != nil {
		d, err := l.sameSamples(ctx, tx, h, row.fingerprint, aeSHA)
		if d != nil || err != nil {
			return d, err
		}
		r2, err := l.elsewhere(ctx, tx, h, "fingerprint", row.fingerprint, "samples (under another file name)")
		if err != nil {
			return nil, err
		}
		if replaces == nil {
			replaces = r2
		}
		if _, err := tx.Exec(ctx, "INSERT INTO dive_fingerprints (dive_id, hull_id, fingerprint) VALUES ($1,$2,$3)", row.ID, h.ID, row.fingerprint); err != nil {
			return nil, fmt.Errorf("logging dive: storing the samples' fingerprint: %w", err)
		}
		recs = append(recs, chainRec{"dive_fingerprint", row.ID.String(), fingerprintCanon(row.ID, row.fingerprint)})
	}
	// After the fingerprint: the same samples under another file are the
	// same dive (a duplicate), not an overlapping one.
	if err := l.checkPlace(ctx, tx, h, row); err != nil {
		return nil, err
	}
	tag, err := tx.Exec(ctx, "INSERT INTO dives ("+diveColumns+") VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10,$11,$12,$13,$14,$15,$16,$17,$18,$19,$20,$21,$22,$23,$24,$25) ON CONFLICT (hull_id, source_sha256) DO NOTHING", row.values()...)
	if err != nil {
		return nil, fmt.Errorf("logging dive: storing the dive row: %w", err)
	}
	if tag.RowsAffected() == 0 {
		tx.Rollback(ctx)
		return l.existingDive(ctx, l.db, h, sha, aeSHA)
	}
	recs = append([]chainRec{{"dive", row.ID.String(), row.canon()}}, recs...)
	if p := req.proof; p != nil {
		p.DiveID = &row.ID
		if p.At.IsZero() {
			p.At = row.Start
		}
		if p.PressureMPa == 0 {
			p.PressureMPa = row.MaxPres
		}
		p.Baseline = map[string]float64{}
		if row.evidence != nil {
			for _, s := range row.evidence.Strain {
				if s.ComplianceUEPerMPa != nil {
					p.Baseline[s.Gauge] = *s.ComplianceUEPerMPa
				}
			}
		}
		precs, err := l.insertProof(ctx, tx, h, p, row)
		if err != nil {
			return nil, err
		}
		recs = append(recs, precs...)
	}
	// A dive logged late for an earlier day: judge every later dive again.
	rejudged, rrecs, err := l.rejudge(ctx, tx, h, row.Start, fmt.Sprintf("dive %s logged late (started %s)", row.ID, row.Start.Format(time.RFC3339)))
	if err != nil {
		return nil, err
	}
	recs = append(recs, rrecs...)
	if _, err := appendChain(ctx, tx, h.ID, recs, row.RecordedAt); err != nil {
		return nil, err
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("logging dive: commit: %w", err)
	}
	if err := l.noteStatusAfter(ctx, h.Serial); err != nil {
		return nil, err
	}
	d := diveFromRow(row, h.Serial, h.Spec.RatedDepthM, false)
	d.Rejudged, d.Replaces = rejudged, replaces
	d.Evidence, d.ProofTest = row.evidence.View(), req.proof != nil
	d.BeyondRated = d.BeyondRated && !d.ProofTest
	return d, nil
}

// checkPlace refuses a dive dated ahead of the clock, or overlapping a
// dive of the same hull that is already recorded (and not void).
func (l *Ledger) checkPlace(ctx context.Context, tx pgx.Tx, h *Hull, row *diveRow) error {
	tol := time.Duration(l.cfg.Ingest.ClockToleranceS * float64(time.Second))
	if limit := now().Add(tol); row.End.After(limit) {
		return inputErr(fmt.Errorf("the dive is dated ahead of the clock: it ends %s, later than now plus the clock tolerance of %s (%s); check the logger's clock", row.End.Format(time.RFC3339), tol, limit.Format(time.RFC3339)))
	}
	var id uuid.UUID
	var name string
	var s, e time.Time
	err := tx.QueryRow(ctx, `SELECT d.id, d.source_name, d.start_time, d.end_time FROM dives d WHERE d.hull_id = $1 AND d.start_time <= $3 AND d.end_time >= $2 AND `+notVoided+`
		ORDER BY d.start_time LIMIT 1`, h.ID, row.Start, row.End).Scan(&id, &name, &s, &e)
	if err == pgx.ErrNoRows {
		return nil
	}
	if err != nil {
		return fmt.Errorf("logging dive: looking for overlapping dives: %w", err)
	}
	return inputErr(fmt.Errorf("hull %s cannot make two dives at once: this record (%s to %s) overlaps dive %s from %s (%s to %s); nothing was stored",
		h.Serial, row.Start.Format(time.RFC3339), row.End.Format(time.RFC3339), id, name, s.Format(time.RFC3339), e.Format(time.RFC3339)))
}

// sameSamples finds a dive of the hull recorded from the same normalised
// samples under another file: the same dive.
func (l *Ledger) sameSamples(ctx context.Context, q querier, h *Hull, fp, aeSHA []byte) (*Dive, error) {
	var r diveRow
	var void bool
	err := q.QueryRow(ctx, "SELECT "+prefixed("d.", diveColumns)+", NOT "+notVoided+" FROM dives d JOIN dive_fingerprints f ON f.dive_id = d.id WHERE d.hull_id = $1 AND f.fingerprint = $2 ORDER BY 26 LIMIT 1", h.ID, fp).Scan(append(r.scanArgs(), &void)...)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("looking for the same samples under another file: %w", err)
	}
	if void {
		// A void dive is not logged again on its own hull under another
		// file (with other hits, say): that would escape its judgement.
		return nil, inputErr(fmt.Errorf("these samples were recorded as dive %s of hull %s (file %s), which is void; a void dive is not logged again on the same hull", r.ID, h.Serial, r.SourceName))
	}
	if !equalBytes(r.AESHA, aeSHA) {
		return nil, inputErr(fmt.Errorf("dive %s was already recorded from the same samples (file %s) with other acoustic-emission data; nothing was added (a correction is recorded separately, never by re-logging)", r.ID, r.SourceName))
	}
	return diveFromRow(&r, h.Serial, h.Spec.RatedDepthM, true), nil
}

// elsewhere refuses samples already recorded for another hull (by the
// file's SHA-256 or the samples' fingerprint) unless that dive is void;
// it returns the void dive the new one replaces, if any.
func (l *Ledger) elsewhere(ctx context.Context, q querier, h *Hull, column string, sum []byte, what string) (*uuid.UUID, error) {
	var sql string
	if column == "fingerprint" {
		sql = `SELECT d.id, hs.serial, EXISTS (SELECT 1 FROM dive_voids v WHERE v.dive_id = d.id) FROM dives d JOIN dive_fingerprints f ON f.dive_id = d.id JOIN hulls hs ON hs.id = d.hull_id
			WHERE f.fingerprint = $2 AND d.hull_id <> $1 ORDER BY 3, d.recorded_at`
	} else {
		sql = `SELECT d.id, hs.serial, EXISTS (SELECT 1 FROM dive_voids v WHERE v.dive_id = d.id) FROM dives d JOIN hulls hs ON hs.id = d.hull_id
			WHERE d.source_sha256 = $2 AND d.hull_id <> $1 ORDER BY 3, d.recorded_at`
	}
	rows, err := q.Query(ctx, sql, h.ID, sum)
	if err != nil {
		return nil, fmt.Errorf("looking for the same %s on other hulls: %w", what, err)
	}
	type other struct {
		id     uuid.UUID
		serial string
		void   bool
	}
	os, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (other, error) {
		var o other
		err := r.Scan(&o.id, &o.serial, &o.void)
		return o, err
	})
	if err != nil {
		return nil, fmt.Errorf("looking for the same %s on other hulls: %w", what, err)
	}
	var replaces *uuid.UUID
	for _, o := range os {
		if !o.void {
			return nil, inputErr(fmt.Errorf("the same %s is already recorded as dive %s of hull %s; a dive belongs to one hull — if it was logged to the wrong hull, void it first (hulltally dive void %s --reason ...), then log it here", what, o.id, o.serial, o.id))
		}
		id := o.id
		replaces = &id
	}
	return replaces, nil
}

// prefixed puts a table alias before every column of a column list.
func prefixed(alias, cols string) string {
	parts := strings.Split(cols, ",")
	for i, p := range parts {
		parts[i] = alias + strings.TrimSpace(p)
	}
	return strings.Join(parts, ", ")
}

func (l *Ledger) existingDive(ctx context.Context, q querier, h *Hull, sha, aeSHA []byte) (*Dive, error) {
	var r diveRow
	err := q.QueryRow(ctx, "SELECT "+diveColumns+" FROM dives WHERE hull_id = $1 AND source_sha256 = $2", h.ID, sha).Scan(r.scanArgs()...)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("looking for an earlier record of this file: %w", err)
	}
	if !equalBytes(r.AESHA, aeSHA) {
		what := "with a different acoustic-emission file"
		switch {
		case aeSHA == nil:
			what = "with an acoustic-emission file, and none was given now"
		case r.AESHA == nil:
			what = "without an acoustic-emission file"
		}
		return nil, inputErr(fmt.Errorf("dive %s was already recorded from this samples file %s; nothing was added (a correction is recorded separately, never by re-logging)", r.ID, what))
	}
	return diveFromRow(&r, h.Serial, h.Spec.RatedDepthM, true), nil
}

func equalBytes(a, b []byte) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func diveFromRow(r *diveRow, serial string, rated float64, dup bool) *Dive {
	return &Dive{ID: r.ID, Hull: serial, HullRevision: r.HullRevision, Duplicate: dup, Source: r.SourceName,
		SourceSHA256: fmt.Sprintf("%x", r.SHA), AESource: r.AEName, Start: r.Start, End: r.End, DurationS: r.Duration,
		Samples: r.Samples, Blocks: r.Blocks, MaxDepthM: r.MaxDepth, MaxPressureMPa: r.MaxPres, RatedDepthM: rated,
		BeyondRated: r.Beyond, LoadColumn: r.LoadColumn, Columns: r.Columns, Gauges: r.Gauges, AEHits: r.AEHits,
		Latitude: r.Lat, LatitudeAssumed: r.LatAssumed, Site: r.Site, Operator: r.Operator, RecordedAt: r.RecordedAt}
}

// hashFile hashes a data-logger file. Only a regular file is read (a FIFO,
// device such as /dev/zero, folder or socket is refused at once), and the
// hash stops promptly when ctx is cancelled.
func hashFile(ctx context.Context, path string) ([]byte, int64, error) {
	f, err := files.OpenRegular(ctx, path)
	if err != nil {
		return nil, 0, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, files.NewReader(ctx, f))
	if err != nil {
		return nil, 0, fmt.Errorf("reading %s: %w", path, err)
	}
	return h.Sum(nil), n, nil
}

// fileErr is an error opening or reading an input file: the input's fault
// (an InputError), except a cancellation, which is returned as such.
func fileErr(ctx context.Context, err error) error {
	if ce := ctx.Err(); ce != nil && errors.Is(err, ce) {
		return err
	}
	return inputErr(err)
}

type parsed struct {
	b   *blocks.Block
	err error
}

// ingest parses the samples (and hits) and stores blocks and hits in tx,
// returning the dive row (not yet inserted) and the chain records.
func (l *Ledger) ingest(ctx context.Context, tx pgx.Tx, h *Hull, req LogRequest, sha []byte, size int64, aeSHA []byte) (*diveRow, []chainRec, error) {
	f, err := files.OpenRegular(ctx, req.Samples)
	if err != nil {
		return nil, nil, fileErr(ctx, err)
	}
	defer f.Close()
	tee := sha256.New()
	name := filepath.Base(req.Samples)
	minT, maxT, err := l.timeWindow()
	if err != nil {
		return nil, nil, err
	}
	sr, err := logfile.NewSampleReader(io.TeeReader(files.NewReader(ctx, f), tee), req.Samples, logfile.SampleOptions{Start: req.Start, BlockSamples: l.cfg.Ingest.BlockSamples, MinTime: minT, MaxTime: maxT})
	if err != nil {
		return nil, nil, fileErr(ctx, err)
	}
	hdr := sr.Header()
	known := h.Spec.StrainGauges()
	for i, c := range hdr.Columns {
		if c.Kind == logfile.KindStrain && !containsStr(known, c.Gauge) {
			return nil, nil, inputErr(sr.Errorf(i+1, "strain gauge %q is not in hull %s's spec (its strain gauges: %s); record the gauge with a spec revision or correct the header", c.Gauge, h.Serial, listOr(known)))
		}
	}
	load := hdr.Columns[hdr.Load]
	lat, assumed := l.latitude(req.Latitude, load.Load)

	row := &diveRow{ID: uuid.New(), HullID: h.ID, HullRevision: h.Revision, SourceName: name, SHA: sha, SourceBytes: size,
		Lat: lat, LatAssumed: assumed, Site: req.Site, Operator: req.Operator, LoadColumn: load.Name, Gauges: hdr.Gauges}
	if row.Gauges == nil {
		row.Gauges = []string{}
	}
	for _, c := range hdr.Columns {
		row.Columns = append(row.Columns, c.Name)
	}

	// Parse in one goroutine, encode and store in this one.
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	free := make(chan *blocks.Block, 3)
	for i := 0; i < 3; i++ {
		free <- sr.NewBlock()
	}
	full := make(chan parsed, 2)
	go func() {
		defer close(full)
		for {
			var b *blocks.Block
			select {
			case b = <-free:
			case <-ctx.Done():
				return
			}
			err := sr.ReadBlock(b)
			if err == io.EOF {
				return
			}
			select {
			case full <- parsed{b, err}:
			case <-ctx.Done():
				return
			}
			if err != nil {
				return
			}
		}
	}()
	src := &blockSource{ctx: ctx, full: full, free: free, row: row, loadIdx: hdr.Load, progress: req.Progress,
		counter: l.newDiveCounter(hdr.Columns, hdr.Load, lat), fp: logfile.NewFingerprint(hdr)}
	src.maxLoad = math.Inf(-1)
	_, err = tx.CopyFrom(ctx, pgx.Identifier{"reading_blocks"}, []string{"dive_id", "hull_id", "block_no", "first_sample", "samples", "t_first_ns", "t_last_ns", "data", "sha256"}, src)
	if src.perr != nil {
		return nil, nil, fileErr(ctx, src.perr)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("storing readings: %w", err)
	}
	if got := tee.Sum(nil); !equalBytes(got, sha) {
		return nil, nil, inputErr(fmt.Errorf("%s changed while it was being logged; nothing was stored — log it again once the logger has finished writing", req.Samples))
	}
	row.Samples = src.rows
	row.Blocks = src.blockNo
	row.fingerprint = src.fp.Sum()
	row.Start = time.Unix(0, src.firstNS).UTC().Truncate(time.Microsecond)
	row.End = time.Unix(0, src.lastNS).UTC().Truncate(time.Microsecond)
	row.Duration = float64(src.lastNS-src.firstNS) / 1e9
	switch load.Load {
	case logfile.LoadDepth:
		row.MaxDepth = src.maxLoad
		row.MaxPres = seawater.DepthToMPa(math.Max(src.maxLoad, 0), lat)
	case logfile.LoadPressureGauge:
		row.MaxPres = src.maxLoad * load.ToMPa
		row.MaxDepth = seawater.MPaToDepth(math.Max(row.MaxPres, 0), lat)
	case logfile.LoadPressureAbsolute:
		row.MaxPres = src.maxLoad*load.ToMPa - seawater.StandardAtmosphereMPa
		row.MaxDepth = seawater.MPaToDepth(math.Max(row.MaxPres, 0), lat)
	}
	row.Beyond = row.MaxDepth > h.Spec.RatedDepthM
	recs := src.recs

	// The counted cycles and time at pressure, then the dive's damage.
	ss, holds := src.counter.finish()
	pcycles := ss[0].cycles
	crecs, err := storeCounts(ctx, tx, row.ID, h.ID, ss, l.fat.binMPa, holds)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, crecs...)
	prec, err := storeProfile(ctx, tx, row.ID, h.ID, src.counter.profile)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, prec)
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, nil, inputErr(fmt.Errorf("assessing the dive on hull %s: %w (the dive was not recorded; fix the hull spec or the curve library)", h.Serial, err))
	}
	res, err := assess.DiveDamage(assess.Dive{PressureCycles: pcycles, Holds: holds}, comps, l.fat.settings)
	if err != nil {
		return nil, nil, fmt.Errorf("assessing the dive: %w", err)
	}
	ah := &assessmentHead{id: uuid.New(), hull: h.ID, revision: h.Revision, kind: "dive", configHash: l.fat.hash,
		configJSON: l.fat.json, reason: "dive logged", actor: actorOr(req.Operator), at: now()}
	cols := newColumns(comps, 1)
	addDive(cols, row.ID, res)
	arec, err := storeAssessment(ctx, tx, ah, cols)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, arec)

	var hits []logfile.Hit
	if req.AE != "" {
		n, digest, kept, err := l.ingestHits(ctx, tx, h, row, req, aeSHA, src.firstNS, src.lastNS)
		if err != nil {
			return nil, nil, err
		}
		hits = kept
		row.AEName, row.AESHA, row.AEHits = filepath.Base(req.AE), aeSHA, n
		recs = append(recs, chainRec{"ae_hits", row.ID.String(), hitsCanon(row.ID, n, digest)})
	}
	q := src.counter.quality
	in := evidenceInput{dive: row.ID, start: row.Start, prof: src.counter.profile, hadAE: req.AE != "", gauges: hdr.Gauges, quality: q.findings()}
	in.hits, in.checks = hitsForEvidence(hits, src.firstNS)
	if b, a, ok := q.surfaceTemps(); ok {
		in.tempBefore, in.tempAfter = &b, &a
	}
	ev, err := l.diveEvidence(ctx, tx, h, in)
	if err != nil {
		return nil, nil, err
	}
	row.evidence = ev
	erec, err := storeEvidence(ctx, tx, row.ID, h.ID, ev)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, erec)
	row.RecordedAt = now()
	return row, recs, nil
}

func actorOr(op string) string {
	if strings.TrimSpace(op) == "" {
		return "dive log"
	}
	return op
}

func (l *Ledger) latitude(given *float64, load logfile.Load) (float64, bool) {
	if given != nil {
		return *given, false
	}
	if l.cfg.Ingest.DefaultLatitude != nil {
		return *l.cfg.Ingest.DefaultLatitude, true
	}
	// Conservative: a logged depth is turned into pressure at the
	// latitude of strongest gravity; a logged pressure into depth at the
	// weakest, which gives the deepest depth (for the rated-depth check).
	if load == logfile.LoadDepth {
		return 90, true
	}
	return 0, true
}

// blockSource feeds encoded blocks to COPY and keeps the dive's summary.
type blockSource struct {
	ctx      context.Context
	full     chan parsed
	free     chan *blocks.Block
	row      *diveRow
	loadIdx  int
	progress func(int64)

	buf     []byte
	vals    []any
	perr    error
	blockNo int32
	rows    int64
	firstNS int64
	lastNS  int64
	maxLoad float64
	recs    []chainRec
	sha     hash.Hash

	// Counting while storing.
	counter *diveCounter
	// fp fingerprints the normalised samples.
	fp *logfile.Fingerprint
}

// timeWindow is the span of time stamps a record may carry: from the
// configured earliest time to now plus the clock tolerance.
func (l *Ledger) timeWindow() (time.Time, time.Time, error) {
	minT, err := l.cfg.Ingest.Earliest()
	if err != nil {
		return time.Time{}, time.Time{}, err
	}
	return minT, now().Add(time.Duration(l.cfg.Ingest.ClockToleranceS * float64(time.Second))), nil
}

func (s *blockSource) Next() bool {
	if s.progress != nil && s.blockNo > 0 {
		s.progress(s.rows)
	}
	p, ok := <-s.full
	if !ok {
		return false
	}
	if p.err != nil {
		s.perr = p.err
		return false
	}
	b := p.b
	n := b.Len()
	if s.rows == 0 {
		s.firstNS = b.TimeNS[0]
	}
	s.lastNS = b.TimeNS[n-1]
	s.counter.add(b.TimeNS, func(c int) []float64 { return b.Cols[c].Value })
	s.fp.AddBlock(b)
	for _, v := range b.Cols[s.loadIdx].Value {
		if v > s.maxLoad {
			s.maxLoad = v
		}
	}
	s.buf = blocks.Encode(s.buf[:0], b)
	if s.sha == nil {
		s.sha = sha256.New()
	}
	s.sha.Reset()
	s.sha.Write(s.buf)
	sum := s.sha.Sum(nil)
	data := make([]byte, len(s.buf))
	copy(data, s.buf)
	s.vals = []any{[16]byte(s.row.ID), [16]byte(s.row.HullID), s.blockNo, s.rows, int32(n), b.TimeNS[0], b.TimeNS[n-1], data, sum}
	s.recs = append(s.recs, chainRec{"reading_block", fmt.Sprintf("%s/%d", s.row.ID, s.blockNo), blockCanon(s.row.ID, s.row.HullID, s.blockNo, s.rows, int32(n), b.TimeNS[0], b.TimeNS[n-1], sum)})
	s.rows += int64(n)
	s.blockNo++
	s.free <- b
	return true
}

func (s *blockSource) Values() ([]any, error) { return s.vals, nil }
func (s *blockSource) Err() error {
	if s.perr != nil {
		return s.perr
	}
	return nil
}

func (l *Ledger) ingestHits(ctx context.Context, tx pgx.Tx, h *Hull, row *diveRow, req LogRequest, aeSHA []byte, firstNS, lastNS int64) (int32, []byte, []logfile.Hit, error) {
	f, err := files.OpenRegular(ctx, req.AE)
	if err != nil {
		return 0, nil, nil, fileErr(ctx, err)
	}
	defer f.Close()
	tee := sha256.New()
	minT, maxT, err := l.timeWindow()
	if err != nil {
		return 0, nil, nil, err
	}
	hr, err := logfile.NewHitReaderOptions(io.TeeReader(files.NewReader(ctx, f), tee), req.AE, logfile.HitOptions{Start: req.Start, MinTime: minT, MaxTime: maxT})
	if err != nil {
		return 0, nil, nil, fileErr(ctx, err)
	}
	chans := h.Spec.AEChannels()
	src := &hitSource{hr: hr, row: row, chans: chans, first: firstNS, last: lastNS, digest: sha256.New(), serial: h.Serial}
	_, err = tx.CopyFrom(ctx, pgx.Identifier{"ae_hits"}, []string{"dive_id", "hull_id", "seq", "t_ns", "channel", "amplitude_db", "energy", "counts", "duration_us", "rise_us", "event"}, src)
	if src.perr != nil {
		return 0, nil, nil, fileErr(ctx, src.perr)
	}
	if err != nil {
		return 0, nil, nil, fmt.Errorf("storing acoustic-emission hits: %w", err)
	}
	if !equalBytes(tee.Sum(nil), aeSHA) {
		return 0, nil, nil, inputErr(fmt.Errorf("%s changed while it was being logged; nothing was stored", req.AE))
	}
	return src.seq, src.digest.Sum(nil), src.kept, nil
}

type hitSource struct {
	hr          *logfile.HitReader
	row         *diveRow
	chans       []int
	first, last int64
	hit         logfile.Hit
	seq         int32
	perr        error
	digest      hash.Hash
	buf         []byte
	serial      string
	kept        []logfile.Hit
}

func (s *hitSource) Next() bool {
	err := s.hr.Next(&s.hit)
	if err == io.EOF {
		return false
	}
	if err != nil {
		s.perr = err
		return false
	}
	if s.hit.TimeNS < s.first || s.hit.TimeNS > s.last {
		s.perr = s.hr.Errorf("time", "hit at %s is outside the dive's samples (%s to %s)",
			time.Unix(0, s.hit.TimeNS).UTC().Format(time.RFC3339Nano), time.Unix(0, s.first).UTC().Format(time.RFC3339Nano), time.Unix(0, s.last).UTC().Format(time.RFC3339Nano))
		return false
	}
	if !containsInt(s.chans, s.hit.Channel) {
		s.perr = s.hr.Errorf("channel", "channel %d is not an acoustic-emission channel of hull %s (its channels: %s)", s.hit.Channel, s.serial, listIntOr(s.chans))
		return false
	}
	s.buf = hitBytes(s.buf[:0], s.seq, &s.hit)
	s.digest.Write(s.buf)
	s.seq++
	s.kept = append(s.kept, s.hit)
	return true
}

func (s *hitSource) Values() ([]any, error) {
	h := &s.hit
	return []any{[16]byte(s.row.ID), [16]byte(s.row.HullID), s.seq - 1, h.TimeNS, int32(h.Channel), h.AmplitudeDB, h.Energy, h.Counts, h.DurationUS, h.RiseUS, h.Event.String()}, nil
}

func (s *hitSource) Err() error { return s.perr }

func containsStr(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func containsInt(list []int, v int) bool {
	for _, x := range list {
		if x == v {
			return true
		}
	}
	return false
}

func listOr(list []string) string {
	if len(list) == 0 {
		return "none"
	}
	return strings.Join(list, ", ")
}

func listIntOr(list []int) string {
	if len(list) == 0 {
		return "none"
	}
	s := make([]string, len(list))
	for i, v := range list {
		s[i] = fmt.Sprint(v)
	}
	return strings.Join(s, ", ")
}

// Dives lists a hull's dives, oldest first.
func (l *Ledger) Dives(ctx context.Context, serial string) ([]Dive, error) {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, err
	}
	rows, err := l.db.Query(ctx, "SELECT "+prefixed("d.", diveColumns)+", NOT "+notVoided+", EXISTS (SELECT 1 FROM proof_tests p WHERE p.dive_id = d.id) FROM dives d WHERE d.hull_id = $1 ORDER BY d.start_time, d.id", h.ID)
	if err != nil {
		return nil, fmt.Errorf("listing dives of %s: %w", serial, err)
	}
	defer rows.Close()
	var out []Dive
	for rows.Next() {
		var r diveRow
		var void, proof bool
		if err := rows.Scan(append(r.scanArgs(), &void, &proof)...); err != nil {
			return nil, fmt.Errorf("listing dives of %s: %w", serial, err)
		}
		d := diveFromRow(&r, serial, h.Spec.RatedDepthM, false)
		d.Voided, d.ProofTest = void, proof
		d.BeyondRated = d.BeyondRated && !proof
		out = append(out, *d)
	}
	return out, rows.Err()
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
	rows, err := l.db.Query(ctx, "SELECT "+diveColumns+", (SELECT serial FROM hulls WHERE hulls.id = dives.hull_id) FROM dives WHERE id::text LIKE $1 || '%' LIMIT 2", id)
	if err != nil {
		return nil, fmt.Errorf("reading dive %s: %w", id, err)
	}
	defer rows.Close()
	var found []*Dive
	for rows.Next() {
		var r diveRow
		var serial string
		if err := rows.Scan(append(r.scanArgs(), &serial)...); err != nil {
			return nil, fmt.Errorf("reading dive %s: %w", id, err)
		}
		found = append(found, diveFromRow(&r, serial, 0, false))
	}
	if err := rows.Err(); err != nil {
		return nil, err
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
	rows, err := l.db.Query(ctx, "SELECT data FROM reading_blocks WHERE dive_id = $1 ORDER BY block_no", dive)
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
