package ledger

import (
	"errors"
	"io"
	"time"

	"github.com/google/uuid"

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
	// Upload, when set, is the samples as they arrive (Samples is then
	// empty): read once, straight into the parse.
	Upload *Upload
	// proof, when set, is the proof test these samples record: it is
	// checked against them and stored in the same transaction.
	proof *ProofTest
}

// Upload is a dive's samples as they arrive, read once: the service
// streams an upload straight into the parse instead of spooling it first.
// The bytes are hashed and counted as they are parsed, so whether the
// dive is already recorded is known only at the end (the work is then
// rolled back and the recorded dive answered). A read error (a dropped
// connection, a size limit) stores nothing and is returned as it came.
type Upload struct {
	// Samples is the samples file's bytes, Name its file name (stored
	// with the dive: a plain name, no folder).
	Samples io.Reader
	Name    string
	// Rest, when set, is called once the samples are read and before
	// anything is committed: it returns the path of a hits file that
	// followed them ("" for none), or an error when anything else did.
	Rest func() (hitsPath string, err error)
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
	// RecordedBy is who logged the dive: the database identity of the
	// session (the person, through the service), stamped and checked by
	// the database. Absent for dives logged before it was kept (and so
	// absent from reports over them, whose fingerprints stay).
	RecordedBy *string `json:"recorded_by,omitempty"`
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

	// status is the hull's status noted right after LogDive recorded the
	// dive.
	status *Fitness
}

// StatusAfter is the hull's status as LogDive evaluated and noted it right
// after recording the dive (nil for a dive that was not newly recorded,
// or one not returned by LogDive).
func (d *Dive) StatusAfter() *Fitness { return d.status }

// diveRow is the stored dive row, for canonical bytes.
type diveRow struct {
	ID           uuid.UUID `db:"id"`
	HullID       uuid.UUID `db:"hull_id"`
	HullRevision int32     `db:"hull_revision"`
	SourceName   string    `db:"source_name"`
	SHA          []byte    `db:"source_sha256"`
	SourceBytes  int64     `db:"source_bytes"`
	AEName       string    `db:"ae_source_name"`
	AESHA        []byte    `db:"ae_source_sha256"`
	Start        time.Time `db:"start_time"`
	End          time.Time `db:"end_time"`
	Lat          float64   `db:"latitude"`
	LatAssumed   bool      `db:"latitude_assumed"`
	Site         string    `db:"site"`
	Operator     string    `db:"operator"`
	LoadColumn   string    `db:"load_column"`
	Columns      []string  `db:"columns"`
	Gauges       []string  `db:"gauges"`
	Samples      int64     `db:"sample_count"`
	Blocks       int32     `db:"block_count"`
	Duration     float64   `db:"duration_s"`
	MaxDepth     float64   `db:"max_depth_m"`
	MaxPres      float64   `db:"max_pressure_mpa"`
	Beyond       bool      `db:"beyond_rated"`
	AEHits       int32     `db:"ae_hit_count"`
	RecordedAt   time.Time `db:"recorded_at"`
	// RecordedBy is who logged the dive (the session's database
	// identity, checked by the database); nil for a dive logged before it
	// was kept, whose canonical bytes then end without it.
	RecordedBy *string `db:"recorded_by"`
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
	if d.RecordedBy != nil {
		c.str(*d.RecordedBy)
	}
	return c.b
}

// diveColumns are the dives columns in scanArgs and values order; their
// names are diveRow's db tags (the dive lists read by name, the COPY
// source and verify's streaming reads by position).
const diveColumns = `id, hull_id, hull_revision, source_name, source_sha256, source_bytes, ae_source_name, ae_source_sha256,
	start_time, end_time, latitude, latitude_assumed, site, operator, load_column, columns, gauges, sample_count,
	block_count, duration_s, max_depth_m, max_pressure_mpa, beyond_rated, ae_hit_count, recorded_at, recorded_by`

// diveColumnCount is the number of diveColumns (a query that adds a column
// after them orders by its position, diveColumnCount+1).
const diveColumnCount = 26

func (d *diveRow) scanArgs() []any {
	return []any{&d.ID, &d.HullID, &d.HullRevision, &d.SourceName, &d.SHA, &d.SourceBytes, &d.AEName, &d.AESHA,
		&d.Start, &d.End, &d.Lat, &d.LatAssumed, &d.Site, &d.Operator, &d.LoadColumn, &d.Columns, &d.Gauges, &d.Samples,
		&d.Blocks, &d.Duration, &d.MaxDepth, &d.MaxPres, &d.Beyond, &d.AEHits, &d.RecordedAt, &d.RecordedBy}
}

func (d *diveRow) values() []any {
	return []any{d.ID, d.HullID, d.HullRevision, d.SourceName, d.SHA, d.SourceBytes, d.AEName, d.AESHA,
		d.Start, d.End, d.Lat, d.LatAssumed, d.Site, d.Operator, d.LoadColumn, d.Columns, d.Gauges, d.Samples,
		d.Blocks, d.Duration, d.MaxDepth, d.MaxPres, d.Beyond, d.AEHits, d.RecordedAt, d.RecordedBy}
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
