package ledger

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"strings"
	"sync"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"golang.org/x/sync/errgroup"

	"hulltally/configs"
	"hulltally/fatigue/fitness"
)

// The fleet summary (migration 009) is derived, not ledger: one row per
// hull with what the fleet view shows, written after the writes that
// evaluate a hull, so that the fleet is read in one query instead of
// evaluating every hull. A row is used only while it still describes the
// hull (summaryRow.currentAt); any other hull is evaluated from the ledger
// as before. A missing, stale or altered row therefore makes the view
// slower, never better; verify checks the rows in use against the ledger.

// FleetEntry is one hull of the fleet view: its status with every
// reason, its damage against the allowable and its remaining life as the
// ledger gives them (before the view voids a life on hold), and its last
// dive.
type FleetEntry struct {
	Serial string
	Name   string
	// Status, Reasons and LastDive are those of the hull's Fitness.
	Status   string
	Reasons  []Reason
	LastDive *time.Time
	// Damage carries the governing component and ratio and the remaining
	// life; the other fields of Damages are not set.
	Damage *Damages
	// EvaluatedAt is when the figures were evaluated.
	EvaluatedAt time.Time
	// Derived is true when the entry was read from the fleet summary, false
	// when the hull was evaluated for this read.
	Derived bool
}

// summaryDoc is what a fleet summary row keeps (summary_json). The
// governing ratio keeps its infinity (a static overload) or NaN apart
// from a number, which JSON cannot.
type summaryDoc struct {
	Status string `json:"status"`
	// Reasons are the hull's reasons with each text's rule part ("[rule
	// …; basis: …; source: …]", the same for every dive that raised the
	// rule) kept once in Tails: decoding the documents is most of a fleet
	// read, and a hull on hold may carry a reason per dive.
	Reasons                []storedReason `json:"reasons"`
	Tails                  []string       `json:"tails,omitempty"`
	LastDive               *time.Time     `json:"last_dive"`
	Governing              string         `json:"governing_component"`
	Ratio                  *float64       `json:"governing_ratio"`
	RatioNotFinite         string         `json:"governing_ratio_not_finite,omitempty"`
	DiveCount              int            `json:"dive_count"`
	RemainingDives         *int64         `json:"remaining_dives"`
	RemainingMoreThan      bool           `json:"remaining_more_than"`
	RemainingStatus        string         `json:"remaining_status"`
	RemainingReason        string         `json:"remaining_reason"`
	RemainingBasis         string         `json:"remaining_basis,omitempty"`
	RemainingAtRecentMean  *int64         `json:"remaining_at_recent_mean"`
	RemainingAtDesignDive  *int64         `json:"remaining_at_design_dive"`
	RemainingRecentMore    bool           `json:"remaining_at_recent_mean_more_than"`
	RemainingDesignDiveMor bool           `json:"remaining_at_design_dive_more_than"`
}

// storedReason is a Reason whose text is Head followed by the Tail-th
// (1-based) of the document's tails, or Head alone when Tail is 0.
type storedReason struct {
	Kind  string     `json:"kind"`
	Code  string     `json:"code,omitempty"`
	State string     `json:"state"`
	NoGo  bool       `json:"no_go,omitempty"`
	Head  string     `json:"head"`
	Tail  int        `json:"tail,omitempty"`
	At    *time.Time `json:"at,omitempty"`
}

// ruleTail marks where a reason's rule part begins.
const ruleTail = " [rule "

// packReasons splits each reason's text at its last rule part and keeps
// every distinct rule part once, in the order met.
func packReasons(rs []Reason) ([]storedReason, []string) {
	out := make([]storedReason, len(rs))
	var tails []string
	index := map[string]int{}
	for i, r := range rs {
		sr := storedReason{Kind: r.Kind, Code: r.Code, State: r.State, NoGo: r.NoGo, Head: r.Text, At: r.At}
		if k := strings.LastIndex(r.Text, ruleTail); k >= 0 {
			tail := r.Text[k:]
			n, ok := index[tail]
			if !ok {
				tails = append(tails, tail)
				n = len(tails)
				index[tail] = n
			}
			sr.Head, sr.Tail = r.Text[:k], n
		}
		out[i] = sr
	}
	return out, tails
}

