package logfile

import (
	"fmt"
	"io"
	"strings"
	"time"

	"hulltally/ledger/blocks"
)

// Event is what a row of a hits file records.
type Event uint8

// Events. The zero value is a hit, so a Hit made without an event column
// (or read back from storage without one) counts as a hit.
const (
	// EventHit is an acoustic-emission hit from the hull (the default
	// when the file has no event column).
	EventHit Event = iota
	// EventLeadBreak is a pencil-lead break (Hsu-Nielsen source) made
	// by the operator to check a sensor's coupling and sensitivity.
	EventLeadBreak
	// EventSensorTest is an automatic sensor test pulse sent by the
	// acquisition system.
	EventSensorTest
)

// eventName is the value of the event column for e.
func eventName(e Event) string {
	switch e {
	case EventHit:
		return "hit"
	case EventLeadBreak:
		return "lead_break"
	case EventSensorTest:
		return "sensor_test"
	}
	return fmt.Sprintf("event(%d)", uint8(e))
}

// String is the event's name as written in the event column.
func (e Event) String() string { return eventName(e) }

// ParseEvent reads a value of the event column: hit, lead_break or
// sensor_test (exactly, in lower case).
func ParseEvent(s string) (Event, bool) {
	switch s {
	case "hit":
		return EventHit, true
	case "lead_break":
		return EventLeadBreak, true
	case "sensor_test":
		return EventSensorTest, true
	}
	return 0, false
}

// Hit is one row of an acoustic-emission hits file: a hit, or a sensor
// check (Event), which has the same measurements.
type Hit struct {
	TimeNS      int64 // nanoseconds since 1970, UTC
	Channel     int
	AmplitudeDB float64 // dB_AE
	Energy      float64 // in the acquisition system's energy unit
	Counts      int64   // threshold crossings
	DurationUS  float64 // µs
	RiseUS      float64 // µs
	Event       Event   // hit, lead break or sensor test
}

var hitColumns = []string{"channel", "amplitude_db", "energy", "counts", "duration_us", "rise_us"}

// Slots of HitReader.idx: 0 is the time, 1..6 hitColumns, 7 the optional
// event column.
const (
	slotChannel = 1
	slotCounts  = 4
	slotEvent   = 7
)

// HitOptions configure a hits reader.
type HitOptions struct {
	// Start is the time of t_s = 0; required for files with a t_s column.
	Start *time.Time
	// Limits; nil means DefaultLimits.
	Limits *Limits
	// MinTime and MaxTime bound the accepted time stamps as in
	// SampleOptions: zero MinTime means 1990-01-01T00:00:00Z, zero MaxTime
	// no limit beyond what int64 nanoseconds hold.
	MinTime, MaxTime time.Time
}

// HitReader streams an acoustic-emission hits file:
// time (or t_s), channel, amplitude_db, energy, counts, duration_us,
// rise_us, and optionally event.
type HitReader struct {
	lr     *lineReader
	idx    [8]int // file column of time, channel, amplitude_db, ..., event
	ncol   int
	rel    bool
	start  time.Time
	win    window
	fields [][]byte
	prevT  int64
	n      int
	lim    Limits
}

// NewHitReader reads and checks the header of a hits file. start is the
// time of t_s = 0 (needed only for t_s files). It is NewHitReaderOptions
// with the default time window and limits.
func NewHitReader(r io.Reader, file string, start *time.Time) (*HitReader, error) {
	return NewHitReaderOptions(r, file, HitOptions{Start: start})
}

// NewHitReaderOptions reads and checks the header of a hits file.
func NewHitReaderOptions(r io.Reader, file string, opt HitOptions) (*HitReader, error) {
	lr := newLineReader(r, file)
	line, err := lr.next()
	if err == io.EOF {
		return nil, &Error{File: file, Msg: "empty file: expected a header line (time,channel,amplitude_db,energy,counts,duration_us,rise_us[,event])"}
	}
	if err != nil {
		return nil, err
	}
	hr := &HitReader{lr: lr, lim: DefaultLimits, win: newWindow(opt.MinTime, opt.MaxTime)}
	if opt.Limits != nil {
		hr.lim = *opt.Limits
	}
	for i := range hr.idx {
		hr.idx[i] = -1
	}
	fields := splitFields(nil, line)
	for i, f := range fields {
		name := strings.ToLower(string(f))
		slot := -1
		switch name {
		case "time":
			slot = 0
		case "t_s":
			slot, hr.rel = 0, true
		case "event":
			slot = slotEvent
		default:
			for k, n := range hitColumns {
				if n == name {
					slot = k + 1
				}
			}
		}
		if slot < 0 {
			return nil, lr.errf(i+1, name, "unknown column in a hits file (known: time or t_s, %s; optional: event)", strings.Join(hitColumns, ", "))
		}
		if hr.idx[slot] >= 0 {
			return nil, lr.errf(i+1, name, "column repeated or second time column")
		}
		hr.idx[slot] = i
	}
	for slot, at := range hr.idx[:slotEvent] {
		if at < 0 {
			name := "time (or t_s)"
			if slot > 0 {
				name = hitColumns[slot-1]
			}
			return nil, lr.errf(0, "", "missing column %s", name)
		}
	}
	hr.ncol = len(fields)
	if hr.rel {
		if opt.Start == nil {
			return nil, lr.errf(hr.idx[0]+1, "t_s", "hit times are relative (t_s): give the dive's start time (--start)")
		}
		hr.start = *opt.Start
		if msg := hr.win.checkStart(hr.start); msg != "" {
			return nil, lr.errf(hr.idx[0]+1, "t_s", "%s (--start)", msg)
		}
	}
	hr.fields = fields
	return hr, nil
}

