package ledger

import (
	"bytes"
	"context"
	"crypto"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
	"regexp"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

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
	// Guards lists the append-only triggers (and their function) that are
	// missing, disabled or altered. Any finding makes OK false: with the
	// guards down the ledger can be edited in place, and a rewrite that
	// recomputes a hull's later hashes is not caught by the chain alone.
	// When every chain holds, FirstBroken then names the first finding
	// (Kind "append_only_guard" or "identity_guard", Key the trigger) so that a reader of
	// FirstBroken alone still sees why the ledger is not OK.
	Guards []GuardFinding `json:"guards"`
	// Problem is the first thing to say when OK is false: the first
	// broken link, else the first guard finding.
	Problem string `json:"problem,omitempty"`
	// FleetSummary is the check of the derived fleet summary against the
	// ledger (AddSummaryCheck), when it was made.
	FleetSummary *SummaryCheck `json:"fleet_summary,omitempty"`
	// ProfilesAsSent is the dive profiles still stored as before
	// migration 020 (verified all the same, more slowly): hulltally db
	// migrate packs them. Not a finding.
	ProfilesAsSent int64 `json:"profiles_as_sent"`
}

// AddSummaryCheck adds the check of the fleet summary to the result: a
// row in use that disagrees with the ledger makes the result not OK (a
// read would show the hull as the row says, not as the ledger does).
func (r *VerifyResult) AddSummaryCheck(sc *SummaryCheck) {
	r.FleetSummary = sc
	if sc == nil || len(sc.Disagree) == 0 {
		return
	}
	r.OK = false
	p := fmt.Sprintf("the fleet summary of hull %s disagrees with the ledger (%d hulls in all): run `hulltally fleet rebuild`, after finding out who changed it", sc.Disagree[0].Serial, len(sc.Disagree))
	if r.Problem == "" {
		r.Problem = p
	} else {
		r.Problem += "; and " + p
	}
}

// Verify recomputes every hull's audit chain from the stored records: each
// record's canonical bytes are rebuilt from its table row (reading blocks
// are re-hashed from their data), each link's hash recomputed, and the
// number of records in each table compared with the chain (a row added
// behind the chain's back is found as well as one edited or removed).
//
// Everything is read at one consistent moment: one read-only REPEATABLE
// READ transaction exports its snapshot (pg_export_snapshot) and the
// worker transactions that verify hulls in parallel import it (SET
// TRANSACTION SNAPSHOT), so the chain, the records and the counts are
// those of one snapshot: dives being logged meanwhile (each committed with
// its chain records in one transaction) are either wholly seen or not at
// all, and never raise a false alarm. Each table is read once per hull,
// all of the hull's rows in one query. The hulls are shared among
// runtime.GOMAXPROCS(0) workers, never more than the connection pool's
// size less one (one connection is left to the rest of the program), and
// the results are merged in hull serial order: the first broken link, the
// heads and the record count are those of a one-by-one run. Called on the
// Ledger a Snapshot hands out, Verify runs one hull after another on that
// snapshot's transaction.
func (l *Ledger) Verify(ctx context.Context) (*VerifyResult, error) {
	return l.VerifyWith(ctx, VerifyOptions{})
}

// VerifyOptions tunes Verify.
type VerifyOptions struct {
	// Workers is the number of hulls verified at once (each on its own
	// connection, all at one exported snapshot). 0 means the default:
	// runtime.GOMAXPROCS(0), bounded by the pool size less one. 1 verifies
	// one hull after another on one transaction. Any value is bounded by
	// the pool size less one and by the number of hulls.
	Workers int
	// FleetSummary asks for each hull's fleet summary row in use to be
	// evaluated again from the ledger and compared (FleetSummary in the
	// result), in the same workers at the same snapshot.
	FleetSummary bool
}

// VerifyWith is Verify with options; the result does not depend on them.
func (l *Ledger) VerifyWith(ctx context.Context, opt VerifyOptions) (*VerifyResult, error) {
	at := now()
	return l.verifyRun(ctx, opt, func(ctx context.Context, q querier, h hullRef) (hullOutcome, error) {
		n, head, broken, err := verifyHull(ctx, q, h.id, h.serial, h.at)
		o := hullOutcome{n: n, head: head, broken: broken}
		if err == nil && opt.FleetSummary {
			o.summary, err = l.summaryOf(ctx, q, h.id, at)
		}
		return o, err
	}, nil)
}

// hullRef is a hull as listed by verify.
type hullRef struct {
	id     uuid.UUID
	serial string
	at     time.Time
}

// hullOutcome is what verifying one hull found: the links that hold (up
// to the first broken one), the head they end at, the first broken link.
type hullOutcome struct {
	n      int64
	head   []byte
	broken *Broken
	// summary is the check of the hull's fleet summary, when asked for.
	summary *summaryOutcome
}

// hullCheck verifies one hull with the reads of q.
type hullCheck func(ctx context.Context, q querier, h hullRef) (hullOutcome, error)

// verifyTail adds to res what the hull checks alone cannot see (read with
// q, after the hulls), before the result is summed up.
type verifyTail func(ctx context.Context, q querier, hulls []hullRef, res *VerifyResult) error

// verifyWorkers is how many hulls are verified at once: the asked-for
// number (0: GOMAXPROCS), never more than the pool's size less one, nor
// the number of hulls.
func verifyWorkers(asked int, maxConns int32, hulls int) int {
	n := asked
	if n <= 0 {
		n = runtime.GOMAXPROCS(0)
	}
	if limit := int(maxConns) - 1; n > limit {
		n = limit
	}
	if n > hulls {
		n = hulls
	}
	if n < 1 {
		n = 1
	}
	return n
}

// snapshotIDPattern is the form of a pg_export_snapshot identifier
// (hex groups joined by dashes); anything else is refused before it is
// quoted into SET TRANSACTION SNAPSHOT.
var snapshotIDPattern = regexp.MustCompile(`^[0-9A-Fa-f]+(-[0-9A-Fa-f]+)*$`)

// verifyRun runs check on every hull at one snapshot, in parallel where
// allowed, and merges the outcomes in hull serial order.
func (l *Ledger) verifyRun(ctx context.Context, opt VerifyOptions, check hullCheck, tail verifyTail) (*VerifyResult, error) {
	if l.snapshot {
		// Already inside one repeatable-read transaction: one hull after
		// another on it.
		return verifyAll(ctx, l.db, check, tail, nil)
	}
	var res *VerifyResult
	err := pgx.BeginTxFunc(ctx, l.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
		var par func(ctx context.Context, hulls []hullRef) ([]hullOutcome, error)
		if workers := verifyWorkers(opt.Workers, l.pool.Config().MaxConns, int(^uint(0)>>1)); workers > 1 {
			// The snapshot is taken by this first statement; every worker
			// imports it while this transaction stays open.
			var id string
			if err := tx.QueryRow(ctx, "SELECT pg_export_snapshot()").Scan(&id); err != nil {
				return fmt.Errorf("verify: exporting the snapshot: %w", err)
			}
			if !snapshotIDPattern.MatchString(id) {
				return fmt.Errorf("verify: unexpected snapshot identifier %q", id)
			}
			par = func(ctx context.Context, hulls []hullRef) ([]hullOutcome, error) {
				return l.verifyParallel(ctx, tx, id, verifyWorkers(opt.Workers, l.pool.Config().MaxConns, len(hulls)), hulls, check)
			}
		}
		var err error
		res, err = verifyAll(ctx, tx, check, tail, par)
		return err
	})
	if err != nil {
		return nil, err
	}
	return res, nil
}

// verifyParallel verifies hulls over workers transactions at the exported
// snapshot id: the exporting transaction tx is the first worker, the
// others begin read-only REPEATABLE READ transactions and import the
// snapshot. Outcomes are returned in the order of hulls.
func (l *Ledger) verifyParallel(ctx context.Context, tx pgx.Tx, id string, workers int, hulls []hullRef, check hullCheck) ([]hullOutcome, error) {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	out := make([]hullOutcome, len(hulls))
	jobs := make(chan int)
	var wg sync.WaitGroup
	var failMu sync.Mutex
	var fail error
	setFail := func(err error) {
		failMu.Lock()
		if fail == nil {
			fail = err
		}
		failMu.Unlock()
		cancel()
	}
	work := func(q querier) {
		for i := range jobs {
			o, err := check(ctx, q, hulls[i])
			if err != nil {
				setFail(err)
				continue
			}
			out[i] = o
		}
	}
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			if w == 0 {
				work(tx)
				return
			}
			wtx, err := l.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
			if err != nil {
				setFail(fmt.Errorf("verify: worker transaction: %w", err))
				return
			}
			defer func() { _ = wtx.Rollback(context.Background()) }()
			if _, err := wtx.Exec(ctx, "SET TRANSACTION SNAPSHOT '"+id+"'"); err != nil {
				setFail(fmt.Errorf("verify: importing the snapshot: %w", err))
				return
			}
			work(wtx)
		}(w)
	}