// unpackReasons is packReasons undone; a tail index out of range is an
// error (the row is then not used).
func unpackReasons(rs []storedReason, tails []string) ([]Reason, error) {
	out := make([]Reason, len(rs))
	for i, r := range rs {
		text := r.Head
		if r.Tail != 0 {
			if r.Tail < 0 || r.Tail > len(tails) {
				return nil, fmt.Errorf("reason %d names rule part %d of %d", i+1, r.Tail, len(tails))
			}
			text += tails[r.Tail-1]
		}
		out[i] = Reason{Kind: r.Kind, Code: r.Code, State: r.State, NoGo: r.NoGo, Text: text, At: r.At}
	}
	return out, nil
}

func docOf(f *Fitness) summaryDoc {
	d := summaryDoc{Status: f.Status, LastDive: f.LastDive}
	d.Reasons, d.Tails = packReasons(f.Reasons)
	if g := f.Damage; g != nil {
		r := float64(g.GoverningRatio)
		switch {
		case math.IsInf(r, 1):
			d.RatioNotFinite = "+inf"
		case math.IsInf(r, -1):
			d.RatioNotFinite = "-inf"
		case math.IsNaN(r):
			d.RatioNotFinite = "nan"
		default:
			d.Ratio = &r
		}
		d.Governing, d.DiveCount = g.Governing, g.DiveCount
		d.RemainingDives, d.RemainingMoreThan, d.RemainingStatus, d.RemainingReason, d.RemainingBasis = g.RemainingDives, g.RemainingMoreThan, g.RemainingStatus, g.RemainingReason, g.RemainingBasis
		d.RemainingAtRecentMean, d.RemainingAtDesignDive = g.RemainingAtRecentMean, g.RemainingAtDesignDive
		d.RemainingRecentMore, d.RemainingDesignDiveMor = g.RemainingAtRecentMeanMoreThan, g.RemainingAtDesignDiveMoreThan
	}
	return d
}

func (d summaryDoc) entry(serial, name string, at time.Time, derived bool) (FleetEntry, error) {
	reasons, err := unpackReasons(d.Reasons, d.Tails)
	if err != nil {
		return FleetEntry{}, err
	}
	r := math.NaN()
	switch {
	case d.Ratio != nil:
		r = *d.Ratio
	case d.RatioNotFinite == "+inf":
		r = math.Inf(1)
	case d.RatioNotFinite == "-inf":
		r = math.Inf(-1)
	}
	g := &Damages{Governing: d.Governing, GoverningRatio: Num(r), DiveCount: d.DiveCount,
		RemainingDives: d.RemainingDives, RemainingMoreThan: d.RemainingMoreThan, RemainingStatus: d.RemainingStatus,
		RemainingReason: d.RemainingReason, RemainingBasis: d.RemainingBasis,
		RemainingAtRecentMean: d.RemainingAtRecentMean, RemainingAtDesignDive: d.RemainingAtDesignDive,
		RemainingAtRecentMeanMoreThan: d.RemainingRecentMore, RemainingAtDesignDiveMoreThan: d.RemainingDesignDiveMor}
	return FleetEntry{Serial: serial, Name: name, Status: d.Status, Reasons: reasons, LastDive: d.LastDive, Damage: g, EvaluatedAt: at, Derived: derived}, nil
}

