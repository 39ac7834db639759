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
	"runtime"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/seawater"
	"hulltally/ledger/files"
	"hulltally/ledger/logfile"
)

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
	var sha []byte
	var size int64
	stream := req.Upload != nil
	// whole hashes and counts the samples' bytes as the parse reads them
	// (and, after an upload's refusal, the rest: refusedUpload).
	whole := &countingHash{Hash: sha256.New()}
	if stream {
		if req.Upload.Samples == nil || req.Samples != "" {
			return nil, errors.New("logging dive: an upload comes with its samples reader and no samples file")
		}
		// Hashed as it is parsed: known only at the end.
	} else if sha, size, err = hashFile(ctx, req.Samples); err != nil {
		return nil, fileErr(ctx, err)
	}
	var aeSHA []byte
	if req.AE != "" {
		if aeSHA, _, err = hashFile(ctx, req.AE); err != nil {
			return nil, fileErr(ctx, err)
		}
	}
	var replaces *uuid.UUID
	if !stream {
		if d, err := l.existingDive(ctx, l.db, h, sha, aeSHA); d != nil || err != nil {
			return d, err
		}
		if replaces, err = l.elsewhere(ctx, l.db, h, "source_sha256", sha, "samples file"); err != nil {
			return nil, err
		}
	}

	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, fmt.Errorf("logging dive: %w", err)
	}
	defer tx.Rollback(ctx)
	// One hull, one dive at a time: a second process logging the same file
	// (or another dive of the hull) waits here, then finds the first one's
	// dive. An upload takes the lock once it is read (below), so that a
	// slow sender holds up no other dive of the hull.
	if !stream {
		if err := lockHullDives(ctx, tx, h); err != nil {
			return nil, fmt.Errorf("logging dive: %w", err)
		}
		if d, err := l.existingDive(ctx, tx, h, sha, aeSHA); d != nil || err != nil {
			return d, err
		}
	}

	// A long dive's counted cycles wait on disk, not in memory, until
	// they are stored and chained.
	sp := &cycleSpill{}
	defer sp.Close()
	row, recs, err := l.ingest(ctx, tx, h, req, whole, sha, size, aeSHA, sp)
	if err != nil {
		var ie *InputError
		if stream && errors.As(err, &ie) {
			return l.refusedUpload(ctx, h, req, whole, err)
		}
		return nil, err
	}
	if stream {
		if err := lockHullDives(ctx, tx, h); err != nil {
			return nil, fmt.Errorf("logging dive: %w", err)
		}
		// Now known: the same file already recorded is that dive (the
		// work is rolled back), as the checks above do for a file.
		sha, aeSHA = row.SHA, row.AESHA
		if d, err := l.existingDive(ctx, tx, h, sha, aeSHA); d != nil || err != nil {
			return d, err
		}
		if replaces, err = l.elsewhere(ctx, tx, h, "source_sha256", sha, "samples file"); err != nil {
			return nil, err
		}
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
		recs = append(recs, chainRec{kind: "dive_fingerprint", key: row.ID.String(), canon: fingerprintCanon(row.ID, row.fingerprint)})
	}
	// After the fingerprint: the same samples under another file are the
	// same dive (a duplicate), not an overlapping one.
	if err := l.checkPlace(ctx, tx, h, row); err != nil {
		return nil, err
	}
	tag, err := tx.Exec(ctx, "INSERT INTO dives ("+diveColumns+") VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9,$10,$11,$12,$13,$14,$15,$16,$17,$18,$19,$20,$21,$22,$23,$24,$25,$26) ON CONFLICT (hull_id, source_sha256) DO NOTHING", row.values()...)
	if err != nil {
		return nil, fmt.Errorf("logging dive: storing the dive row: %w", err)
	}
	if tag.RowsAffected() == 0 {
		tx.Rollback(ctx)
		return l.existingDive(ctx, l.db, h, sha, aeSHA)
	}
	recs = append([]chainRec{{kind: "dive", key: row.ID.String(), canon: row.canon()}}, recs...)
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
	status, err := l.statusAfter(ctx, h.Serial)
	if err != nil {
		return nil, err
	}
	d := diveFromRow(row, h.Serial, h.Spec.RatedDepthM, false)
	d.status = status
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
	err := q.QueryRow(ctx, "SELECT "+prefixed("d.", diveColumns)+", NOT "+notVoided+" FROM dives d JOIN dive_fingerprints f ON f.hull_id = d.hull_id AND f.dive_id = d.id WHERE d.hull_id = $1 AND f.fingerprint = $2 ORDER BY "+strconv.Itoa(diveColumnCount+1)+" LIMIT 1", h.ID, fp).Scan(append(r.scanArgs(), &void)...)
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
		sql = `SELECT d.id, hs.serial, EXISTS (SELECT 1 FROM dive_voids v WHERE v.hull_id = d.hull_id AND v.dive_id = d.id) FROM dives d JOIN dive_fingerprints f ON f.hull_id = d.hull_id AND f.dive_id = d.id JOIN hulls hs ON hs.id = d.hull_id
			WHERE f.fingerprint = $2 AND d.hull_id <> $1 ORDER BY 3, d.recorded_at`
	} else {
		sql = `SELECT d.id, hs.serial, EXISTS (SELECT 1 FROM dive_voids v WHERE v.hull_id = d.hull_id AND v.dive_id = d.id) FROM dives d JOIN hulls hs ON hs.id = d.hull_id
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

// refusedUpload answers an upload whose samples were refused as the
// same file from disk would be answered: the checks that come before the
// parse for a file (already recorded on this hull, recorded on another)
// come first, so the rest of the samples (and a hits file after them) is
// read to know the file's hash; else the refusal stands.
func (l *Ledger) refusedUpload(ctx context.Context, h *Hull, req LogRequest, whole *countingHash, refusal error) (*Dive, error) {
	if _, err := io.Copy(whole, req.Upload.Samples); err != nil {
		return nil, refusal // cut off: the refusal is all there is to say
	}
	ae := req.AE
	if req.Upload.Rest != nil {
		p, err := req.Upload.Rest()
		if err != nil {
			return nil, refusal
		}
		if p != "" {
			ae = p
		}
	}
	var aeSHA []byte
	if ae != "" {
		var err error
		if aeSHA, _, err = hashFile(ctx, ae); err != nil {
			return nil, refusal
		}
	}
	sha := whole.Sum(nil)
	if d, err := l.existingDive(ctx, l.db, h, sha, aeSHA); d != nil || err != nil {
		return d, err
	}
	if _, err := l.elsewhere(ctx, l.db, h, "source_sha256", sha, "samples file"); err != nil {
		return nil, err
	}
	return nil, refusal
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
		Latitude: r.Lat, LatitudeAssumed: r.LatAssumed, Site: r.Site, Operator: r.Operator, RecordedAt: r.RecordedAt, RecordedBy: r.RecordedBy}
}

// countingHash is a hash that counts the bytes written to it.
type countingHash struct {
	hash.Hash
	n int64
}

func (c *countingHash) Write(p []byte) (int, error) {
	c.n += int64(len(p))
	return c.Hash.Write(p)
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

// ingest parses the samples (and hits) and stores blocks and hits in tx,
// returning the dive row (not yet inserted) and the chain records. tee
// hashes and counts the samples' bytes as they are read: a file's must be
// sha and size (known before), an upload's become them.
func (l *Ledger) ingest(ctx context.Context, tx pgx.Tx, h *Hull, req LogRequest, tee *countingHash, sha []byte, size int64, aeSHA []byte, sp *cycleSpill) (*diveRow, []chainRec, error) {
	var samples io.Reader
	path := req.Samples
	if req.Upload != nil {
		samples, path = req.Upload.Samples, req.Upload.Name
	} else {
		f, err := files.OpenRegular(ctx, req.Samples)
		if err != nil {
			return nil, nil, fileErr(ctx, err)
		}
		defer f.Close()
		samples = f
	}
	name := filepath.Base(path)
	minT, maxT, err := l.timeWindow()
	if err != nil {
		return nil, nil, err
	}
	sr, err := logfile.NewSampleReader(io.TeeReader(files.NewReader(ctx, samples), tee), path, logfile.SampleOptions{Start: req.Start, BlockSamples: l.cfg.Ingest.BlockSamples, MinTime: minT, MaxTime: maxT})
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
		Lat: lat, LatAssumed: assumed, Site: req.Site, Operator: req.Operator, LoadColumn: load.Name, Gauges: hdr.Gauges,
		RecordedBy: &l.identity.Name} // the database checks it is current_user
	if row.Gauges == nil {
		row.Gauges = []string{}
	}
	for _, c := range hdr.Columns {
		row.Columns = append(row.Columns, c.Name)
	}

	// Parse over every core (logfile.BlockStream: one goroutine reads
	// and hashes the lines, GOMAXPROCS workers parse them, the blocks come
	// back in file order), count, encode and store in this one.
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	stream := sr.Stream(ctx, runtime.GOMAXPROCS(0))
	defer stream.Close()
	src := &blockSource{ctx: ctx, stream: stream, row: row, loadIdx: hdr.Load, progress: req.Progress,
		counter: l.newDiveCounter(hdr.Columns, hdr.Load, lat, sp), fp: logfile.NewFingerprint(hdr)}
	src.maxLoad = math.Inf(-1)
	_, err = tx.CopyFrom(ctx, pgx.Identifier{"reading_blocks"}, []string{"dive_id", "hull_id", "block_no", "first_sample", "samples", "t_first_ns", "t_last_ns", "data", "sha256"}, src)
	if src.perr != nil {
		return nil, nil, fileErr(ctx, src.perr)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("storing readings: %w", err)
	}
	if req.Upload != nil {
		row.SHA, row.SourceBytes = tee.Sum(nil), tee.n
	} else if got := tee.Sum(nil); !equalBytes(got, sha) || tee.n != size {
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

	// The counted cycles and time at pressure, stored part by part with
	// the dive's damage summed as the pressure parts pass.
	ss, holds, err := src.counter.finish()
	if err != nil {
		return nil, nil, err
	}
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, nil, inputErr(fmt.Errorf("assessing the dive on hull %s: %w (the dive was not recorded; fix the hull spec or the curve library)", h.Serial, err))
	}
	asr, err := assess.NewAssessor(comps, l.fat.settings)
	if err != nil {
		return nil, nil, fmt.Errorf("assessing the dive: %w", err)
	}
	dsum := asr.Begin()
	crecs, err := storeCounts(ctx, tx, row.ID, h.ID, ss, sp, l.fat.binMPa, holds, dsum.Add)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, crecs...)
	prec, err := storeProfile(ctx, tx, row.ID, h.ID, src.counter.profile)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, prec)
	res, err := dsum.Finish(holds)
	if err != nil {
		return nil, nil, fmt.Errorf("assessing the dive: %w", err)
	}
	ah := &assessmentHead{id: uuid.New(), hull: h.ID, revision: h.Revision, kind: "dive", configHash: l.fat.hash,
		configJSON: l.fat.json, reason: "dive logged", actor: l.identity.Name, at: now()}
	cols := newColumns(comps, 1)
	addDive(cols, row.ID, res)
	arec, err := storeAssessment(ctx, tx, ah, cols)
	if err != nil {
		return nil, nil, err
	}
	recs = append(recs, arec)

	if req.Upload != nil && req.Upload.Rest != nil {
		// What followed the samples: the hits file, or nothing.
		p, err := req.Upload.Rest()
		if err != nil {
			return nil, nil, err
		}
		if p != "" && req.AE != "" {
			return nil, nil, inputErr(errors.New("two hits files given with one dive"))
		}
		if p != "" {
			req.AE = p
			if aeSHA, _, err = hashFile(ctx, p); err != nil {
				return nil, nil, fileErr(ctx, err)
			}
		}
	}
	var hits []logfile.Hit
	if req.AE != "" {
		n, digest, kept, err := l.ingestHits(ctx, tx, h, row, req, aeSHA, src.firstNS, src.lastNS)
		if err != nil {
			return nil, nil, err
		}
		hits = kept
		row.AEName, row.AESHA, row.AEHits = filepath.Base(req.AE), aeSHA, n
		recs = append(recs, chainRec{kind: "ae_hits", key: row.ID.String(), canon: hitsCanon(row.ID, n, digest)})
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