feed:
	for i := range hulls {
		select {
		case jobs <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(jobs)
	wg.Wait()
	// The first error (the cause; the others are its cancellation).
	if fail != nil {
		return nil, fail
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return out, nil
}

// verifyAll verifies every hull's chain with the reads of q (and par, when
// set, for the hulls themselves), then what tail adds.
func verifyAll(ctx context.Context, q querier, check hullCheck, tail verifyTail, par func(context.Context, []hullRef) ([]hullOutcome, error)) (*VerifyResult, error) {
	res := &VerifyResult{OK: true, Heads: map[string]string{}, Guards: []GuardFinding{}}
	guards, err := checkGuards(ctx, q)
	if err != nil {
		return nil, err
	}
	res.Guards = append(res.Guards, guards...)
	rows, err := q.Query(ctx, `SELECT id, serial, recorded_at FROM hulls ORDER BY serial COLLATE "C"`)
	if err != nil {
		return nil, fmt.Errorf("verify: listing hulls: %w", err)
	}
	var hulls []hullRef
	for rows.Next() {
		var h hullRef
		if err := rows.Scan(&h.id, &h.serial, &h.at); err != nil {
			return nil, err
		}
		hulls = append(hulls, h)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	res.Hulls = len(hulls)
	var outs []hullOutcome
	if par != nil && len(hulls) > 1 {
		if outs, err = par(ctx, hulls); err != nil {
			return nil, err
		}
	} else {
		outs = make([]hullOutcome, len(hulls))
		for i, h := range hulls {
			if outs[i], err = check(ctx, q, h); err != nil {
				return nil, err
			}
		}
	}
	var sc *SummaryCheck
	for i, h := range hulls {
		o := outs[i]
		if o.summary != nil {
			if sc == nil {
				sc = &SummaryCheck{Disagree: []SummaryDisagreement{}}
			}
			sc.add(o.summary.row, o.summary.disagree)
		}
		res.Records += o.n
		res.Heads[h.serial] = fmt.Sprintf("%x", o.head)
		if o.broken != nil && res.FirstBroken == nil {
			res.FirstBroken = o.broken
			res.OK = false
		}
	}
	// Chain records and rows under a hull id that is no hull (a hull row
	// removed, rows moved or forged): no hull's reads see them, but the
	// readers that read by dive would.
	if res.FirstBroken == nil {
		table, ids, err := rowsOfNoHull(ctx, q)
		if err != nil {
			return nil, err
		}
		if ids > 0 {
			res.OK = false
			res.FirstBroken = &Broken{Kind: "rows_of_no_hull", Key: table,
				Reason: fmt.Sprintf("%s holds rows under %d hull ids that are no recorded hull (a hull row was removed, or rows were moved or forged behind the chain)", table, ids)}
		}
	}
	if res.FirstBroken == nil {
		b, err := diveOfTwoHulls(ctx, q)
		if err != nil {
			return nil, err
		}
		if b != nil {
			res.OK, res.FirstBroken = false, b
		}
	}
	if tail != nil {
		if err := tail(ctx, q, hulls, res); err != nil {
			return nil, err
		}
	}
	// Read from the partial index of profiles still as sent (empty once
	// every profile is packed).
	if err := q.QueryRow(ctx, "SELECT count(*) FROM dive_profiles WHERE series IS NULL").Scan(&res.ProfilesAsSent); err != nil {
		return nil, fmt.Errorf("verify: counting profiles stored as sent: %w", err)
	}
	if b := res.FirstBroken; b != nil {
		if b.Hull == "" {
			// A finding of the ledger as a whole, not of one hull's chain.
			res.Problem = fmt.Sprintf("%s: %s", b.Kind, b.Reason)
		} else {
			res.Problem = fmt.Sprintf("first broken link: hull %s, record %d (%s %s): %s", b.Hull, b.Seq, b.Kind, b.Key, b.Reason)
		}
	}
	if len(res.Guards) > 0 {
		res.OK = false
		g := res.Guards[0]
		more := ""
		if n := len(res.Guards) - 1; n > 0 {
			more = fmt.Sprintf(" (and %d more guard findings)", n)
		}
		if res.FirstBroken == nil {
			res.FirstBroken = &Broken{Kind: strings.ReplaceAll(g.Guard, "-", "_") + "_guard", Key: g.Trigger, Reason: g.Detail + more}
			res.Problem = "ledger guard down: " + g.Detail + more + "; run `hulltally db migrate` to restore it, after finding out who turned it off"
		} else {
			res.Problem += "; and ledger guard down: " + g.Detail + more
		}
	}
	if sc != nil {
		res.AddSummaryCheck(sc)
	}
	return res, nil
}

// diveOfTwoHulls finds a dive id stored under two hulls (nil: none). The
// readers that read a dive's rows by its id (hits, blocks, profiles)
// would mix the two hulls' rows, and each hull's chain may hold its copy;
// a dive belongs to one hull. One pass over the dives' ids.
func diveOfTwoHulls(ctx context.Context, q querier) (*Broken, error) {
	var dive uuid.UUID
	var serials []string
	err := q.QueryRow(ctx, `SELECT d.id, array_agg(coalesce(h.serial, d.hull_id::text) ORDER BY 1) FROM dives d LEFT JOIN hulls h ON h.id = d.hull_id
		WHERE d.id IN (SELECT id FROM dives GROUP BY id HAVING count(*) > 1) GROUP BY d.id ORDER BY d.id LIMIT 1`).Scan(&dive, &serials)
	if errors.Is(err, pgx.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("verify: dives under two hulls: %w", err)
	}
	return &Broken{Kind: "dive_of_two_hulls", Key: dive.String(),
		Reason: fmt.Sprintf("dive %s is stored under %d hulls (%s): a dive belongs to one hull", dive, len(serials), strings.Join(serials, ", "))}, nil
}

// hullRowTables are the ledger tables whose rows belong to a hull (a
// hull_id), in the order they are checked for rows of no hull: the chain
// first, then the protected tables in migration order, less hulls itself
// and the tables that hold no hull's rows.
func hullRowTables() []string {
	out := []string{"audit_chain"}
	for _, t := range protectedTables {
		switch t {
		case "audit_chain", "hulls", "issued_reports", "checkpoints":
		default:
			out = append(out, t)
		}
	}
	return out
}

// rowsOfNoHull returns the first of hullRowTables that holds rows under
// a hull id that is no hull, and how many such ids it holds (0: none in
// any table; rows without a hull id, were the column's NOT NULL dropped,
// count as one). Each table's distinct hull ids are walked down its index
// led by hull_id (every ledger table has one: TestKeysIncludeHull), one
// probe per hull id, not per row; a table that is missing is left to
// the guard check, which reports it.
func rowsOfNoHull(ctx context.Context, q querier) (string, int64, error) {
	var present []string
	if err := q.QueryRow(ctx, `SELECT coalesce(array_agg(t ORDER BY o), '{}') FROM unnest($1::text[]) WITH ORDINALITY AS x(t, o) WHERE to_regclass(t) IS NOT NULL`,
		hullRowTables()).Scan(&present); err != nil {
		return "", 0, fmt.Errorf("verify: listing the ledger tables: %w", err)
	}
	for _, t := range present {
		var ids int64
		id := pgx.Identifier{t}.Sanitize()
		err := q.QueryRow(ctx, `WITH RECURSIVE ids AS (
			SELECT (SELECT hull_id FROM `+id+` ORDER BY hull_id LIMIT 1) AS hull_id
			UNION ALL
			SELECT (SELECT hull_id FROM `+id+` WHERE hull_id > ids.hull_id ORDER BY hull_id LIMIT 1) FROM ids WHERE ids.hull_id IS NOT NULL)
			SELECT (SELECT count(*) FROM ids WHERE hull_id IS NOT NULL AND NOT EXISTS (SELECT 1 FROM hulls h WHERE h.id = ids.hull_id))
				+ (SELECT count(*) FROM (SELECT 1 FROM `+id+` WHERE hull_id IS NULL LIMIT 1) AS no_id)`).Scan(&ids)
		if err != nil {
			return "", 0, fmt.Errorf("verify: rows of no hull in %s: %w", t, err)
		}
		if ids > 0 {
			return t, ids, nil
		}
	}
	return "", 0, nil
}

// ChainHead returns the hash at the head of a hull's chain and its length.
func (l *Ledger) ChainHead(ctx context.Context, hull uuid.UUID) ([]byte, int64, error) {
	var seq int64
	var h []byte
	err := l.db.QueryRow(ctx, "SELECT seq, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", hull).Scan(&seq, &h)
	if err == pgx.ErrNoRows {
		return make([]byte, 32), 0, nil
	}
	return h, seq, err
}

// chainLink is one stored link of a hull's audit chain.
type chainLink struct {
	seq        int64
	kind, key  string
	prev, hash []byte
}

// linkVerdict is what a record's stored rows say of its chain link: the
// rows were found (done), their canonical bytes hash to the link's hash
// (match), the table rows the record stands for (hits, damage rows), or
// why the record is missing or inconsistent, or a read error.
type linkVerdict struct {
	done  bool
	match bool
	rows  int64
	why   string
	err   error
}

// hullBatch holds a hull's chain and, for each link, the verdict on the
// record its batch reads found. Links whose record was not among the
// hull's rows (a record missing, or moved to another hull) are left
// undone and judged by reading the record by its key, as before.
type hullBatch struct {
	links []chainLink
	index map[string]map[string]int // kind → record key → link
	v     []linkVerdict
	// stored is the number of rows of each kind the hull's tables hold,
	// counted from the same reads (the count checks).
	stored map[string]int64
	// scratch holds one record's canonical bytes at a time: settle hashes
	// them at once, so the next record reuses the buffer.
	scratch []byte
	// hasher hashes every link of the hull, one after another.
	hasher linkHasher
}

// linkHasher recomputes link hashes with one SHA-256 state and one sum
// buffer, reused from link to link (verify hashes every record of the
// fleet; a fresh state and sum per record were two allocations each).
type linkHasher struct {
	h   hash.Hash
	sum []byte
}

// matches reports whether the hash of prev and canon is want: the
// link's hash as chainHash makes it.
func (lh *linkHasher) matches(prev, canon, want []byte) bool {
	if lh.h == nil {
		lh.h = sha256.New()
	}
	lh.h.Reset()
	lh.h.Write(prev)
	lh.h.Write(canon)
	lh.sum = lh.h.Sum(lh.sum[:0])
	return bytes.Equal(lh.sum, want)
}

// settle records the verdict on the link of (kind, key), if the chain has
// one; a record that is on no link is left to the count checks.
func (b *hullBatch) settle(kind, key string, canon []byte, rows int64, why string, err error) {
	i, ok := b.index[kind][key]
	if !ok || b.v[i].done {
		return
	}
	b.v[i] = b.hasher.judge(&b.links[i], canon, rows, why, err)
}

// judge is the verdict on link k of a record whose rows gave canon (or
// why, or err).
func (lh *linkHasher) judge(k *chainLink, canon []byte, rows int64, why string, err error) linkVerdict {
	v := linkVerdict{done: true, rows: rows, why: why, err: err}
	if err == nil && why == "" {
		v.match = lh.matches(k.prev, canon, k.hash)
	}
	return v
}

// verifyCounts are the kinds whose stored rows are counted against the
// chain, in the order they are checked. Each count is of the hull's rows
// (hull_id = the hull) as the batch reads found them:
//
//	hull               hulls (the hull itself)
//	hull_revision      hull_revisions
//	dive               dives
//	reading_block      reading_blocks
//	ae_hits            dives with an acoustic-emission file (ae_source_sha256 not null)
//	ae_hit_rows        ae_hits
//	dive_cycles        dives with counted cycles (distinct dive_id of dive_cycles)
//	dive_holds         dive_holds
//	dive_profile       dive_profiles
//	dive_evidence      dive_evidence
//	inspection         inspections
//	proof_test         proof_tests
//	decision           decisions
//	status             status_history
//	correction         corrections
//	assessment         assessments
//	assessment_rows    assessment_damage
//	evidence_revision  evidence_revisions
//	dive_void          dive_voids
//	dive_fingerprint   dive_fingerprints
var verifyCounts = [...]string{"hull", "hull_revision", "dive", "reading_block", "ae_hits", "ae_hit_rows", "dive_cycles", "dive_holds",
	"dive_profile", "dive_evidence", "inspection", "proof_test", "decision", "status", "correction", "assessment", "assessment_rows",
	"evidence_revision", "dive_void", "dive_fingerprint"}

func verifyHull(ctx context.Context, q querier, hull uuid.UUID, serial string, hullAt time.Time) (int64, []byte, *Broken, error) {
	b, err := loadHullBatch(ctx, q, hull, serial, hullAt)
	if err != nil {
		return 0, nil, nil, fmt.Errorf("verify %s: %w", serial, err)
	}
	prev := make([]byte, 32)
	counts := map[string]int64{}
	for i := range b.links {
		k := &b.links[i]
		brk := func(reason string, a ...any) *Broken {
			return &Broken{Hull: serial, Seq: k.seq, Kind: k.kind, Key: k.key, Reason: fmt.Sprintf(reason, a...)}
		}
		if k.seq != int64(i+1) {
			return int64(i), prev, brk("sequence gap: expected %d", i+1), nil
		}
		if !bytes.Equal(k.prev, prev) {
			return int64(i), prev, brk("previous-hash link does not match the record before it"), nil
		}
		v := b.v[i]
		if !v.done {
			canon, rows, why, err := recordCanon(ctx, q, k.kind, k.key)
			v = b.hasher.judge(k, canon, rows, why, err)
		}
		if v.err != nil {
			return 0, nil, nil, fmt.Errorf("verify %s record %d: %w", serial, k.seq, v.err)
		}
		if v.why != "" {
			return int64(i), prev, brk("%s", v.why), nil
		}
		if !v.match {
			return int64(i), prev, brk("record content does not match its hash (the stored record was changed)"), nil
		}
		counts[k.kind]++
		switch k.kind {
		case "assessment":
			counts["assessment_rows"] += v.rows
		case "ae_hits":
			counts["ae_hit_rows"] += v.rows
		}
		prev = k.hash
	}
	// Every stored record must be on the chain.
	for _, kind := range verifyCounts {
		if n := b.stored[kind]; n != counts[kind] {
			return int64(len(b.links)), prev, &Broken{Hull: serial, Seq: int64(len(b.links)) + 1, Kind: kind,
				Reason: fmt.Sprintf("%d %s records stored but %d on the chain (records added or removed behind the chain)", n, kind, counts[kind])}, nil
		}
	}
	return int64(len(b.links)), prev, nil, nil
}

// loadHullBatch reads the hull's chain, then each of its tables in one
// query, and judges every link whose record it found.
func loadHullBatch(ctx context.Context, q querier, hull uuid.UUID, serial string, hullAt time.Time) (*hullBatch, error) {
	b := &hullBatch{index: map[string]map[string]int{}, stored: map[string]int64{}}
	rows, err := q.Query(ctx, "SELECT seq, kind, record_key, prev_hash, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq", hull)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var k chainLink
		if err := rows.Scan(&k.seq, &k.kind, &k.key, &k.prev, &k.hash); err != nil {
			return nil, err
		}
		b.links = append(b.links, k)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	b.v = make([]linkVerdict, len(b.links))
	for i, k := range b.links {
		m := b.index[k.kind]
		if m == nil {
			m = map[string]int{}
			b.index[k.kind] = m
		}
		if _, dup := m[k.key]; !dup {
			m[k.key] = i
		}
	}
	// The hull itself, as listed in this snapshot.
	b.stored["hull"] = 1
	b.settle("hull", hull.String(), hullCanon(hull, serial, hullAt), 0, "", nil)
	for _, load := range []func(context.Context, querier, uuid.UUID, *hullBatch) error{
		batchRevisions, batchDives, batchBlocks, batchHits, batchCycles, batchHolds, batchProfiles, batchEvidence,
		batchInspections, batchProofTests, batchDecisions, batchStatus, batchCorrections, batchAssessments,
		batchEvidenceRevisions, batchVoids, batchFingerprints,
	} {
		if err := load(ctx, q, hull, b); err != nil {
			return nil, err
		}
	}
	return b, nil
}

// each runs sql with its one argument (the hull's id, mostly) and calls
// scan for every row.
//
// The batch reads scan by position on purpose, even where the record's
// struct carries db tags (inspections, proof tests, decisions, voids,
// corrections): verify streams every record of a hull, one row held at a
// time, and settles it as it goes; collecting the rows into a slice first
// would hold a whole hull's records (blocks, hits, cycles) in memory and
// add a per-row reflection step to the one path that reads everything.
func each(ctx context.Context, q querier, what, sql string, arg any, scan func(pgx.Rows) error) error {
	rows, err := q.Query(ctx, sql, arg)
	if err != nil {
		return fmt.Errorf("reading %s: %w", what, err)
	}
	defer rows.Close()
	for rows.Next() {
		if err := scan(rows); err != nil {
			return fmt.Errorf("reading %s: %w", what, err)
		}
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("reading %s: %w", what, err)
	}
	return nil
}

// collectOne runs sql with args and reads its one row with fn; a missing
// row is pgx.ErrNoRows (test with errors.Is).
func collectOne[T any](ctx context.Context, q querier, fn pgx.RowToFunc[T], sql string, args ...any) (T, error) {
	rows, err := q.Query(ctx, sql, args...)
	if err != nil {
		var zero T
		return zero, err
	}
	return pgx.CollectOneRow(rows, fn)
}

func seqKey(id uuid.UUID, n int64) string { return id.String() + "/" + strconv.FormatInt(n, 10) }

func batchRevisions(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	revs := map[int32]*revisionRow{}
	var order []int32
	err := each(ctx, q, "hull revisions", `SELECT revision, name, material_system, shape, inner_radius_m, wall_thickness_m, length_m, rated_depth_m,
		design_pressure_mpa, proof_pressure_mpa, collapse_pressure_mpa, spec_json, reason, actor, recorded_at
		FROM hull_revisions WHERE hull_id = $1`, hull, func(rows pgx.Rows) error {
		r := &revisionRow{HullID: hull}
		if err := rows.Scan(&r.Revision, &r.Name, &r.Material, &r.Shape, &r.InnerR, &r.Wall, &r.Length, &r.Rated, &r.Design, &r.Proof, &r.Collapse,
			&r.SpecJSON, &r.Reason, &r.Actor, &r.RecordedAt); err != nil {
			return err
		}
		revs[r.Revision] = r
		order = append(order, r.Revision)
		return nil
	})
	if err != nil {
		return err
	}
	b.stored["hull_revision"] = int64(len(order))
	// Components and gauges of a revision not among the hull's revisions
	// are not the hull's (the key reads of such a revision find them).
	err = each(ctx, q, "hull components", `SELECT revision, name, kind, transfer_basis, transfer_factor, curve, rupture_curve FROM hull_components
		WHERE hull_id = $1 ORDER BY revision, name COLLATE "C"`, hull, func(rows pgx.Rows) error {
		var rev int32
		var c componentRow
		if err := rows.Scan(&rev, &c.Name, &c.Kind, &c.Basis, &c.Factor, &c.Curve, &c.Rupture); err != nil {
			return err
		}
		if r := revs[rev]; r != nil {
			r.Components = append(r.Components, c)
		}
		return nil
	})
	if err != nil {
		return err
	}
	err = each(ctx, q, "gauges", `SELECT revision, name, kind, component, position, direction, channel FROM gauges
		WHERE hull_id = $1 ORDER BY revision, name COLLATE "C"`, hull, func(rows pgx.Rows) error {
		var rev int32
		var g gaugeRow
		if err := rows.Scan(&rev, &g.Name, &g.Kind, &g.Component, &g.Position, &g.Direction, &g.Channel); err != nil {
			return err
		}
		if r := revs[rev]; r != nil {
			r.Gauges = append(r.Gauges, g)
		}
		return nil
	})
	if err != nil {
		return err
	}
	for _, rev := range order {
		b.settle("hull_revision", seqKey(hull, int64(rev)), revs[rev].canon(), 0, "", nil)
	}
	return nil
}

func batchDives(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "dives", "SELECT "+diveColumns+" FROM dives WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var r diveRow
		if err := rows.Scan(r.scanArgs()...); err != nil {
			return err
		}
		b.stored["dive"]++
		if r.AESHA != nil {
			b.stored["ae_hits"]++
		}
		b.settle("dive", r.ID.String(), r.canon(), 0, "", nil)
		return nil
	})
}

// batchBlocks streams the hull's reading blocks, re-hashing each block's
// data as it arrives (the data is not kept).
func batchBlocks(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "reading blocks", "SELECT dive_id, block_no, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM reading_blocks WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var no int32
		var first, t0, t1 int64
		var n int32
		var data pgtype.DriverBytes // valid until the next row: hashed at once
		var sum []byte
		if err := rows.Scan(&id, &no, &first, &n, &t0, &t1, &data, &sum); err != nil {
			return err
		}
		b.stored["reading_block"]++
		key := seqKey(id, int64(no))
		actual := sha256.Sum256(data)
		if !bytes.Equal(actual[:], sum) {
			b.settle("reading_block", key, nil, 0, "reading block data does not match its stored SHA-256 (the readings were changed)", nil)
			return nil
		}
		b.settle("reading_block", key, blockCanon(id, hull, no, first, n, t0, t1, actual[:]), 0, "", nil)
		return nil
	})
}