// summaryBasis fingerprints everything besides the ledger that a hull's
// evaluation may depend on: the whole configuration but where the ledger
// and the files live (a setting added later is covered without a
// change here), the rule set and the curve library as parsed at Open
// (their bytes' hashes), and the build: the SHA-256 of the running
// executable, since a build without version control stamps (go run, a
// source tree, -buildvcs=false) names no revision, and two builds of the
// same revision may differ (a modified tree, another architecture). A row
// written under another basis is not used. Computed once per Ledger.
func (l *Ledger) summaryBasis() ([]byte, error) {
	l.basis.once.Do(func() {
		c := *l.cfg
		c.Home, c.Database, c.Source = "", configs.Database{}, nil
		js, err := json.Marshal(map[string]any{
			"config": c, "fatigue": fmt.Sprintf("%x", l.fat.hash), "rules": fmt.Sprintf("%x", l.rulesSHA),
			"software": software(), "executable": executableSHA(),
		})
		if err != nil {
			l.basis.err = err
			return
		}
		b := sha256.Sum256(js)
		l.basis.b = b[:]
	})
	return l.basis.b, l.basis.err
}

// basisCache holds a Ledger's summary basis once computed (shared by the
// Ledgers a Snapshot hands out).
type basisCache struct {
	once sync.Once
	b    []byte
	err  error
}

// executableSHA is the hex SHA-256 of the running executable; when it
// cannot be read, a random value, so that this process's rows match no
// other's (slower reads, never a row of another build).
func executableSHA() string {
	h := sha256.New()
	err := func() error {
		p, err := os.Executable()
		if err != nil {
			return err
		}
		f, err := os.Open(p)
		if err != nil {
			return err
		}
		defer f.Close()
		_, err = io.Copy(h, f)
		return err
	}()
	if err != nil {
		return "unreadable executable " + uuid.NewString()
	}
	return fmt.Sprintf("%x", h.Sum(nil))
}

// stableUntil is how long f's verdict holds with nothing recorded
// (fitness.StableUntil); nil when it holds until the facts change.
func (l *Ledger) stableUntil(f *Fitness) *time.Time {
	until, bounded := fitness.StableUntil(l.rulesSet, f.facts, f.decisions)
	if !bounded {
		return nil
	}
	return &until
}

// noteFitness is the write after an evaluation made in a snapshot whose
// chain head was head: in one transaction holding the hull's chain lock,
// when nothing was added to the hull's chain since the snapshot, it
// appends the status to the hull's history when it changed and writes
// the hull's fleet summary (so a row's status is always the one last
// noted) with the head that includes the status
// record. When something was added meanwhile it writes nothing: the
// evaluation is already old (it may be better than the hull now), and the
// writer of the newer record notes its own, which sees this one's record
// too.
func (l *Ledger) noteFitness(ctx context.Context, e *evaluation) error {
	h, f := e.h, e.f
	basis, err := l.summaryBasis()
	if err != nil {
		return err
	}
	doc, err := json.Marshal(docOf(f))
	if err != nil {
		return fmt.Errorf("fleet summary of %s: %w", h.Serial, err)
	}
	until := l.stableUntil(f)
	return pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		// The hull's summary row first, then its chain: the order of every
		// write (its inserts take the row away through the trigger, then it
		// appends to the chain), so that the two never wait on each other.
		// Only the owner writes the summary (migration 014): a person's
		// write notes the status and leaves the row away, and the hull is
		// evaluated from the ledger when read until the owner rebuilds.
		owner := l.identity.Owner
		if owner {
			if _, err := tx.Exec(ctx, "SELECT 1 FROM fleet_summary WHERE hull_id = $1 FOR UPDATE", h.ID); err != nil {
				return fmt.Errorf("fleet summary of %s: locking it: %w", h.Serial, err)
			}
		}
		if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1, hashtext($2))", lockChain, h.ID.String()); err != nil {
			return fmt.Errorf("status of %s: locking the chain: %w", h.Serial, err)
		}
		curHash, curSeq, err := chainHeadIn(ctx, tx, h.ID)
		if err != nil {
			return fmt.Errorf("status of %s: %w", h.Serial, err)
		}
		if curSeq != e.seq || !bytes.Equal(curHash, e.head) {
			return nil
		}
		var last string
		err = tx.QueryRow(ctx, "SELECT status FROM status_history WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", h.ID).Scan(&last)
		if err != nil && !errors.Is(err, pgx.ErrNoRows) {
			return fmt.Errorf("status history of %s: %w", h.Serial, err)
		}
		if errors.Is(err, pgx.ErrNoRows) || last != f.Status {
			reasons, _ := json.Marshal(f.Reasons)
			var seq int64
			at := now()
			if err := tx.QueryRow(ctx, "INSERT INTO status_history (hull_id, status, reasons_json, recorded_at) VALUES ($1,$2,$3,$4) RETURNING seq",
				h.ID, f.Status, string(reasons), at).Scan(&seq); err != nil {
				return fmt.Errorf("status history of %s: %w", h.Serial, err)
			}
			rec := chainRec{kind: "status", key: fmt.Sprintf("%s/%d", h.ID, seq), canon: statusCanon(h.ID, seq, f.Status, string(reasons), at)}
			if curHash, err = appendChain(ctx, tx, h.ID, []chainRec{rec}, at); err != nil {
				return err
			}
			curSeq++
		}
		if !owner {
			return nil
		}
		_, err = tx.Exec(ctx, `INSERT INTO fleet_summary (hull_id, chain_seq, chain_hash, basis, evaluated_at, stable_until, status, summary_json)
			VALUES ($1,$2,$3,$4,$5,$6,$7,$8)
			ON CONFLICT (hull_id) DO UPDATE SET chain_seq = EXCLUDED.chain_seq, chain_hash = EXCLUDED.chain_hash, basis = EXCLUDED.basis,
				evaluated_at = EXCLUDED.evaluated_at, stable_until = EXCLUDED.stable_until, status = EXCLUDED.status, summary_json = EXCLUDED.summary_json`,
			h.ID, curSeq, curHash, basis, f.facts.Now, until, f.Status, string(doc))
		if err != nil {
			return fmt.Errorf("fleet summary of %s: %w", h.Serial, err)
		}
		return nil
	})
}

