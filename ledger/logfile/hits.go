package logfile

import (
	"io"
	"math"
	"strings"
	"time"

	"hulltally/ledger/blocks"
)

// Hit is one acoustic-emission hit.
type Hit struct {
	TimeNS      int64
	Channel     int
	AmplitudeDB float64
	Energy      float64
	Counts      int64
	DurationUS  float64
	RiseUS      float64
}

var hitColumns = []string{"channel", "amplitude_db", "energy", "counts", "duration_us", "rise_us"}

// HitReader streams an acoustic-emission hits file:
// time (or t_s), channel, amplitude_db, energy, counts, duration_us, rise_us.
type HitReader struct {
	lr      *lineReader
	idx     [7]int // file column of time, channel, amplitude_db, ...
	rel     bool
	startNS int64
	fields  [][]byte
	prevT   int64
	n       int
	lim     Limits
}

// NewHitReader reads and checks the header of a hits file. start is the
// time of t_s = 0 (needed only for t_s files).
func NewHitReader(r io.Reader, file string, start *time.Time) (*HitReader, error) {
	lr := newLineReader(r, file)
	line, err := lr.next()
	if err == io.EOF {
		return nil, &Error{File: file, Msg: "empty file: expected a header line (time,channel,amplitude_db,energy,counts,duration_us,rise_us)"}
	}
	if err != nil {
		return nil, err
	}
	hr := &HitReader{lr: lr, lim: DefaultLimits}
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
		default:
			for k, n := range hitColumns {
				if n == name {
					slot = k + 1
				}
			}
		}
		if slot < 0 {
			return nil, lr.errf(i+1, name, "unknown column in a hits file (known: time or t_s, %s)", strings.Join(hitColumns, ", "))
		}
		if hr.idx[slot] >= 0 {
			return nil, lr.errf(i+1, name, "column repeated or second time column")
		}
		hr.idx[slot] = i
	}
	for slot, at := range hr.idx {
		if at < 0 {
			name := "time (or t_s)"
			if slot > 0 {
				name = hitColumns[slot-1]
			}
			return nil, lr.errf(0, "", "missing column %s", name)
		}
	}
	if hr.rel {
		if start == nil {
			return nil, lr.errf(hr.idx[0]+1, "t_s", "hit times are relative (t_s): give the dive's start time (--start)")
		}
		hr.startNS = start.UnixNano()
	}
	hr.fields = fields
	return hr, nil
}

// Count is the number of hits read so far.
func (hr *HitReader) Count() int { return hr.n }

// Next reads the next hit into h; io.EOF at the end.
func (hr *HitReader) Next(h *Hit) error {
	line, err := hr.lr.next()
	if err != nil {
		return err
	}
	hr.fields = splitFields(hr.fields, line)
	if len(hr.fields) != 7 {
		return hr.lr.errf(0, "", "%d fields, the header has 7", len(hr.fields))
	}
	num := func(slot int) (float64, error) {
		at := hr.idx[slot]
		f := hr.fields[at]
		if m, s, ok := blocks.ParseDecimal(f); ok {
			return blocks.DecimalValue(m, s), nil
		}
		v, err := parseFloat(f)
		if err != nil {
			return 0, hr.lr.errf(at+1, hitColumns[slot-1], "%v", err)
		}
		return v, nil
	}
	// time
	at := hr.idx[0]
	if hr.rel {
		sr := SampleReader{lr: hr.lr, h: Header{Columns: []Column{{Name: "t_s", Kind: KindTRel}}}, startNS: hr.startNS}
		h.TimeNS, err = sr.parseTime(hr.fields[at], 0)
		if e, ok := err.(*Error); ok {
			e.Column = at + 1
		}
	} else {
		sr := SampleReader{lr: hr.lr, h: Header{Columns: []Column{{Name: "time", Kind: KindTime}}}}
		h.TimeNS, err = sr.parseTime(hr.fields[at], 0)
		if e, ok := err.(*Error); ok {
			e.Column = at + 1
		}
	}
	if err != nil {
		return err
	}
	if hr.n > 0 && h.TimeNS < hr.prevT {
		return hr.lr.errf(at+1, "time", "hit time goes backwards (%s after %s)", fmtNS(h.TimeNS), fmtNS(hr.prevT))
	}
	hr.prevT = h.TimeNS
	vals := [7]float64{}
	for slot := 1; slot < 7; slot++ {
		if vals[slot], err = num(slot); err != nil {
			return err
		}
	}
	bad := func(slot int, msg string, a ...any) error {
		return hr.lr.errf(hr.idx[slot]+1, hitColumns[slot-1], msg, a...)
	}
	ch := vals[1]
	if ch != math.Trunc(ch) || ch < 0 || ch > 1e6 {
		return bad(1, "channel must be a whole number 0..1000000, got %v", ch)
	}
	if vals[2] < 0 || vals[2] > hr.lim.MaxAmplitudeDB {
		return bad(2, "impossible amplitude %v dB_AE (0..%v)", vals[2], hr.lim.MaxAmplitudeDB)
	}
	if vals[3] < 0 {
		return bad(3, "energy cannot be negative (%v)", vals[3])
	}
	if vals[4] != math.Trunc(vals[4]) || vals[4] < 0 || vals[4] > 1e12 {
		return bad(4, "counts must be a whole number ≥ 0, got %v", vals[4])
	}
	if vals[5] < 0 {
		return bad(5, "duration cannot be negative (%v µs)", vals[5])
	}
	if vals[6] < 0 || vals[6] > vals[5] {
		return bad(6, "rise time %v µs must lie between 0 and the duration %v µs", vals[6], vals[5])
	}
	h.Channel, h.AmplitudeDB, h.Energy, h.Counts, h.DurationUS, h.RiseUS = int(ch), vals[2], vals[3], int64(vals[4]), vals[5], vals[6]
	hr.n++
	return nil
}

// Line is the current line number (for errors found by the caller).
func (hr *HitReader) Line() int { return hr.lr.line }

// Errorf makes an error at the current line of the hits file.
func (hr *HitReader) Errorf(column string, format string, a ...any) error {
	col := 0
	if column == "time" {
		col = hr.idx[0] + 1
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