// batchHits streams the hull's acoustic-emission hits by dive and
// sequence, digesting each dive's hits as they arrive.
func batchHits(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	var cur uuid.UUID
	var digest hash.Hash
	var n int32
	var why string
	var buf []byte
	flush := func() {
		if digest == nil {
			return
		}
		if why != "" {
			b.settle("ae_hits", cur.String(), nil, 0, why, nil)
		} else {
			b.settle("ae_hits", cur.String(), hitsCanon(cur, n, digest.Sum(nil)), int64(n), "", nil)
		}
	}
	err := each(ctx, q, "acoustic-emission hits", "SELECT dive_id, seq, t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us, event FROM ae_hits WHERE hull_id = $1 ORDER BY dive_id, seq", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var seq, ch int32
		var h logfile.Hit
		var ev string
		if err := rows.Scan(&id, &seq, &h.TimeNS, &ch, &h.AmplitudeDB, &h.Energy, &h.Counts, &h.DurationUS, &h.RiseUS, &ev); err != nil {
			return err
		}
		b.stored["ae_hit_rows"]++
		if digest == nil || id != cur {
			flush()
			cur, digest, n, why = id, sha256.New(), 0, ""
		}
		if why != "" {
			return nil
		}
		e, ok := logfile.ParseEvent(ev)
		if !ok {
			why = fmt.Sprintf("hit %d has an unknown event %q", seq, ev)
			return nil
		}
		h.Channel, h.Event = int(ch), e
		buf = hitBytes(buf[:0], seq, &h)
		digest.Write(buf)
		n++
		return nil
	})
	if err != nil {
		return err
	}
	flush()
	// A dive whose acoustic-emission file held no hits has no rows: its
	// record is the digest of no hits. Such records are settled here
	// when no hit row of the dive is stored anywhere, under any hull (one
	// query for the hull, where the one-record read took one query per
	// dive, the most queries of verify where most dives' files were
	// empty); a dive with rows elsewhere (moved, or forged under a hull
	// that is not listed) is left to the one-record read, which reads its
	// hits by dive wherever they are, as every reader of hits does.
	var ids []uuid.UUID
	for key, i := range b.index["ae_hits"] {
		if b.v[i].done {
			continue
		}
		if id, err := uuid.Parse(key); err == nil && id.String() == key {
			ids = append(ids, id)
		}
	}
	if len(ids) == 0 {
		return nil
	}
	elsewhere := map[uuid.UUID]bool{}
	err = each(ctx, q, "acoustic-emission hits stored elsewhere", "SELECT DISTINCT dive_id FROM ae_hits WHERE dive_id = ANY($1)", ids, func(rows pgx.Rows) error {
		var id uuid.UUID
		if err := rows.Scan(&id); err != nil {
			return err
		}
		elsewhere[id] = true
		return nil
	})
	if err != nil {
		return err
	}
	none := sha256.Sum256(nil)
	for _, id := range ids {
		if !elsewhere[id] {
			b.settle("ae_hits", id.String(), hitsCanon(id, 0, none[:]), 0, "", nil)
		}
	}
	return nil
}