// chainHeadIn reads a hull's chain head inside a transaction (zero hash
// and length 0 for an empty chain).
func chainHeadIn(ctx context.Context, q querier, hull uuid.UUID) ([]byte, int64, error) {
	var seq int64
	var h []byte
	err := q.QueryRow(ctx, "SELECT seq, hash FROM audit_chain WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", hull).Scan(&seq, &h)
	if errors.Is(err, pgx.ErrNoRows) {
		return make([]byte, 32), 0, nil
	}
	if err != nil {
		return nil, 0, fmt.Errorf("reading the chain head: %w", err)
	}
	return h, seq, nil
}

// evaluation is a hull evaluated in a snapshot whose chain head was
// head (length seq).
type evaluation struct {
	f    *Fitness
	h    *Hull
	head []byte
	seq  int64
}

// evaluate evaluates a hull at at in one snapshot, with its chain head.
func (l *Ledger) evaluate(ctx context.Context, serial string, at time.Time) (*evaluation, error) {
	e := &evaluation{}
	err := l.Snapshot(ctx, func(s *Ledger) error {
		var err error
		if e.h, err = s.Hull(ctx, serial); err != nil {
			return err
		}
		if e.head, e.seq, err = chainHeadIn(ctx, s.db, e.h.ID); err != nil {
			return err
		}
		e.f, err = s.fitnessOf(ctx, e.h, at)
		return err
	})
	return e, err
}

// evaluateAndNote evaluates a hull at at in one snapshot and notes the
// result (noteFitness): the status when it changed, and the fleet
// summary. It is what every write ends with.
func (l *Ledger) evaluateAndNote(ctx context.Context, serial string, at time.Time) (*Fitness, error) {
	if err := l.writable("evaluating a hull"); err != nil {
		return nil, err
	}
	e, err := l.evaluate(ctx, serial, at)
	if err != nil {
		return nil, err
	}
	if err := l.noteFitness(ctx, e); err != nil {
		return nil, err
	}
	return e.f, nil
}

