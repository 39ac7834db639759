package ledger

import (
	"bytes"
	"context"
	"crypto/sha256"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/ledger/logfile"
)

// Broken describes the first link of a chain that does not hold.
type Broken struct {
	Hull   string `json:"hull"`
	Seq    int64  `json:"seq"`
	Kind   string `json:"kind"`
	Key    string `json:"record_key"`
	Reason string `json:"reason"`
}

// VerifyResult is the outcome of recomputing every hull's chain.
type VerifyResult struct {
	OK          bool              `json:"ok"`
	Records     int64             `json:"records"`
	Hulls       int               `json:"hulls"`
	FirstBroken *Broken           `json:"first_broken"`
	Heads       map[string]string `json:"heads"`
}

// Verify recomputes every hull's audit chain from the stored records: each
// record's canonical bytes are rebuilt from its table row (reading blocks
// are re-hashed from their data), each link's hash recomputed, and the
// number of records in each table compared with the chain (a row added
// behind the chain's back is found as well as one edited or removed).
func (l *Ledger) Verify(ctx context.Context) (*VerifyResult, error) {
	res := &VerifyResult{OK: true, Heads: map[string]string{}}
	rows, err := l.pool.Query(ctx, `SELECT id, serial FROM hulls ORDER BY serial COLLATE "C"`)
	if err != nil {
		return nil, fmt.Errorf("verify: listing hulls: %w", err)
	}
	type hullID struct {
		id     uuid.UUID
		serial string
	}
	var hulls []hullID
	for rows.Next() {
		var h hullID
		if err := rows.Scan(&h.id, &h.serial); err != nil {
			return nil, err
		}
		hulls = append(hulls, h)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	res.Hulls = len(hulls)
	for _, h := range hulls {
		n, head, broken, err := l.verifyHull(ctx, h.id, h.serial)
		if err != nil {
			return nil, err
		}
		res.Records += n
		res.Heads[h.serial] = fmt.Sprintf("%x", head)
		if broken != nil && res.FirstBroken == nil {
			res.FirstBroken = broken
			res.OK = false
		}
	}
	// Chain rows of hulls that no longer exist, or hull-less records.
	var orphans int64
	if err := l.pool.QueryRow(ctx, `SELECT count(*) FROM audit_chain c WHERE NOT EXISTS (SELECT 1 FROM hulls h WHERE h.id = c.hull_id)`).Scan(&orphans); err != nil {
		return nil, err
	}
	if orphans > 0 && res.FirstBroken == nil {
		res.OK = false
		res.FirstBroken = &Broken{Reason: fmt.Sprintf("%d chain records belong to no recorded hull (a hull row was removed)", orphans)}
	}
	return res, nil
}

// ChainHead returns the hash at the head of a hull's chain and its length.
func (l *Ledger) ChainHead(ctx context.Context, hull uuid.UUID) ([]byte, int64, error) {
	var seq int64
	var h []byte
	err := l.pool.QueryRow(ctx, "SELECT seq, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", hull).Scan(&seq, &h)
	if err == pgx.ErrNoRows {
		return make([]byte, 32), 0, nil
	}
	return h, seq, err
}

func (l *Ledger) verifyHull(ctx context.Context, hull uuid.UUID, serial string) (int64, []byte, *Broken, error) {
	rows, err := l.pool.Query(ctx, "SELECT seq, kind, record_key, prev_hash, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq", hull)
	if err != nil {
		return 0, nil, nil, fmt.Errorf("verify %s: %w", serial, err)
	}
	type link struct {
		seq        int64
		kind, key  string
		prev, hash []byte
	}
	var links []link
	for rows.Next() {
		var k link
		if err := rows.Scan(&k.seq, &k.kind, &k.key, &k.prev, &k.hash); err != nil {
			return 0, nil, nil, err
		}
		links = append(links, k)
	}
	if err := rows.Err(); err != nil {
		return 0, nil, nil, err
	}
	prev := make([]byte, 32)
	counts := map[string]int64{}
	for i, k := range links {
		brk := func(reason string, a ...any) *Broken {
			return &Broken{Hull: serial, Seq: k.seq, Kind: k.kind, Key: k.key, Reason: fmt.Sprintf(reason, a...)}
		}
		if k.seq != int64(i+1) {
			return int64(i), prev, brk("sequence gap: expected %d", i+1), nil
		}
		if !bytes.Equal(k.prev, prev) {
			return int64(i), prev, brk("previous-hash link does not match the record before it"), nil
		}
		canon, rows, why, err := l.recordCanon(ctx, k.kind, k.key)
		if err != nil {
			return 0, nil, nil, fmt.Errorf("verify %s record %d: %w", serial, k.seq, err)
		}
		if why != "" {
			return int64(i), prev, brk("%s", why), nil
		}
		if h := chainHash(prev, canon); !bytes.Equal(h, k.hash) {
			return int64(i), prev, brk("record content does not match its hash (the stored record was changed)"), nil
		}
		counts[k.kind]++
		switch k.kind {
		case "assessment":
			counts["assessment_rows"] += rows
		case "ae_hits":
			counts["ae_hit_rows"] += rows
		}
		prev = k.hash
	}
	// Every stored record must be on the chain.
	checks := []struct{ kind, sql string }{
		{"hull", "SELECT count(*) FROM hulls WHERE id = $1"},
		{"hull_revision", "SELECT count(*) FROM hull_revisions WHERE hull_id = $1"},
		{"dive", "SELECT count(*) FROM dives WHERE hull_id = $1"},
		{"reading_block", "SELECT count(*) FROM reading_blocks WHERE hull_id = $1"},
		{"ae_hits", "SELECT count(*) FROM dives WHERE hull_id = $1 AND ae_source_sha256 IS NOT NULL"},
		{"ae_hit_rows", "SELECT count(*) FROM ae_hits WHERE hull_id = $1"},
		{"dive_cycles", "SELECT count(DISTINCT dive_id) FROM dive_cycles WHERE hull_id = $1"},
		{"dive_holds", "SELECT count(*) FROM dive_holds WHERE hull_id = $1"},
		{"dive_profile", "SELECT count(*) FROM dive_profiles WHERE hull_id = $1"},
		{"dive_evidence", "SELECT count(*) FROM dive_evidence WHERE hull_id = $1"},
		{"inspection", "SELECT count(*) FROM inspections WHERE hull_id = $1"},
		{"proof_test", "SELECT count(*) FROM proof_tests WHERE hull_id = $1"},
		{"decision", "SELECT count(*) FROM decisions WHERE hull_id = $1"},
		{"status", "SELECT count(*) FROM status_history WHERE hull_id = $1"},
		{"correction", "SELECT count(*) FROM corrections WHERE hull_id = $1"},
		{"assessment", "SELECT count(*) FROM assessments WHERE hull_id = $1"},
		{"assessment_rows", "SELECT count(*) FROM assessment_damage WHERE hull_id = $1"},
		{"evidence_revision", "SELECT count(*) FROM evidence_revisions WHERE hull_id = $1"},
		{"dive_void", "SELECT count(*) FROM dive_voids WHERE hull_id = $1"},
		{"dive_fingerprint", "SELECT count(*) FROM dive_fingerprints WHERE hull_id = $1"},
	}
	for _, c := range checks {
		var n int64
		if err := l.pool.QueryRow(ctx, c.sql, hull).Scan(&n); err != nil {
			return 0, nil, nil, fmt.Errorf("verify %s: counting %s: %w", serial, c.kind, err)
		}
		if n != counts[c.kind] {
			return int64(len(links)), prev, &Broken{Hull: serial, Seq: int64(len(links)) + 1, Kind: c.kind,
				Reason: fmt.Sprintf("%d %s records stored but %d on the chain (records added or removed behind the chain)", n, c.kind, counts[c.kind])}, nil
		}
	}
	return int64(len(links)), prev, nil, nil
}

// recordCanon rebuilds the canonical bytes of a record from its row. why
// is non-empty when the record is missing or inconsistent.
// It also returns the number of table rows the record stands for (hits,
// damage rows), for the count check.
func (l *Ledger) recordCanon(ctx context.Context, kind, key string) ([]byte, int64, string, error) {
	switch kind {
	case "hull":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var serial string
		var at time.Time
		err = l.pool.QueryRow(ctx, "SELECT serial, recorded_at FROM hulls WHERE id = $1", id).Scan(&serial, &at)
		if err == pgx.ErrNoRows {
			return nil, 0, "hull record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return hullCanon(id, serial, at), 0, "", nil
	case "hull_revision":
		id, rev, ok := splitKey(key)
		if !ok {
			return nil, 0, "bad record key", nil
		}
		r, err := loadRevision(ctx, l.pool, id, int32(rev))
		if err == pgx.ErrNoRows {
			return nil, 0, "hull revision record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return r.canon(), 0, "", nil
	case "dive":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var r diveRow
		err = l.pool.QueryRow(ctx, "SELECT "+diveColumns+" FROM dives WHERE id = $1", id).Scan(r.scanArgs()...)
		if err == pgx.ErrNoRows {
			return nil, 0, "dive record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return r.canon(), 0, "", nil
	case "reading_block":
		id, no, ok := splitKey(key)
		if !ok {
			return nil, 0, "bad record key", nil
		}
		var hullID uuid.UUID
		var first, t0, t1 int64
		var n int32
		var data, sum []byte
		err := l.pool.QueryRow(ctx, "SELECT hull_id, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM reading_blocks WHERE dive_id = $1 AND block_no = $2", id, no).Scan(&hullID, &first, &n, &t0, &t1, &data, &sum)
		if err == pgx.ErrNoRows {
			return nil, 0, "reading block is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		actual := sha256.Sum256(data)
		if !bytes.Equal(actual[:], sum) {
			return nil, 0, "reading block data does not match its stored SHA-256 (the readings were changed)", nil
		}
		return blockCanon(id, hullID, int32(no), first, n, t0, t1, actual[:]), 0, "", nil
	case "ae_hits":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		rows, err := l.pool.Query(ctx, "SELECT seq, t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us, event FROM ae_hits WHERE dive_id = $1 ORDER BY seq", id)
		if err != nil {
			return nil, 0, "", err
		}
		defer rows.Close()
		digest := sha256.New()
		var buf []byte
		var n int32
		for rows.Next() {
			var seq, ch int32
			var h logfile.Hit
			var ev string
			if err := rows.Scan(&seq, &h.TimeNS, &ch, &h.AmplitudeDB, &h.Energy, &h.Counts, &h.DurationUS, &h.RiseUS, &ev); err != nil {
				return nil, 0, "", err
			}
			e, ok := logfile.ParseEvent(ev)
			if !ok {
				return nil, 0, fmt.Sprintf("hit %d has an unknown event %q", seq, ev), nil
			}
			h.Channel, h.Event = int(ch), e
			buf = hitBytes(buf[:0], seq, &h)
			digest.Write(buf)
			n++
		}
		if err := rows.Err(); err != nil {
			return nil, 0, "", err
		}
		return hitsCanon(id, n, digest.Sum(nil)), int64(n), "", nil
	case "dive_cycles":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		rows, err := l.pool.Query(ctx, `SELECT series, unit, gate, ranges, means, counts FROM dive_cycles WHERE dive_id = $1 ORDER BY series COLLATE "C"`, id)
		if err != nil {
			return nil, 0, "", err
		}
		defer rows.Close()
		var ss []series
		for rows.Next() {
			var s series
			var r, m, n []float64
			if err := rows.Scan(&s.name, &s.unit, &s.gate, &r, &m, &n); err != nil {
				return nil, 0, "", err
			}
			s.cycles = joinCycles(r, m, n)
			ss = append(ss, s)
		}
		if err := rows.Err(); err != nil {
			return nil, 0, "", err
		}
		if len(ss) == 0 {
			return nil, 0, "counted cycles are missing", nil
		}
		return cyclesCanon(id, ss), 0, "", nil
	case "correction":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		c := Correction{ID: id}
		var hull uuid.UUID
		var target, vj string
		err = l.pool.QueryRow(ctx, "SELECT hull_id, target_key, field, value_json, reason, actor, recorded_at FROM corrections WHERE id = $1", id).Scan(&hull, &target, &c.Field, &vj, &c.Reason, &c.Actor, &c.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "correction record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		if c.Dive, err = uuid.Parse(target); err != nil {
			return nil, 0, "correction names no dive", nil
		}
		return correctionCanon(hull, &c, vj), 0, "", nil
	case "status":
		id, seq, ok := splitKey(key)
		if !ok {
			return nil, 0, "bad record key", nil
		}
		var status, reasons string
		var at time.Time
		err := l.pool.QueryRow(ctx, "SELECT status, reasons_json, recorded_at FROM status_history WHERE hull_id = $1 AND seq = $2", id, seq).Scan(&status, &reasons, &at)
		if err == pgx.ErrNoRows {
			return nil, 0, "status record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return statusCanon(id, seq, status, reasons, at), 0, "", nil
	case "dive_evidence":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var js string
		err = l.pool.QueryRow(ctx, "SELECT evidence_json FROM dive_evidence WHERE dive_id = $1", id).Scan(&js)
		if err == pgx.ErrNoRows {
			return nil, 0, "dive evidence is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return evidenceCanon(id, js), 0, "", nil
	case "inspection":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var in Inspection
		var hull uuid.UUID
		in.ID = id
		err = l.pool.QueryRow(ctx, "SELECT hull_id, at, method, findings, result, actor, recorded_at FROM inspections WHERE id = $1", id).Scan(&hull, &in.At, &in.Method, &in.Findings, &in.Result, &in.Actor, &in.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "inspection record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return inspectionCanon(hull, &in), 0, "", nil
	case "proof_test":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var p ProofTest
		var hull uuid.UUID
		var bj string
		p.ID = id
		err = l.pool.QueryRow(ctx, "SELECT hull_id, at, pressure_mpa, result, notes, actor, dive_id, baseline_json, recorded_at FROM proof_tests WHERE id = $1", id).Scan(&hull, &p.At, &p.PressureMPa, &p.Result, &p.Notes, &p.Actor, &p.DiveID, &bj, &p.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "proof test record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return proofCanon(hull, &p, bj), 0, "", nil
	case "decision":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var d Decision
		var hull uuid.UUID
		d.ID = id
		err = l.pool.QueryRow(ctx, "SELECT hull_id, at, kind, actor, reason, recorded_at FROM decisions WHERE id = $1", id).Scan(&hull, &d.At, &d.Kind, &d.Actor, &d.Reason, &d.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "decision record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return decisionCanon(hull, &d), 0, "", nil
	case "dive_profile":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		p, err := loadProfile(ctx, l.pool, id)
		if err == pgx.ErrNoRows {
			return nil, 0, "dive profile is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return profileCanon(id, p), 0, "", nil
	case "dive_holds":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var bin float64
		var lv, sec []float64
		err = l.pool.QueryRow(ctx, "SELECT bin_mpa, levels, seconds FROM dive_holds WHERE dive_id = $1", id).Scan(&bin, &lv, &sec)
		if err == pgx.ErrNoRows {
			return nil, 0, "time at pressure is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		hs := make([]assess.Hold, len(lv))
		for i := range lv {
			hs[i] = assess.Hold{LevelMPa: lv[i], Seconds: sec[i]}
		}
		return holdsCanon(id, bin, hs), 0, "", nil
	case "assessment":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		a := &assessmentHead{id: id}
		err = l.pool.QueryRow(ctx, "SELECT hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at FROM assessments WHERE id = $1", id).Scan(
			&a.hull, &a.revision, &a.kind, &a.configHash, &a.configJSON, &a.reason, &a.actor, &a.at)
		if err == pgx.ErrNoRows {
			return nil, 0, "assessment is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		rows, err := l.pool.Query(ctx, `SELECT component, basis, factor, curve, rupture_curve, dive_ids, cyclic, sustained FROM assessment_damage
			WHERE assessment_id = $1 ORDER BY component COLLATE "C"`, id)
		if err != nil {
			return nil, 0, "", err
		}
		defer rows.Close()
		var cols []compDamage
		for rows.Next() {
			var g compDamage
			var dives [][16]byte
			if err := rows.Scan(&g.component, &g.basis, &g.factor, &g.curve, &g.ruptureCurve, &dives, &g.cyclic, &g.sustained); err != nil {
				return nil, 0, "", err
			}
			if len(dives) != len(g.cyclic) || len(dives) != len(g.sustained) {
				return nil, 0, "assessment arrays of unequal length", nil
			}
			g.dives = make([]uuid.UUID, len(dives))
			for k, d := range dives {
				g.dives[k] = d
			}
			cols = append(cols, g)
		}
		if err := rows.Err(); err != nil {
			return nil, 0, "", err
		}
		n := int64(len(cols))
		return assessmentCanon(a, cols), n, "", nil
	case "evidence_revision":
		id, seq, ok := splitKey(key)
		if !ok {
			return nil, 0, "bad record key", nil
		}
		var js, reason, cause string
		var at time.Time
		err := l.pool.QueryRow(ctx, "SELECT evidence_json, reason, cause, recorded_at FROM evidence_revisions WHERE dive_id = $1 AND seq = $2", id, seq).Scan(&js, &reason, &cause, &at)
		if err == pgx.ErrNoRows {
			return nil, 0, "evidence revision is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return revisionCanon(id, seq, js, reason, cause, at), 0, "", nil
	case "dive_void":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		v := &Void{ID: id}
		var hull uuid.UUID
		err = l.pool.QueryRow(ctx, "SELECT hull_id, dive_id, reason, actor, recorded_at FROM dive_voids WHERE id = $1", id).Scan(&hull, &v.Dive, &v.Reason, &v.Actor, &v.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "void record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return voidCanon(hull, v), 0, "", nil
	case "dive_fingerprint":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var fp []byte
		err = l.pool.QueryRow(ctx, "SELECT fingerprint FROM dive_fingerprints WHERE dive_id = $1", id).Scan(&fp)
		if err == pgx.ErrNoRows {
			return nil, 0, "samples fingerprint is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return fingerprintCanon(id, fp), 0, "", nil
	}
	return nil, 0, fmt.Sprintf("unknown record kind %q", kind), nil
}

func splitKey(key string) (uuid.UUID, int64, bool) {
	i := strings.LastIndexByte(key, '/')
	if i < 0 {
		return uuid.Nil, 0, false
	}
	id, err := uuid.Parse(key[:i])
	if err != nil {
		return uuid.Nil, 0, false
	}
	n, err := strconv.ParseInt(key[i+1:], 10, 64)
	if err != nil {
		return uuid.Nil, 0, false
	}
	return id, n, true
}