func batchCycles(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	var cur uuid.UUID
	var j *seriesJoiner
	flush := func() {
		if j != nil {
			b.stored["dive_cycles"]++
			if j.why != "" {
				b.settle("dive_cycles", cur.String(), nil, 0, j.why, nil)
			} else {
				b.settle("dive_cycles", cur.String(), cyclesCanon(cur, j.ss), 0, "", nil)
			}
		}
	}
	err := each(ctx, q, "counted cycles", `SELECT dive_id, series, unit, gate, chunk, ranges, means, counts FROM dive_cycles WHERE hull_id = $1 ORDER BY dive_id, series COLLATE "C", chunk`, hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var name, unit string
		var gate float64
		var chunk int32
		if err := rows.Scan(&id, &name, &unit, &gate, &chunk, nil, nil, nil); err != nil {
			return err
		}
		// Each chunk's arrays are kept by the joiner: fresh slices.
		a := make([][]float64, 3)
		why, err := float8Columns(rows, a, 5, 6, 7)
		if err != nil {
			return err
		}
		if j == nil || id != cur {
			flush()
			cur, j = id, &seriesJoiner{}
		}
		if why != "" {
			if j.why == "" {
				j.why = why
			}
			return nil
		}
		j.add(name, unit, gate, chunk, a[0], a[1], a[2])
		return nil
	})
	if err != nil {
		return err
	}
	flush()
	return nil
}

// holdsRowCanon reads the levels and durations of a time-at-pressure row
// (the float8[] columns levels and seconds of the current row) and
// returns the record's canonical bytes, or a finding when the arrays are
// not ones hulltally stores or do not pair up (the record was changed):
// the batch and the one-record read judge alike. a holds two slices,
// reused.
func holdsRowCanon(rows pgx.Rows, a [][]float64, levels, seconds int, id uuid.UUID, bin float64) (canon []byte, why string, err error) {
	if why, err = float8Columns(rows, a, levels, seconds); why != "" || err != nil {
		return nil, why, err
	}
	lv, sec := a[0], a[1]
	if len(lv) != len(sec) {
		return nil, fmt.Sprintf("time at pressure has %d levels and %d durations (the stored record was changed)", len(lv), len(sec)), nil
	}
	hs := make([]assess.Hold, len(lv))
	for i := range lv {
		hs[i] = assess.Hold{LevelMPa: lv[i], Seconds: sec[i]}
	}
	return holdsCanon(id, bin, hs), "", nil
}