// summaryRow is a stored fleet summary row with the hull's chain head
// now.
type summaryRow struct {
	hullID             uuid.UUID
	serial, name       string
	present            bool
	seq, headSeq       int64
	hash, headHash     []byte
	basis              []byte
	evaluated          time.Time
	stableUntil        *time.Time
	doc                []byte
	stored             summaryDoc
	currentAt          bool
	currentWhy         string
	storedStatusColumn string
	// noted is the hull's last status in its (chained) status history.
	noted string
	// entry is the row as a fleet entry, when it stands for the hull.
	entry FleetEntry
}

// readSummaries reads every hull (or the one hull given) with its fleet
// summary row (if any), its chain head now and its last noted status, in
// one query, and says which rows may stand for the hull at at.
func (l *Ledger) readSummaries(ctx context.Context, at time.Time, hull *uuid.UUID) ([]*summaryRow, error) {
	basis, err := l.summaryBasis()
	if err != nil {
		return nil, err
	}
	rows, err := l.db.Query(ctx, `
		SELECT h.id, h.serial, r.name, s.hull_id IS NOT NULL, coalesce(s.chain_seq, 0), coalesce(s.chain_hash, ''::bytea),
		       coalesce(s.basis, ''::bytea), coalesce(s.evaluated_at, 'epoch'), s.stable_until, coalesce(s.status, ''),
		       coalesce(s.summary_json, ''), coalesce(c.seq, 0), coalesce(c.hash, ''::bytea), coalesce(n.status, '')
		FROM hulls h
		JOIN LATERAL (SELECT name FROM hull_revisions r WHERE r.hull_id = h.id ORDER BY revision DESC LIMIT 1) r ON true
		LEFT JOIN fleet_summary s ON s.hull_id = h.id
		LEFT JOIN LATERAL (SELECT seq, hash FROM audit_chain c WHERE c.hull_id = h.id ORDER BY seq DESC LIMIT 1) c ON true
		LEFT JOIN LATERAL (SELECT status FROM status_history n WHERE n.hull_id = h.id ORDER BY seq DESC LIMIT 1) n ON true
		WHERE $1::uuid IS NULL OR h.id = $1
		ORDER BY h.serial COLLATE "C"`, hull)
	if err != nil {
		return nil, fmt.Errorf("reading the fleet summary: %w", err)
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (*summaryRow, error) {
		var s summaryRow
		var doc string
		err := r.Scan(&s.hullID, &s.serial, &s.name, &s.present, &s.seq, &s.hash, &s.basis, &s.evaluated, &s.stableUntil,
			&s.storedStatusColumn, &doc, &s.headSeq, &s.headHash, &s.noted)
		s.doc = []byte(doc)
		return &s, err
	})
	if err != nil {
		return nil, fmt.Errorf("reading the fleet summary: %w", err)
	}
	// Decoding the rows' documents is most of a fleet read (the reasons'
	// texts): spread over the cores, 64 rows at a time.
	var g errgroup.Group
	g.SetLimit(runtime.GOMAXPROCS(0))
	for lo := 0; lo < len(out); lo += 64 {
		chunk := out[lo:min(lo+64, len(out))]
		g.Go(func() error {
			for _, s := range chunk {
				s.currentAt, s.currentWhy = s.judge(basis, at)
			}
			return nil
		})
	}
	return out, g.Wait()
}

// judge says whether a row may stand for its hull at at, and if not why.
func (s *summaryRow) judge(basis []byte, at time.Time) (bool, string) {
	switch {
	case !s.present:
		return false, "no summary row"
	case s.seq != s.headSeq || !bytes.Equal(s.hash, s.headHash):
		return false, fmt.Sprintf("written at chain record %d, the hull's chain is at %d", s.seq, s.headSeq)
	case !bytes.Equal(s.basis, basis):
		return false, "written under another configuration, rule set or build"
	case at.Before(s.evaluated):
		return false, "evaluated after the moment read"
	case s.stableUntil != nil && !at.Before(*s.stableUntil):
		return false, fmt.Sprintf("the verdict may change with the time from %s", s.stableUntil.UTC().Format(time.RFC3339))
	}
	if err := json.Unmarshal(s.doc, &s.stored); err != nil {
		return false, "summary does not parse: " + err.Error()
	}
	e, err := s.stored.entry(s.serial, s.name, s.evaluated, true)
	if err != nil {
		return false, "summary does not unpack: " + err.Error()
	}
	s.entry = e
	if s.stored.Status != s.storedStatusColumn {
		return false, "summary status and its column disagree"
	}
	// Every write of a row notes its status in the chained history in the
	// same transaction: a row whose status is not the one last noted, or
	// not one of the four, contradicts the ledger.
	if !knownState(s.stored.Status) || s.stored.Status != s.noted {
		return false, fmt.Sprintf("summary says %q, the status last noted is %q", s.stored.Status, s.noted)
	}
	for _, r := range s.stored.Reasons {
		if !knownState(r.State) {
			return false, fmt.Sprintf("a reason's state %q is not a status", r.State)
		}
	}
	return true, ""
}

