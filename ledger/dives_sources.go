package ledger

import (
	"context"
	"crypto/sha256"
	"fmt"
	"hash"
	"io"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/ledger/blocks"
	"hulltally/ledger/files"
	"hulltally/ledger/logfile"
)

// blockSource feeds encoded blocks to COPY and keeps the dive's summary.
type blockSource struct {
	ctx      context.Context
	stream   *logfile.BlockStream
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
	b, err := s.stream.Next()
	if err == io.EOF {
		return false
	}
	if err != nil {
		s.perr = err
		return false
	}
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
	s.recs = append(s.recs, chainRec{kind: "reading_block", key: fmt.Sprintf("%s/%d", s.row.ID, s.blockNo), canon: blockCanon(s.row.ID, s.row.HullID, s.blockNo, s.rows, int32(n), b.TimeNS[0], b.TimeNS[n-1], sum)})
	s.rows += int64(n)
	s.blockNo++
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