func batchHolds(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	a := make([][]float64, 2) // reused from row to row
	return each(ctx, q, "time at pressure", "SELECT dive_id, bin_mpa, levels, seconds FROM dive_holds WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var bin float64
		if err := rows.Scan(&id, &bin, nil, nil); err != nil {
			return err
		}
		canon, why, err := holdsRowCanon(rows, a, 2, 3, id, bin)
		if err != nil {
			return err
		}
		b.stored["dive_holds"]++
		b.settle("dive_holds", id.String(), canon, 0, why, nil)
		return nil
	})
}

func batchProfiles(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	var gauges []string
	var r profileReader
	return each(ctx, q, "dive profiles", "SELECT dive_id, "+profileColumns+" FROM dive_profiles WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var step float64
		// The stored bytes, valid until the next row: used at once.
		var ts, press, strain, series pgtype.DriverBytes
		if err := rows.Scan(&id, &step, &gauges, &ts, &press, &strain, &series); err != nil {
			return err
		}
		b.stored["dive_profile"]++
		var why string
		b.scratch, why = appendProfileCanonStored(b.scratch[:0], &r, id, step, storedProfile{gauges: gauges, ts: ts, press: press, strain: strain, series: series})
		if why != "" {
			b.settle("dive_profile", id.String(), nil, 0, why, nil)
			return nil
		}
		b.settle("dive_profile", id.String(), b.scratch, 0, "", nil)
		return nil
	})
}

func batchEvidence(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "dive evidence", "SELECT dive_id, evidence_json FROM dive_evidence WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var js string
		if err := rows.Scan(&id, &js); err != nil {
			return err
		}
		b.stored["dive_evidence"]++
		b.settle("dive_evidence", id.String(), evidenceCanon(id, js), 0, "", nil)
		return nil
	})
}

func batchInspections(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "inspections", "SELECT id, at, method, findings, result, actor, recorded_at FROM inspections WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var in Inspection
		if err := rows.Scan(&in.ID, &in.At, &in.Method, &in.Findings, &in.Result, &in.Actor, &in.RecordedAt); err != nil {
			return err
		}
		b.stored["inspection"]++
		b.settle("inspection", in.ID.String(), inspectionCanon(hull, &in), 0, "", nil)
		return nil
	})
}

func batchProofTests(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "proof tests", "SELECT id, at, pressure_mpa, result, notes, actor, dive_id, baseline_json, recorded_at FROM proof_tests WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var p ProofTest
		var bj string
		if err := rows.Scan(&p.ID, &p.At, &p.PressureMPa, &p.Result, &p.Notes, &p.Actor, &p.DiveID, &bj, &p.RecordedAt); err != nil {
			return err
		}
		b.stored["proof_test"]++
		b.settle("proof_test", p.ID.String(), proofCanon(hull, &p, bj), 0, "", nil)
		return nil
	})
}

func batchDecisions(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "decisions", "SELECT id, at, kind, actor, reason, recorded_at FROM decisions WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var d Decision
		if err := rows.Scan(&d.ID, &d.At, &d.Kind, &d.Actor, &d.Reason, &d.RecordedAt); err != nil {
			return err
		}
		b.stored["decision"]++
		b.settle("decision", d.ID.String(), decisionCanon(hull, &d), 0, "", nil)
		return nil
	})
}

func batchStatus(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "status history", "SELECT seq, status, reasons_json, recorded_at FROM status_history WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var seq int64
		var status, reasons string
		var at time.Time
		if err := rows.Scan(&seq, &status, &reasons, &at); err != nil {
			return err
		}
		b.stored["status"]++
		b.settle("status", seqKey(hull, seq), statusCanon(hull, seq, status, reasons, at), 0, "", nil)
		return nil
	})
}

func batchCorrections(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "corrections", "SELECT id, target_kind, target_key, field, value_json, reason, actor, recorded_at FROM corrections WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var c Correction
		var kind, target, vj string
		if err := rows.Scan(&c.ID, &kind, &target, &c.Field, &vj, &c.Reason, &c.Actor, &c.RecordedAt); err != nil {
			return err
		}
		b.stored["correction"]++
		b.settle("correction", c.ID.String(), correctionCanon(hull, &c, kind, target, vj), 0, "", nil)
		return nil
	})
}

// batchAssessments reads the hull's assessments, then streams their
// damage rows by assessment, judging each assessment when its rows are
// complete (the per-dive arrays are not all held at once).
func batchAssessments(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	heads := map[uuid.UUID]*assessmentHead{}
	err := each(ctx, q, "assessments", "SELECT id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at FROM assessments WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		a := &assessmentHead{hull: hull}
		if err := rows.Scan(&a.id, &a.revision, &a.kind, &a.configHash, &a.configJSON, &a.reason, &a.actor, &a.at); err != nil {
			return err
		}
		heads[a.id] = a
		return nil
	})
	if err != nil {
		return err
	}
	b.stored["assessment"] = int64(len(heads))
	var cur uuid.UUID
	var cols []compDamage
	var why string
	started := false
	flush := func() {
		if !started {
			return
		}
		a := heads[cur]
		if a == nil {
			return // damage rows of no assessment of this hull: the key read judges the record
		}
		if why != "" {
			b.settle("assessment", cur.String(), nil, 0, why, nil)
			return
		}
		sort.Slice(cols, func(i, j int) bool { return cols[i].component < cols[j].component }) // byte order, as COLLATE "C"
		b.settle("assessment", cur.String(), assessmentCanon(a, cols), int64(len(cols)), "", nil)
	}
	err = each(ctx, q, "assessment damage", `SELECT assessment_id, component, basis, factor, curve, rupture_curve, dive_ids, cyclic, sustained FROM assessment_damage
		WHERE hull_id = $1 ORDER BY assessment_id`, hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var g compDamage
		var dives [][16]byte
		if err := rows.Scan(&id, &g.component, &g.basis, &g.factor, &g.curve, &g.ruptureCurve, &dives, &g.cyclic, &g.sustained); err != nil {
			return err
		}
		b.stored["assessment_rows"]++
		if !started || id != cur {
			flush()
			cur, cols, why, started = id, nil, "", true
		}
		if why != "" {
			return nil
		}
		if len(dives) != len(g.cyclic) || len(dives) != len(g.sustained) {
			why = "assessment arrays of unequal length"
			return nil
		}
		g.dives = make([]uuid.UUID, len(dives))
		for k, d := range dives {
			g.dives[k] = d
		}
		cols = append(cols, g)
		return nil
	})
	if err != nil {
		return err
	}
	flush()
	return nil
}

func batchEvidenceRevisions(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "evidence revisions", "SELECT dive_id, seq, evidence_json, reason, cause, recorded_at FROM evidence_revisions WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var seq int64
		var js, reason, cause string
		var at time.Time
		if err := rows.Scan(&id, &seq, &js, &reason, &cause, &at); err != nil {
			return err
		}
		b.stored["evidence_revision"]++
		b.settle("evidence_revision", seqKey(id, seq), revisionCanon(id, seq, js, reason, cause, at), 0, "", nil)
		return nil
	})
}

func batchVoids(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "voids", "SELECT id, dive_id, reason, actor, recorded_at FROM dive_voids WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		v := &Void{}
		if err := rows.Scan(&v.ID, &v.Dive, &v.Reason, &v.Actor, &v.RecordedAt); err != nil {
			return err
		}
		b.stored["dive_void"]++
		b.settle("dive_void", v.ID.String(), voidCanon(hull, v), 0, "", nil)
		return nil
	})
}

func batchFingerprints(ctx context.Context, q querier, hull uuid.UUID, b *hullBatch) error {
	return each(ctx, q, "samples fingerprints", "SELECT dive_id, fingerprint FROM dive_fingerprints WHERE hull_id = $1", hull, func(rows pgx.Rows) error {
		var id uuid.UUID
		var fp []byte
		if err := rows.Scan(&id, &fp); err != nil {
			return err
		}
		b.stored["dive_fingerprint"]++
		b.settle("dive_fingerprint", id.String(), fingerprintCanon(id, fp), 0, "", nil)
		return nil
	})
}