// knownState reports whether s is exactly one of the four statuses.
func knownState(s string) bool {
	switch fitness.State(s) {
	case fitness.Fit, fitness.Watch, fitness.Hold, fitness.Withdrawn:
		return true
	}
	return false
}

// Fleet returns every hull of the fleet view at at, by serial: each from
// its fleet summary row where the row still stands for the hull, else
// evaluated from the ledger (nothing is written: the summary is the
// writes'). All in one snapshot.
func (l *Ledger) Fleet(ctx context.Context, at time.Time) ([]FleetEntry, error) {
	var out []FleetEntry
	err := l.Snapshot(ctx, func(s *Ledger) error {
		rows, err := s.readSummaries(ctx, at, nil)
		if err != nil {
			return err
		}
		out = make([]FleetEntry, 0, len(rows))
		for _, r := range rows {
			e, err := s.entryAt(ctx, r, nil, at)
			if err != nil {
				return err
			}
			out = append(out, e)
		}
		return nil
	})
	return out, err
}

// RebuildFleetSummary evaluates every hull at at and writes its fleet
// summary, noting its status where it changed (an inspection fallen due,
// as `status record` does), over up to workers hulls at once (0: GOMAXPROCS, bounded by the
// connection pool). It returns the number of rows written; a hull whose
// chain moved during its evaluation is left for its writer.
func (l *Ledger) RebuildFleetSummary(ctx context.Context, at time.Time, workers int) (int, error) {
	if err := l.writable("RebuildFleetSummary"); err != nil {
		return 0, err
	}
	hs, err := l.allHulls(ctx)
	if err != nil {
		return 0, err
	}
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(verifyWorkers(workers, l.pool.Config().MaxConns, len(hs)))
	for _, h := range hs {
		g.Go(func() error {
			_, err := l.evaluateAndNote(gctx, h.Serial, at)
			return err
		})
	}
	if err := g.Wait(); err != nil {
		return 0, fmt.Errorf("rebuilding the fleet summary: %w", err)
	}
	var n int
	err = l.pool.QueryRow(ctx, "SELECT count(*) FROM fleet_summary WHERE evaluated_at = $1", at).Scan(&n)
	return n, err
}

// SummaryCheck is what verify found of the fleet summary: how many rows
// stand for their hull now (and were evaluated again from the ledger at
// their moment and compared), how many do not and are therefore not used
// (a hull read without a current row is evaluated from the ledger), and
// every row in use that disagrees with the ledger.
type SummaryCheck struct {
	Hulls    int `json:"hulls"`
	Current  int `json:"current"`
	NotInUse int `json:"not_in_use"`
	// Disagree names each hull whose current row differs from the
	// ledger's evaluation, with what differs.
	Disagree []SummaryDisagreement `json:"disagree"`
}

// SummaryDisagreement is a fleet summary row in use whose figures are
// not the ledger's.
type SummaryDisagreement struct {
	Serial string `json:"serial"`
	Stored string `json:"stored"`
	Ledger string `json:"ledger"`
}

// add counts one hull's row and what its check found.
func (sc *SummaryCheck) add(r *summaryRow, d *SummaryDisagreement) {
	sc.Hulls++
	if !r.currentAt {
		sc.NotInUse++
		return
	}
	sc.Current++
	if d != nil {
		sc.Disagree = append(sc.Disagree, *d)
	}
}