// Count is the number of rows (hits and sensor checks) read so far.
func (hr *HitReader) Count() int { return hr.n }

// Next reads the next row into h; io.EOF at the end.
func (hr *HitReader) Next(h *Hit) error {
	line, err := hr.lr.next()
	if err != nil {
		return err
	}
	hr.fields = splitFields(hr.fields, line)
	if len(hr.fields) != hr.ncol {
		return hr.lr.errf(0, "", "%d fields, the header has %d", len(hr.fields), hr.ncol)
	}
	bad := func(slot int, msg string, a ...any) error {
		return hr.lr.errf(hr.idx[slot]+1, hitColumns[slot-1], msg, a...)
	}
	// time
	at := hr.idx[0]
	name := "time"
	if hr.rel {
		name = "t_s"
	}
	t, msg := parseTimeField(hr.fields[at], hr.rel, hr.start, &hr.win)
	if msg != "" {
		return hr.lr.errf(at+1, name, "%s", msg)
	}
	if hr.n > 0 && t < hr.prevT {
		return hr.lr.errf(at+1, name, "hit time goes backwards (%s after %s)", fmtNS(t), fmtNS(hr.prevT))
	}
	vals := [7]float64{}
	var whole [7]int64
	for slot := 1; slot < 7; slot++ {
		f := hr.fields[hr.idx[slot]]
		if slot == slotChannel || slot == slotCounts {
			v, ok := blocks.WholeNumber(f)
			if !ok {
				return bad(slot, "%s must be a whole number ≥ 0 written with digits only, got %q", hitColumns[slot-1], f)
			}
			whole[slot] = v
			continue
		}
		if m, s, ok := blocks.ParseDecimal(f); ok {
			vals[slot] = blocks.DecimalValue(m, s)
			continue
		}
		v, err := parseFloat(f)
		if err != nil {
			return bad(slot, "%v", err)
		}
		vals[slot] = v
	}
	ev := EventHit
	if at := hr.idx[slotEvent]; at >= 0 {
		f := hr.fields[at]
		var ok bool
		if ev, ok = ParseEvent(string(f)); !ok {
			if len(f) == 0 {
				return hr.lr.errf(at+1, "event", "empty event (known: hit, lead_break, sensor_test)")
			}
			return hr.lr.errf(at+1, "event", "unknown event %q (known: hit, lead_break, sensor_test)", f)
		}
	}
	ch := whole[slotChannel]
	if ch > 1e6 {
		return bad(1, "channel must be a whole number 0..1000000, got %d", ch)
	}
	if vals[2] < 0 || vals[2] > hr.lim.MaxAmplitudeDB {
		return bad(2, "impossible amplitude %v dB_AE (0..%v)", vals[2], hr.lim.MaxAmplitudeDB)
	}
	if vals[3] < 0 {
		return bad(3, "energy cannot be negative (%v)", vals[3])
	}
	if whole[slotCounts] > 1e12 {
		return bad(4, "counts must be a whole number 0..10^12, got %d", whole[slotCounts])
	}
	if vals[5] < 0 {
		return bad(5, "duration cannot be negative (%v µs)", vals[5])
	}
	if vals[6] < 0 || vals[6] > vals[5] {
		return bad(6, "rise time %v µs must lie between 0 and the duration %v µs", vals[6], vals[5])
	}
	hr.prevT = t
	*h = Hit{TimeNS: t, Channel: int(ch), AmplitudeDB: vals[2], Energy: vals[3], Counts: whole[slotCounts], DurationUS: vals[5], RiseUS: vals[6], Event: ev}
	hr.n++
	return nil
}

// Line is the current line number (for errors found by the caller).
func (hr *HitReader) Line() int { return hr.lr.line }

// Errorf makes an error at the current line of the hits file, in the
// column named column ("time" also finds a t_s column;
// "event" finds the event column when there is one).
func (hr *HitReader) Errorf(column string, format string, a ...any) error {
	col := 0
	switch column {
	case "time", "t_s":
		col = hr.idx[0] + 1
	case "event":
		col = hr.idx[slotEvent] + 1
	default:
		for k, n := range hitColumns {
			if n == column {
				col = hr.idx[k+1] + 1
			}
		}
	}
	return hr.lr.errf(col, column, format, a...)
}

// Errorf makes an error at the current line of the samples file.
func (sr *SampleReader) Errorf(col int, format string, a ...any) error {
	name := ""
	if col > 0 && col <= len(sr.h.Columns) {
		name = sr.h.Columns[col-1].Name
	}
	return sr.lr.errf(col, name, format, a...)
}

// File is the name the reader reports in errors.
func (sr *SampleReader) File() string { return sr.lr.file }