// recordCanon rebuilds the canonical bytes of a record from its row. why
// is non-empty when the record is missing or inconsistent.
// It also returns the number of table rows the record stands for (hits,
// damage rows), for the count check.
func recordCanon(ctx context.Context, q querier, kind, key string) ([]byte, int64, string, error) {
	switch kind {
	case "hull":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		var serial string
		var at time.Time
		err = q.QueryRow(ctx, "SELECT serial, recorded_at FROM hulls WHERE id = $1", id).Scan(&serial, &at)
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
		r, err := loadRevision(ctx, q, id, int32(rev))
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
		err = q.QueryRow(ctx, "SELECT "+diveColumns+" FROM dives WHERE id = $1", id).Scan(r.scanArgs()...)
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
		err := q.QueryRow(ctx, "SELECT hull_id, first_sample, samples, t_first_ns, t_last_ns, data, sha256 FROM reading_blocks WHERE dive_id = $1 AND block_no = $2", id, no).Scan(&hullID, &first, &n, &t0, &t1, &data, &sum)
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
		rows, err := q.Query(ctx, "SELECT seq, t_ns, channel, amplitude_db, energy, counts, duration_us, rise_us, event FROM ae_hits WHERE dive_id = $1 ORDER BY seq", id)
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
		rows, err := q.Query(ctx, `SELECT series, unit, gate, chunk, ranges, means, counts FROM dive_cycles WHERE dive_id = $1 ORDER BY series COLLATE "C", chunk`, id)
		if err != nil {
			return nil, 0, "", err
		}
		defer rows.Close()
		var j seriesJoiner
		for rows.Next() {
			var name, unit string
			var gate float64
			var chunk int32
			if err := rows.Scan(&name, &unit, &gate, &chunk, nil, nil, nil); err != nil {
				return nil, 0, "", err
			}
			// Read as the batch reads them (float8Columns), so that both
			// paths judge a changed array alike.
			a := make([][]float64, 3)
			why, err := float8Columns(rows, a, 4, 5, 6)
			if err != nil {
				return nil, 0, "", err
			}
			if why != "" {
				return nil, 0, why, nil
			}
			j.add(name, unit, gate, chunk, a[0], a[1], a[2])
		}
		if err := rows.Err(); err != nil {
			return nil, 0, "", err
		}
		if len(j.ss) == 0 {
			return nil, 0, "counted cycles are missing", nil
		}
		if j.why != "" {
			return nil, 0, j.why, nil
		}
		ss := j.ss
		return cyclesCanon(id, ss), 0, "", nil
	case "correction":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		c := Correction{ID: id}
		var hull uuid.UUID
		var kind, target, vj string
		err = q.QueryRow(ctx, "SELECT hull_id, target_kind, target_key, field, value_json, reason, actor, recorded_at FROM corrections WHERE id = $1", id).Scan(&hull, &kind, &target, &c.Field, &vj, &c.Reason, &c.Actor, &c.RecordedAt)
		if err == pgx.ErrNoRows {
			return nil, 0, "correction record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return correctionCanon(hull, &c, kind, target, vj), 0, "", nil
	case "status":
		id, seq, ok := splitKey(key)
		if !ok {
			return nil, 0, "bad record key", nil
		}
		var status, reasons string
		var at time.Time
		err := q.QueryRow(ctx, "SELECT status, reasons_json, recorded_at FROM status_history WHERE hull_id = $1 AND seq = $2", id, seq).Scan(&status, &reasons, &at)
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
		err = q.QueryRow(ctx, "SELECT evidence_json FROM dive_evidence WHERE dive_id = $1", id).Scan(&js)
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
		type row struct {
			Inspection
			Hull uuid.UUID `db:"hull_id"`
		}
		r, err := collectOne(ctx, q, pgx.RowToStructByName[row], "SELECT id, hull_id, at, method, findings, result, actor, recorded_at FROM inspections WHERE id = $1", id)
		if errors.Is(err, pgx.ErrNoRows) {
			return nil, 0, "inspection record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return inspectionCanon(r.Hull, &r.Inspection), 0, "", nil
	case "proof_test":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		type row struct {
			proofTestRow
			Hull uuid.UUID `db:"hull_id"`
		}
		r, err := collectOne(ctx, q, pgx.RowToStructByName[row], "SELECT id, hull_id, at, pressure_mpa, result, notes, actor, dive_id, baseline_json, recorded_at FROM proof_tests WHERE id = $1", id)
		if errors.Is(err, pgx.ErrNoRows) {
			return nil, 0, "proof test record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return proofCanon(r.Hull, &r.ProofTest, r.BaselineJSON), 0, "", nil
	case "decision":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		type row struct {
			Decision
			Hull uuid.UUID `db:"hull_id"`
		}
		r, err := collectOne(ctx, q, pgx.RowToStructByName[row], "SELECT id, hull_id, at, kind, actor, reason, recorded_at FROM decisions WHERE id = $1", id)
		if errors.Is(err, pgx.ErrNoRows) {
			return nil, 0, "decision record is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		return decisionCanon(r.Hull, &r.Decision), 0, "", nil
	case "dive_profile":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		p, err := loadProfile(ctx, q, id)
		if err == pgx.ErrNoRows {
			return nil, 0, "dive profile is missing", nil
		}
		if errors.Is(err, errProfileChanged) {
			return nil, 0, err.Error(), nil
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
		rows, err := q.Query(ctx, "SELECT bin_mpa, levels, seconds FROM dive_holds WHERE dive_id = $1", id)
		if err != nil {
			return nil, 0, "", err
		}
		defer rows.Close()
		if !rows.Next() {
			if err := rows.Err(); err != nil {
				return nil, 0, "", err
			}
			return nil, 0, "time at pressure is missing", nil
		}
		var bin float64
		if err := rows.Scan(&bin, nil, nil); err != nil {
			return nil, 0, "", err
		}
		canon, why, err := holdsRowCanon(rows, make([][]float64, 2), 1, 2, id, bin)
		return canon, 0, why, err
	case "assessment":
		id, err := uuid.Parse(key)
		if err != nil {
			return nil, 0, "bad record key", nil
		}
		a := &assessmentHead{id: id}
		err = q.QueryRow(ctx, "SELECT hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at FROM assessments WHERE id = $1", id).Scan(
			&a.hull, &a.revision, &a.kind, &a.configHash, &a.configJSON, &a.reason, &a.actor, &a.at)
		if err == pgx.ErrNoRows {
			return nil, 0, "assessment is missing", nil
		}
		if err != nil {
			return nil, 0, "", err
		}
		rows, err := q.Query(ctx, `SELECT component, basis, factor, curve, rupture_curve, dive_ids, cyclic, sustained FROM assessment_damage
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
		err := q.QueryRow(ctx, "SELECT evidence_json, reason, cause, recorded_at FROM evidence_revisions WHERE dive_id = $1 AND seq = $2", id, seq).Scan(&js, &reason, &cause, &at)
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
		err = q.QueryRow(ctx, "SELECT hull_id, dive_id, reason, actor, recorded_at FROM dive_voids WHERE id = $1", id).Scan(&hull, &v.Dive, &v.Reason, &v.Actor, &v.RecordedAt)
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
		err = q.QueryRow(ctx, "SELECT fingerprint FROM dive_fingerprints WHERE dive_id = $1", id).Scan(&fp)
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

// GuardFinding is one guard of the database (append-only or identity)
// that is not as the migrations made it: a ledger table's trigger
// missing, disabled, or altered, or the trigger function itself replaced.
type GuardFinding struct {
	// Guard is which guard: GuardAppendOnly or GuardIdentity.
	Guard string `json:"guard"`
	// Table is the ledger table ("" for the trigger function).
	Table string `json:"table"`
	// Trigger is the trigger's name (<table>_append_only for UPDATE and
	// DELETE, <table>_no_truncate for TRUNCATE), or the function's name.
	Trigger string `json:"trigger"`
	// Problem is one of GuardMissing, GuardDisabled, GuardAltered,
	// GuardTableMissing.
	Problem string `json:"problem"`
	// Detail says it in a sentence.
	Detail string `json:"detail"`
}

// The guards a GuardFinding is about.
const (
	// GuardAppendOnly: the triggers that refuse UPDATE, DELETE and
	// TRUNCATE of a ledger table.
	GuardAppendOnly = "append-only"
	// GuardIdentity: the triggers that make every record carry the
	// identity that signed in (identity_guards.go).
	GuardIdentity = "identity"
)

// The problems a GuardFinding names.
const (
	// GuardMissing: the trigger (or its table) does not exist.
	GuardMissing = "missing"
	// GuardDisabled: the trigger exists but does not fire in ordinary
	// sessions (pg_trigger.tgenabled is 'D', or 'R': replica only).
	GuardDisabled = "disabled"
	// GuardAltered: a trigger of that name exists but does not run
	// ledger_append_only on the events it must refuse, or the function
	// ledger_append_only no longer refuses.
	GuardAltered = "altered"
	// GuardTableMissing: the ledger table itself does not exist.
	GuardTableMissing = "table missing"
)

// protectedTables are the tables the migrations make append-only with
// ledger_protect (001 … 005), in migration order. A migration that
// protects a new table adds it here; verify also checks every table that
// carries a <table>_append_only trigger.
var protectedTables = [...]string{
	// 001_ledger.sql
	"hulls", "hull_revisions", "hull_components", "gauges", "dives", "reading_blocks", "ae_hits", "corrections", "audit_chain",
	// 002_assessment.sql
	"dive_cycles", "dive_holds", "assessments", "assessment_damage",
	// 003_evidence.sql
	"dive_profiles", "dive_evidence", "inspections", "proof_tests", "decisions", "status_history",
	// 004_reports.sql
	"issued_reports",
	// 005_judgement.sql
	"evidence_revisions", "dive_voids", "dive_fingerprints",
	// 006_checkpoints.sql
	"checkpoints",
}

// pg_trigger.tgtype bits (PostgreSQL's catalog/pg_trigger.h): ROW 1,
// BEFORE 2, INSERT 4, DELETE 8, UPDATE 16, TRUNCATE 32, INSTEAD 64.
const (
	guardRowType      = 1 | 2 | 8 | 16 // BEFORE UPDATE OR DELETE FOR EACH ROW
	guardTruncateType = 2 | 32         // BEFORE TRUNCATE FOR EACH STATEMENT
)

// appendOnlyBody is the body of ledger_append_only as 001_ledger.sql
// creates it; verify compares it with the stored one, whitespace folded.
const appendOnlyBody = `
BEGIN
    RAISE EXCEPTION 'hulltally ledger table % is append-only: % refused (record a correction instead)',
        TG_TABLE_NAME, TG_OP USING ERRCODE = 'insufficient_privilege';
END;
`

func foldSpace(s string) string { return strings.Join(strings.Fields(s), " ") }

// checkGuards lists the append-only guards that are missing, disabled or
// altered, in table order (row trigger before truncate trigger), the
// trigger function first; then the identity guards the same way
// (checkIdentityGuards).
func checkGuards(ctx context.Context, q querier) ([]GuardFinding, error) {
	var out []GuardFinding
	var src *string
	err := q.QueryRow(ctx, `SELECT (SELECT p.prosrc FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace
		WHERE n.nspname = current_schema() AND p.proname = 'ledger_append_only' AND p.pronargs = 0)`).Scan(&src)
	if err != nil {
		return nil, fmt.Errorf("verify: reading the append-only function: %w", err)
	}
	switch {
	case src == nil:
		out = append(out, GuardFinding{Guard: GuardAppendOnly, Trigger: "ledger_append_only", Problem: GuardMissing,
			Detail: "the trigger function ledger_append_only is missing: no ledger table is append-only"})
	case foldSpace(*src) != foldSpace(appendOnlyBody):
		out = append(out, GuardFinding{Guard: GuardAppendOnly, Trigger: "ledger_append_only", Problem: GuardAltered,
			Detail: "the trigger function ledger_append_only was replaced: it may no longer refuse UPDATE, DELETE and TRUNCATE"})
	}
	trigs := map[string]triggerState{} // table and trigger name → state
	tables := map[string]bool{}        // tables that exist
	rows, err := q.Query(ctx, `SELECT c.relname, t.tgname, t.tgenabled::text, t.tgtype, t.tgfoid::regproc::text
		FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = current_schema() AND NOT t.tgisinternal`)
	if err != nil {
		return nil, fmt.Errorf("verify: reading the append-only triggers: %w", err)
	}
	var extra []string
	seen := map[string]bool{}
	for _, t := range protectedTables {
		seen[t] = true
	}
	for rows.Next() {
		var table, name string
		var tr triggerState
		if err := rows.Scan(&table, &name, &tr.enabled, &tr.typ, &tr.fn); err != nil {
			rows.Close()
			return nil, fmt.Errorf("verify: reading the append-only triggers: %w", err)
		}
		trigs[table+"\x00"+name] = tr
		if name == table+"_append_only" && !seen[table] {
			seen[table] = true
			extra = append(extra, table)
		}
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("verify: reading the append-only triggers: %w", err)
	}
	sort.Strings(extra)
	all := append(protectedTables[:len(protectedTables):len(protectedTables)], extra...)
	trows, err := q.Query(ctx, `SELECT c.relname FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
		WHERE n.nspname = current_schema() AND c.relkind IN ('r', 'p') AND c.relname = ANY($1)`, all)
	if err != nil {
		return nil, fmt.Errorf("verify: listing the ledger tables: %w", err)
	}
	for trows.Next() {
		var t string
		if err := trows.Scan(&t); err != nil {
			trows.Close()
			return nil, err
		}
		tables[t] = true
	}
	trows.Close()
	if err := trows.Err(); err != nil {
		return nil, err
	}
	for _, table := range all {
		if !tables[table] {
			out = append(out, GuardFinding{Guard: GuardAppendOnly, Table: table, Trigger: table + "_append_only", Problem: GuardTableMissing,
				Detail: fmt.Sprintf("ledger table %s is missing (dropped with its append-only triggers)", table)})
			continue
		}
		for _, want := range []struct {
			suffix, what string
			typ          int16
		}{{"_append_only", "UPDATE and DELETE", guardRowType}, {"_no_truncate", "TRUNCATE", guardTruncateType}} {
			name := table + want.suffix
			if g := judgeTrigger(GuardAppendOnly, table, name, trigs, want.typ, "ledger_append_only", want.what+" of its rows is not refused"); g != nil {
				out = append(out, *g)
			}
		}
	}
	// Then the identity guards (identity_guards.go), on the same reads:
	// their tables are all ledger tables.
	ids, err := checkIdentityGuards(ctx, q, trigs, tables)
	if err != nil {
		return nil, err
	}
	out = append(out, ids...)
	return out, nil
}

// triggerState is a trigger as pg_trigger has it.
type triggerState struct {
	enabled string
	typ     int16
	fn      string
}

// judgeTrigger is the finding for trigger name on table, of the guard
// given, when it is not as the migrations made it (nil when it is):
// missing, running another function or on other events than typ, or not
// firing in ordinary sessions. consequence says what then goes through.
func judgeTrigger(guard, table, name string, trigs map[string]triggerState, typ int16, fn, consequence string) *GuardFinding {
	tr, ok := trigs[table+"\x00"+name]
	g := &GuardFinding{Guard: guard, Table: table, Trigger: name}
	switch {
	case !ok:
		g.Problem = GuardMissing
		g.Detail = fmt.Sprintf("%s trigger %s on table %s is missing: %s", guard, name, table, consequence)
	case tr.typ != typ || tr.fn != fn:
		g.Problem = GuardAltered
		g.Detail = fmt.Sprintf("%s trigger %s on table %s was altered (runs %s, type %d; want %s, type %d): %s", guard, name, table, tr.fn, tr.typ, fn, typ, consequence)
	case tr.enabled != "O" && tr.enabled != "A":
		// 'O' fires in ordinary sessions, 'A' always; 'D' never, 'R' only
		// in replica sessions.
		g.Problem = GuardDisabled
		g.Detail = fmt.Sprintf("%s trigger %s on table %s is disabled (tgenabled %q): %s", guard, name, table, tr.enabled, consequence)
	default:
		return nil
	}
	return g
}

// SinceHead is a hull's chain head recorded earlier (by a checkpoint): the
// chain's length (records) and the hash of its last record.
type SinceHead struct {
	Length int64
	Head   []byte
}

// SinceCheckpoint returns the heads cp records, for VerifySince. It does
// not check cp's signature (VerifyCheckpointSince does).
func SinceCheckpoint(cp *Checkpoint) (map[uuid.UUID]SinceHead, error) {
	out := make(map[uuid.UUID]SinceHead, len(cp.Hulls))
	for _, h := range cp.Hulls {
		b, err := hex.DecodeString(h.Head)
		if err != nil || len(b) != sha256.Size || h.Length < 0 {
			return nil, &InputError{Err: fmt.Errorf("checkpoint %d: hull %s: bad head %q at length %d", cp.Seq, h.Serial, h.Head, h.Length)}
		}
		out[h.Hull] = SinceHead{Length: h.Length, Head: b}
	}
	return out, nil
}

// VerifySince verifies what was added to the chains since the heads in
// since, at one snapshot and in parallel as Verify does. For each hull with
// a starting head at length L > 0, the link at seq L must still have that
// hash (else the hull is broken there: records up to it were rewritten, or
// the chain was cut short), and then only links L+1.. are verified: each
// record's canonical bytes rebuilt from its stored rows, each hash
// recomputed and chained from the starting head. A hull with no starting
// head (added since) is verified whole, as by Verify. A hull in since that
// is no longer in the ledger is a break.
//
// The count checks are the full ones, not restricted to the new links:
// for every per-record kind, the number of rows the hull's tables hold now
// must equal the number of links of that kind on the whole chain (a row
// added or removed behind the chain, old or new, is found). The two row
// counts that need every record's content read (acoustic-emission hit rows
// and assessment damage rows) are checked for hulls verified whole only;
// for the others, rows added to a new record are found by its hash, rows
// added to an old record or to no record only by the full Verify.
//
// Records counts the links verified (the new ones, and every link of a
// hull verified whole); Heads are the current heads. Records before the
// starting heads are not re-read: a change to them that leaves the chain
// rows alone is found by the full Verify only. Run it regularly as well.
func (l *Ledger) VerifySince(ctx context.Context, since map[uuid.UUID]SinceHead) (*VerifyResult, error) {
	return l.verifySince(ctx, since, VerifyOptions{})
}

func (l *Ledger) verifySince(ctx context.Context, since map[uuid.UUID]SinceHead, opt VerifyOptions) (*VerifyResult, error) {
	check := func(ctx context.Context, q querier, h hullRef) (hullOutcome, error) {
		start, ok := since[h.id]
		if !ok || start.Length == 0 {
			n, head, broken, err := verifyHull(ctx, q, h.id, h.serial, h.at)
			return hullOutcome{n: n, head: head, broken: broken}, err
		}
		return verifyHullSince(ctx, q, h, start)
	}
	tail := func(ctx context.Context, q querier, hulls []hullRef, res *VerifyResult) error {
		listed := map[uuid.UUID]bool{}
		for _, h := range hulls {
			listed[h.id] = true
		}
		var gone []string
		for id := range since {
			if !listed[id] {
				gone = append(gone, id.String())
			}
		}
		sort.Strings(gone)
		if len(gone) > 0 && res.FirstBroken == nil {
			res.OK = false
			res.FirstBroken = &Broken{Kind: "hull", Key: gone[0], Reason: fmt.Sprintf("%d hulls of the starting heads are no longer in the ledger", len(gone))}
		}
		return nil
	}
	return l.verifyRun(ctx, opt, check, tail)
}

// verifyHullSince checks that the link at start.Length still has
// start.Head, then verifies the links after it and the full counts.
func verifyHullSince(ctx context.Context, q querier, h hullRef, start SinceHead) (hullOutcome, error) {
	fail := func(err error) (hullOutcome, error) { return hullOutcome{}, fmt.Errorf("verify %s: %w", h.serial, err) }
	rows, err := q.Query(ctx, "SELECT seq, kind, record_key, prev_hash, hash FROM audit_chain WHERE hull_id = $1 AND seq >= $2 ORDER BY seq", h.id, start.Length)
	if err != nil {
		return fail(err)
	}
	var links []chainLink
	for rows.Next() {
		var k chainLink
		if err := rows.Scan(&k.seq, &k.kind, &k.key, &k.prev, &k.hash); err != nil {
			rows.Close()
			return fail(err)
		}
		links = append(links, k)
	}
	if err := rows.Err(); err != nil {
		return fail(err)
	}
	if len(links) == 0 || links[0].seq != start.Length {
		return hullOutcome{head: start.Head, broken: &Broken{Hull: h.serial, Seq: start.Length,
			Reason: fmt.Sprintf("the chain holds no record %d, where the starting head is (the chain was cut short)", start.Length)}}, nil
	}
	if first := links[0]; !bytes.Equal(first.hash, start.Head) {
		return hullOutcome{head: start.Head, broken: &Broken{Hull: h.serial, Seq: first.seq, Kind: first.kind, Key: first.key,
			Reason: fmt.Sprintf("record %d has hash %x; the starting head says %x: records up to it were rewritten", first.seq, first.hash, start.Head)}}, nil
	}
	prev := start.Head
	var n int64
	var lh linkHasher
	for i := 1; i < len(links); i++ {
		k := &links[i]
		brk := func(reason string, a ...any) *Broken {
			return &Broken{Hull: h.serial, Seq: k.seq, Kind: k.kind, Key: k.key, Reason: fmt.Sprintf(reason, a...)}
		}
		if want := start.Length + int64(i); k.seq != want {
			return hullOutcome{n: n, head: prev, broken: brk("sequence gap: expected %d", want)}, nil
		}
		if !bytes.Equal(k.prev, prev) {
			return hullOutcome{n: n, head: prev, broken: brk("previous-hash link does not match the record before it")}, nil
		}
		var v linkVerdict
		if k.kind == "hull" && k.key == h.id.String() {
			v = lh.judge(k, hullCanon(h.id, h.serial, h.at), 0, "", nil)
		} else {
			canon, rows, why, err := recordCanon(ctx, q, k.kind, k.key)
			v = lh.judge(k, canon, rows, why, err)
		}
		if v.err != nil {
			return fail(fmt.Errorf("record %d: %w", k.seq, v.err))
		}
		if v.why != "" {
			return hullOutcome{n: n, head: prev, broken: brk("%s", v.why)}, nil
		}
		if !v.match {
			return hullOutcome{n: n, head: prev, broken: brk("record content does not match its hash (the stored record was changed)")}, nil
		}
		n++
		prev = k.hash
	}
	onChain, stored, err := sinceCounts(ctx, q, h.id)
	if err != nil {
		return fail(err)
	}
	length := links[len(links)-1].seq
	for _, kind := range verifyCounts {
		if kind == "ae_hit_rows" || kind == "assessment_rows" {
			continue // need every record read: the full Verify's
		}
		if stored[kind] != onChain[kind] {
			return hullOutcome{n: n, head: prev, broken: &Broken{Hull: h.serial, Seq: length + 1, Kind: kind,
				Reason: fmt.Sprintf("%d %s records stored but %d on the chain (records added or removed behind the chain)", stored[kind], kind, onChain[kind])}}, nil
		}
	}
	return hullOutcome{n: n, head: prev}, nil
}

// sinceCountSQL counts a hull's stored records of each per-record kind as
// the batch reads of Verify count them (see verifyCounts).
const sinceCountSQL = `SELECT
	1::bigint,
	(SELECT count(*) FROM hull_revisions WHERE hull_id = $1),
	(SELECT count(*) FROM dives WHERE hull_id = $1),
	(SELECT count(*) FROM reading_blocks WHERE hull_id = $1),
	(SELECT count(*) FROM dives WHERE hull_id = $1 AND ae_source_sha256 IS NOT NULL),
	(SELECT count(DISTINCT dive_id) FROM dive_cycles WHERE hull_id = $1),
	(SELECT count(*) FROM dive_holds WHERE hull_id = $1),
	(SELECT count(*) FROM dive_profiles WHERE hull_id = $1),
	(SELECT count(*) FROM dive_evidence WHERE hull_id = $1),
	(SELECT count(*) FROM inspections WHERE hull_id = $1),
	(SELECT count(*) FROM proof_tests WHERE hull_id = $1),
	(SELECT count(*) FROM decisions WHERE hull_id = $1),
	(SELECT count(*) FROM status_history WHERE hull_id = $1),
	(SELECT count(*) FROM corrections WHERE hull_id = $1),
	(SELECT count(*) FROM assessments WHERE hull_id = $1),
	(SELECT count(*) FROM evidence_revisions WHERE hull_id = $1),
	(SELECT count(*) FROM dive_voids WHERE hull_id = $1),
	(SELECT count(*) FROM dive_fingerprints WHERE hull_id = $1)`

// sinceCountKinds are the kinds sinceCountSQL's columns count, in order.
var sinceCountKinds = [...]string{"hull", "hull_revision", "dive", "reading_block", "ae_hits", "dive_cycles", "dive_holds",
	"dive_profile", "dive_evidence", "inspection", "proof_test", "decision", "status", "correction", "assessment",
	"evidence_revision", "dive_void", "dive_fingerprint"}

// sinceCounts returns, per kind, the links of the hull's whole chain and
// the rows its tables hold.
func sinceCounts(ctx context.Context, q querier, hull uuid.UUID) (map[string]int64, map[string]int64, error) {
	onChain := map[string]int64{}
	err := each(ctx, q, "chain counts", "SELECT kind, count(*) FROM audit_chain WHERE hull_id = $1 GROUP BY kind", hull, func(rows pgx.Rows) error {
		var kind string
		var n int64
		if err := rows.Scan(&kind, &n); err != nil {
			return err
		}
		onChain[kind] = n
		return nil
	})
	if err != nil {
		return nil, nil, err
	}
	vals := make([]int64, len(sinceCountKinds))
	dst := make([]any, len(vals))
	for i := range vals {
		dst[i] = &vals[i]
	}
	if err := q.QueryRow(ctx, sinceCountSQL, hull).Scan(dst...); err != nil {
		return nil, nil, fmt.Errorf("counting stored records: %w", err)
	}
	stored := map[string]int64{}
	for i, kind := range sinceCountKinds {
		stored[kind] = vals[i]
	}
	return onChain, stored, nil
}

// VerifyCheckpointSince checks cp's signature by pub and then, at one
// snapshot, that every checkpointed hull still extends its checkpointed
// head (as VerifyCheckpoint does) and VerifySince from cp's heads in place
// of the full Verify: a daily check that reads what was added since the
// checkpoint. The result's Chain is the VerifySince result. With a bad
// signature nothing else is read.
func (l *Ledger) VerifyCheckpointSince(ctx context.Context, cp *Checkpoint, pub crypto.PublicKey) (*CheckpointResult, error) {
	if _, err := publicKeyBytes(pub); err != nil {
		return nil, &InputError{Err: fmt.Errorf("verify checkpoint: %w", err)}
	}
	r := &CheckpointResult{Seq: cp.Seq, Time: cp.Time, Root: cp.Root, Hulls: []CheckpointHullResult{}, New: []CheckpointHull{}}
	if why := cp.checkStatement(pub); why != "" {
		r.Reason = why
		return r, nil
	}
	r.SignatureOK = true
	since, err := SinceCheckpoint(cp)
	if err != nil {
		return nil, err
	}
	err = l.Snapshot(ctx, func(s *Ledger) error {
		chain, err := s.VerifySince(ctx, since)
		if err != nil {
			return err
		}
		st, err := readCheckpointState(ctx, s.db)
		if err != nil {
			return err
		}
		return st.judge(ctx, s.db, cp, r, chain)
	})
	if err != nil {
		return nil, err
	}
	return r, nil
}