// checkSummaryRow evaluates the hull of a row in use at the row's moment
// and says how the row disagrees, if it does (nil for a row not in use).
func (l *Ledger) checkSummaryRow(ctx context.Context, r *summaryRow) (*SummaryDisagreement, error) {
	if !r.currentAt {
		return nil, nil
	}
	h, err := l.Hull(ctx, r.serial)
	if err != nil {
		return nil, err
	}
	f, err := l.fitnessOf(ctx, h, r.evaluated)
	if err != nil {
		return nil, fmt.Errorf("status of hull %s: %w", r.serial, err)
	}
	want, _ := json.Marshal(docOf(f))
	got, _ := json.Marshal(r.stored)
	if bytes.Equal(want, got) {
		return nil, nil
	}
	return &SummaryDisagreement{Serial: r.serial, Stored: string(got), Ledger: string(want)}, nil
}

// summaryOf is verify's check of one hull's fleet summary with the reads
// of q (a worker's transaction at verify's snapshot).
func (l *Ledger) summaryOf(ctx context.Context, q querier, hull uuid.UUID, at time.Time) (*summaryOutcome, error) {
	s := *l
	s.db, s.snapshot = q, true
	rows, err := s.readSummaries(ctx, at, &hull)
	if err != nil || len(rows) != 1 {
		return nil, errors.Join(err, fmt.Errorf("fleet summary of hull %s: %d rows", hull, len(rows)))
	}
	d, err := s.checkSummaryRow(ctx, rows[0])
	return &summaryOutcome{row: rows[0], disagree: d}, err
}

// summaryOutcome is what verify found of one hull's fleet summary.
type summaryOutcome struct {
	row      *summaryRow
	disagree *SummaryDisagreement
}

// FleetEntryOf is one hull's fleet entry at at: read from its fleet
// summary when the summary stands for the hull (Derived true), else
// evaluated from the ledger (a read: nothing is recorded). It is what
// Fleet gives for that hull.
func (l *Ledger) FleetEntryOf(ctx context.Context, h *Hull, at time.Time) (*FleetEntry, error) {
	var out *FleetEntry
	err := l.Snapshot(ctx, func(s *Ledger) error {
		rows, err := s.readSummaries(ctx, at, &h.ID)
		if err != nil {
			return err
		}
		var r *summaryRow
		if len(rows) == 1 {
			r = rows[0]
		}
		e, err := s.entryAt(ctx, r, h, at)
		out = &e
		return err
	})
	return out, err
}

// entryAt is a hull's fleet entry at at: its summary row when the row
// stands for the hull, else the hull evaluated from the ledger. r may be
// nil (no row read), h nil (looked up by r's serial).
func (l *Ledger) entryAt(ctx context.Context, r *summaryRow, h *Hull, at time.Time) (FleetEntry, error) {
	if r != nil && r.currentAt {
		return r.entry, nil
	}
	if h == nil {
		var err error
		if h, err = l.Hull(ctx, r.serial); err != nil {
			return FleetEntry{}, err
		}
	}
	f, err := l.fitnessOf(ctx, h, at)
	if err != nil {
		return FleetEntry{}, fmt.Errorf("status of hull %s: %w", h.Serial, err)
	}
	return docOf(f).entry(h.Serial, h.Spec.Name, at, false)
}

// RulesSource names the fitness rule set in force.
func (l *Ledger) RulesSource() string { return l.rulesSrc }

// NoteHull evaluates a hull now and notes it as every write of the owner
// ends: its status where it changed, and its fleet summary. A person may
// not write the summary (migration 014), so the service, as the owner,
// calls it after a person's write, and the fleet view and the hull page
// read the hull from its summary again instead of evaluating it at every
// look.
func (l *Ledger) NoteHull(ctx context.Context, serial string) error {
	_, err := l.evaluateAndNote(ctx, serial, now())
	return err
}
