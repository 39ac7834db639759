// Package logfile parses hulltally's data-logger files as streams: dive
// samples (time, one load column, strain gauges, temperature) and
// acoustic-emission hits. Units come from the column names. Every error
// names the file, the line and the column; nothing is returned for a file
// that fails anywhere, because the caller stores a dive only when the whole
// file parsed.
package logfile

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"
	"unsafe"

	"hulltally/ledger/blocks"
)

// Error is a problem in an input file, with its place.
type Error struct {
	File   string
	Line   int    // 1-based; 0 when the problem is the whole file
	Column int    // 1-based; 0 when the problem is the whole line
	Name   string // column name, when known
	Msg    string
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Column > 0 {
			fmt.Fprintf(&b, ":%d", e.Column)
		}
	}
	b.WriteString(": ")
	if e.Name != "" {
		fmt.Fprintf(&b, "column %q: ", e.Name)
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Kind is what a column holds.
type Kind int

// Column kinds.
const (
	KindTime   Kind = iota // "time", RFC 3339
	KindTRel               // "t_s", seconds from a start given by the caller
	KindLoad               // depth_m or pressure_<unit>
	KindStrain             // strain_<gauge>_ue, microstrain
	KindTemp               // temp_c
)

// Load is the physical quantity of the load column.
type Load int

// Load quantities.
const (
	LoadDepth            Load = iota // metres of seawater, positive down
	LoadPressureGauge                // gauge pressure (above surface)
	LoadPressureAbsolute             // absolute pressure
)

// Column describes one column of a samples file.
type Column struct {
	Name  string
	Kind  Kind
	Load  Load    // for KindLoad
	ToMPa float64 // for pressure columns: MPa per file unit
	Gauge string  // for KindStrain
}

// pressureUnits maps the unit suffix of a pressure column to MPa per unit.
var pressureUnits = map[string]float64{
	"mpa":  1,
	"kpa":  1e-3,
	"bar":  0.1,
	"dbar": 0.01,
	"psi":  0.006894757293168, // 1 psi = 6894.757293168 Pa (definition)
}

func knownPressureUnits() string { return "mpa, kpa, bar, dbar, psi" }

// Header is the parsed header of a samples file.
type Header struct {
	Columns []Column
	Time    int // index of the time column
	Load    int // index of the load column
	Gauges  []string
}

// Limits are the bounds outside which a value is impossible (not merely
// unusual): such a file is refused.
type Limits struct {
	MinDepthM, MaxDepthM float64
	MaxPressureMPa       float64
	MaxAbsStrainUE       float64
	MinTempC, MaxTempC   float64
	MaxAmplitudeDB       float64
}

// DefaultLimits: deeper than any ocean (about 10 935 m, common practice
// to round to 11 000) with a margin, a gauge pressure beyond that depth, a
// strain of 5 % (beyond the failure strain of any hull laminate or metal
// in the elastic range), temperatures no logger in seawater reads.
var DefaultLimits = Limits{MinDepthM: -10, MaxDepthM: 11500, MaxPressureMPa: 120, MaxAbsStrainUE: 50000, MinTempC: -10, MaxTempC: 80, MaxAmplitudeDB: 140}

const maxLine = 1 << 16

// lineReader reads lines, counting them, skipping comments and blanks.
type lineReader struct {
	r    *bufio.Reader
	file string
	line int
	text bool // checked that the start is text
}

func newLineReader(r io.Reader, file string) *lineReader {
	return &lineReader{r: bufio.NewReaderSize(r, 1<<20), file: file}
}

func (lr *lineReader) errf(col int, name, format string, a ...any) error {
	return &Error{File: lr.file, Line: lr.line, Column: col, Name: name, Msg: fmt.Sprintf(format, a...)}
}

// next returns the next non-comment, non-blank line without its line end,
// or io.EOF.
func (lr *lineReader) next() ([]byte, error) {
	if !lr.text {
		lr.text = true
		head, _ := lr.r.Peek(8192)
		if bytes.IndexByte(head, 0) >= 0 || !utf8.Valid(trimPartialRune(head)) {
			return nil, &Error{File: lr.file, Msg: "not a text file (binary bytes near the start): expected a CSV data-logger file"}
		}
		if bytes.HasPrefix(head, []byte("\xef\xbb\xbf")) {
			_, _ = lr.r.Discard(3)
		}
	}
	for {
		b, err := lr.r.ReadSlice('\n')
		if err == bufio.ErrBufferFull || (err == nil && len(b) > maxLine) {
			lr.line++
			return nil, lr.errf(0, "", "line longer than %d bytes", maxLine)
		}
		if err != nil && err != io.EOF {
			return nil, fmt.Errorf("reading %s: %w", lr.file, err)
		}
		if len(b) == 0 && err == io.EOF {
			return nil, io.EOF
		}
		lr.line++
		b = bytes.TrimRight(b, "\r\n")
		if bytes.IndexByte(b, 0) >= 0 {
			return nil, lr.errf(0, "", "not a text file (NUL byte)")
		}
		t := bytes.TrimSpace(b)
		if len(t) == 0 || t[0] == '#' {
			if err == io.EOF {
				return nil, io.EOF
			}
			continue
		}
		return b, nil
	}
}

func trimPartialRune(b []byte) []byte {
	for i := 0; i < utf8.UTFMax && len(b) > 0; i++ {
		r, size := utf8.DecodeLastRune(b)
		if r != utf8.RuneError || size != 1 {
			break
		}
		b = b[:len(b)-1]
	}
	return b
}

// splitFields splits a line on commas into dst, trimming spaces.
func splitFields(dst [][]byte, line []byte) [][]byte {
	dst = dst[:0]
	for {
		i := bytes.IndexByte(line, ',')
		if i < 0 {
			dst = append(dst, bytes.TrimSpace(line))
			return dst
		}
		dst = append(dst, bytes.TrimSpace(line[:i]))
		line = line[i+1:]
	}
}

// ParseHeader interprets a samples header line.
func parseHeader(fields [][]byte, lr *lineReader) (Header, error) {
	h := Header{Time: -1, Load: -1}
	seen := map[string]int{}
	for i, f := range fields {
		name := strings.ToLower(string(f))
		col := i + 1
		if name == "" {
			return h, lr.errf(col, "", "empty column name")
		}
		if j, dup := seen[name]; dup {
			return h, lr.errf(col, name, "column repeated (also column %d)", j)
		}
		seen[name] = col
		c := Column{Name: name}
		switch {
		case name == "time":
			c.Kind = KindTime
		case name == "t_s":
			c.Kind = KindTRel
		case name == "depth_m":
			c.Kind, c.Load = KindLoad, LoadDepth
		case strings.HasPrefix(name, "depth_"):
			return h, lr.errf(col, name, "unknown depth unit %q (known: m)", strings.TrimPrefix(name, "depth_"))
		case strings.HasPrefix(name, "pressure_abs_"):
			u := strings.TrimPrefix(name, "pressure_abs_")
			f, ok := pressureUnits[u]
			if !ok {
				return h, lr.errf(col, name, "unknown pressure unit %q (known: %s)", u, knownPressureUnits())
			}
			c.Kind, c.Load, c.ToMPa = KindLoad, LoadPressureAbsolute, f
		case strings.HasPrefix(name, "pressure_"):
			u := strings.TrimPrefix(name, "pressure_")
			f, ok := pressureUnits[u]
			if !ok {
				return h, lr.errf(col, name, "unknown pressure unit %q (known: %s)", u, knownPressureUnits())
			}
			c.Kind, c.Load, c.ToMPa = KindLoad, LoadPressureGauge, f
		case strings.HasPrefix(name, "strain_"):
			rest := strings.TrimPrefix(name, "strain_")
			k := strings.LastIndexByte(rest, '_')
			if k <= 0 {
				return h, lr.errf(col, name, "a strain column is named strain_<gauge>_ue")
			}
			if unit := rest[k+1:]; unit != "ue" {
				return h, lr.errf(col, name, "unknown strain unit %q (known: ue, microstrain)", unit)
			}
			c.Kind, c.Gauge = KindStrain, rest[:k]
			h.Gauges = append(h.Gauges, c.Gauge)
		case name == "temp_c":
			c.Kind = KindTemp
		case strings.HasPrefix(name, "temp_"):
			return h, lr.errf(col, name, "unknown temperature unit %q (known: c)", strings.TrimPrefix(name, "temp_"))
		default:
			return h, lr.errf(col, name, "unknown column (known: time or t_s; depth_m or pressure_<unit> or pressure_abs_<unit>; strain_<gauge>_ue; temp_c)")
		}
		if c.Kind == KindTime || c.Kind == KindTRel {
			if h.Time >= 0 {
				return h, lr.errf(col, name, "a second time column (column %d is one already)", h.Time+1)
			}
			h.Time = i
		}
		if c.Kind == KindLoad {
			if h.Load >= 0 {
				return h, lr.errf(col, name, "a second load column (column %d is one already): give one of depth_m or pressure_<unit>", h.Load+1)
			}
			h.Load = i
		}
		h.Columns = append(h.Columns, c)
	}
	if h.Time < 0 {
		return h, lr.errf(0, "", "missing time column: add \"time\" (RFC 3339) or \"t_s\" (seconds from the start)")
	}
	if h.Load < 0 {
		return h, lr.errf(0, "", "missing load column: add depth_m or pressure_<unit> (units: %s)", knownPressureUnits())
	}
	return h, nil
}

// SampleOptions configure a samples reader.
type SampleOptions struct {
	// Start is the time of t_s = 0; required for files with a t_s column.
	Start *time.Time
	// Limits; zero value means DefaultLimits.
	Limits *Limits
	// BlockSamples is the number of rows per block (default 8192).
	BlockSamples int
	// MinTime is the earliest accepted time stamp; the zero value means
	// 1990-01-01T00:00:00Z (DefaultMinTimeUnix). An earlier stamp is
	// refused with its line and column. To accept older records give an
	// earlier time explicitly; before 1677-09-21 only what int64
	// nanoseconds hold is accepted.
	MinTime time.Time
	// MaxTime is the latest accepted time stamp: the caller passes the
	// present plus a clock tolerance (DefaultClockTolerance). The zero
	// value sets no upper limit beyond what int64 nanoseconds hold
	// (2262-04-11); a time beyond that is refused, never wrapped.
	MaxTime time.Time
}

// SampleReader streams a samples file block by block.
type SampleReader struct {
	lr    *lineReader
	h     Header
	opt   SampleOptions
	p     rowParser
	prevT int64
	rows  int64
	done  bool
	// streaming: Stream has taken the reader over.
	streaming bool
}

// rowParser parses data lines into blocks; it holds no state between
// rows (the order of times across rows is the caller's to check), so each
// goroutine of a parallel parse has its own copy.
type rowParser struct {
	h      *Header
	lim    Limits
	start  time.Time // t_s = 0, for t_s files
	win    window
	file   string
	fields [][]byte
}

func (p *rowParser) errf(line, col int, name, format string, a ...any) error {
	return &Error{File: p.file, Line: line, Column: col, Name: name, Msg: fmt.Sprintf(format, a...)}
}

// row parses data line number lineNo into b, fields in column order. When
// have is true the row's time must come after prevT (checked where the
// time column is reached, as a reader going left to right would). It
// returns the row's time and whether the time was parsed (true also when
// an error came later in the row).
func (p *rowParser) row(b *blocks.Block, line []byte, lineNo int, have bool, prevT int64) (int64, bool, error) {
	p.fields = splitFields(p.fields, line)
	ncol := len(p.h.Columns)
	if len(p.fields) != ncol {
		return 0, false, p.errf(lineNo, 0, "", "%d fields, the header has %d", len(p.fields), ncol)
	}
	var t int64
	parsed := false
	for i, f := range p.fields {
		c := &p.h.Columns[i]
		if i == p.h.Time {
			ns, msg := parseTimeField(f, c.Kind == KindTRel, p.start, &p.win)
			if msg != "" {
				return 0, false, p.errf(lineNo, i+1, c.Name, "%s", msg)
			}
			t, parsed = ns, true
			if have {
				if err := p.order(lineNo, t, prevT); err != nil {
					return t, true, err
				}
			}
			b.TimeNS = append(b.TimeNS, t)
			continue
		}
		col := &b.Cols[i]
		v, err := p.number(f, lineNo, i, col)
		if err != nil {
			return t, parsed, err
		}
		if msg := p.check(c, v); msg != "" {
			return t, parsed, p.errf(lineNo, i+1, c.Name, "%s", msg)
		}
	}
	return t, true, nil
}

// order checks that time t of line lineNo comes after the previous row's.
func (p *rowParser) order(lineNo int, t, prevT int64) error {
	c := &p.h.Columns[p.h.Time]
	if t < prevT {
		return p.errf(lineNo, p.h.Time+1, c.Name, "time goes backwards (%s after %s)", fmtNS(t), fmtNS(prevT))
	}
	if t == prevT {
		return p.errf(lineNo, p.h.Time+1, c.Name, "duplicate time stamp %s", fmtNS(t))
	}
	return nil
}

// NewSampleReader reads and checks the header.
func NewSampleReader(r io.Reader, file string, opt SampleOptions) (*SampleReader, error) {
	lr := newLineReader(r, file)
	line, err := lr.next()
	if err == io.EOF {
		return nil, &Error{File: file, Msg: "empty file: expected a header line and samples"}
	}
	if err != nil {
		return nil, err
	}
	sr := &SampleReader{lr: lr, opt: opt}
	sr.p = rowParser{lim: DefaultLimits, win: newWindow(opt.MinTime, opt.MaxTime), file: file}
	if opt.Limits != nil {
		sr.p.lim = *opt.Limits
	}
	if sr.opt.BlockSamples <= 0 {
		sr.opt.BlockSamples = 8192
	}
	sr.h, err = parseHeader(splitFields(nil, line), lr)
	if err != nil {
		return nil, err
	}
	sr.p.h = &sr.h
	if sr.h.Columns[sr.h.Time].Kind == KindTRel {
		if opt.Start == nil {
			return nil, &Error{File: file, Line: lr.line, Column: sr.h.Time + 1, Name: "t_s", Msg: "times are relative (t_s): give the dive's start time (--start, RFC 3339)"}
		}
		sr.p.start = *opt.Start
		if msg := sr.p.win.checkStart(sr.p.start); msg != "" {
			return nil, &Error{File: file, Line: lr.line, Column: sr.h.Time + 1, Name: "t_s", Msg: msg + " (--start)"}
		}
	}
	return sr, nil
}

// Header returns the file's columns.
func (sr *SampleReader) Header() Header { return sr.h }

// Rows is the number of samples read so far.
func (sr *SampleReader) Rows() int64 { return sr.rows }

// NewBlock makes a block sized for this file.
func (sr *SampleReader) NewBlock() *blocks.Block {
	return blocks.NewBlock(len(sr.h.Columns), sr.opt.BlockSamples)
}

// errHeaderOnly is the error of a file with a header and no samples.
func (sr *SampleReader) errHeaderOnly() error {
	return &Error{File: sr.lr.file, Msg: "header only: the file has no samples"}
}

// ReadBlock resets b and fills it with up to BlockSamples rows. It returns
// io.EOF (with b empty) when the file is exhausted; a file with a header
// and no samples is an error. It must not be called once Stream has been.
func (sr *SampleReader) ReadBlock(b *blocks.Block) error {
	b.Reset()
	if sr.streaming {
		return errors.New("logfile: ReadBlock after Stream")
	}
	if sr.done {
		return io.EOF
	}
	for b.Len() < sr.opt.BlockSamples {
		line, err := sr.lr.next()
		if err == io.EOF {
			sr.done = true
			if sr.rows == 0 {
				return sr.errHeaderOnly()
			}
			if b.Len() == 0 {
				return io.EOF
			}
			return nil
		}
		if err != nil {
			return err
		}
		t, _, err := sr.p.row(b, line, sr.lr.line, sr.rows > 0 || b.Len() > 0, sr.prevT)
		if err != nil {
			return err
		}
		sr.prevT = t
		sr.rows++
	}
	return nil
}

func (p *rowParser) check(c *Column, v float64) string {
	switch c.Kind {
	case KindLoad:
		switch c.Load {
		case LoadDepth:
			if v < p.lim.MinDepthM || v > p.lim.MaxDepthM {
				return fmt.Sprintf("impossible depth %v m (outside %v..%v m)", v, p.lim.MinDepthM, p.lim.MaxDepthM)
			}
		case LoadPressureGauge:
			mpa := v * c.ToMPa
			if mpa < -0.101325 || mpa > p.lim.MaxPressureMPa {
				return fmt.Sprintf("impossible gauge pressure %v (%.6g MPa; gauge pressure lies between -0.101325 MPa and %v MPa)", v, mpa, p.lim.MaxPressureMPa)
			}
		case LoadPressureAbsolute:
			mpa := v * c.ToMPa
			if mpa < 0 || mpa > p.lim.MaxPressureMPa+0.101325 {
				return fmt.Sprintf("impossible absolute pressure %v (%.6g MPa)", v, mpa)
			}
		}
	case KindStrain:
		if math.Abs(v) > p.lim.MaxAbsStrainUE {
			return fmt.Sprintf("impossible strain %v µε (beyond ±%v µε)", v, p.lim.MaxAbsStrainUE)
		}
	case KindTemp:
		if v < p.lim.MinTempC || v > p.lim.MaxTempC {
			return fmt.Sprintf("impossible temperature %v °C (outside %v..%v °C)", v, p.lim.MinTempC, p.lim.MaxTempC)
		}
	}
	return ""
}

func (p *rowParser) number(f []byte, lineNo, i int, col *blocks.Column) (float64, error) {
	if m, s, ok := blocks.ParseDecimal(f); ok {
		col.AppendDecimal(m, s)
		return col.Value[len(col.Value)-1], nil
	}
	v, err := parseFloat(f)
	if err != nil {
		return 0, p.errf(lineNo, i+1, p.h.Columns[i].Name, "%v", err)
	}
	col.AppendFloat(v)
	return v, nil
}

// parseFloat parses a number that is not a plain decimal of at most 18
// digits (an exponent, a long mantissa). Only the syntax blocks.PlainNumber
// accepts is passed to strconv.ParseFloat, which would also read digit
// separators, hexadecimal, Inf and NaN.
func parseFloat(f []byte) (float64, error) {
	if len(f) == 0 {
		return 0, errors.New("empty value")
	}
	s := unsafe.String(&f[0], len(f))
	if !blocks.PlainNumber(f) {
		switch strings.ToLower(strings.TrimLeft(s, "+-")) {
		case "nan", "inf", "infinity":
			return 0, fmt.Errorf("%q: NaN and Inf are not readings", s)
		}
		return 0, fmt.Errorf("not a number: %q (a number is written with digits, an optional sign, point and exponent, e.g. -12.5 or 1.25e3)", s)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && ne.Err == strconv.ErrRange {
			return 0, fmt.Errorf("number %q out of range", s)
		}
		return 0, fmt.Errorf("not a number: %q", s)
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q: NaN and Inf are not readings", s)
	}
	return v, nil
}

// parseTimeField parses a time field: RFC 3339, or for rel seconds from
// start as a plain decimal. It returns nanoseconds since 1970, or a
// message; no time outside win, and no time int64 nanoseconds cannot
// hold, is returned.
func parseTimeField(f []byte, rel bool, start time.Time, win *window) (int64, string) {
	if len(f) == 0 {
		return 0, "empty time"
	}
	var t time.Time
	if rel {
		m, s, ok := blocks.ParseDecimal(f)
		if !ok {
			if _, err := parseFloat(f); err != nil {
				return 0, err.Error()
			}
			return 0, fmt.Sprintf("seconds must be a plain decimal number (no exponent, at most 18 digits), got %q", f)
		}
		if s > 9 {
			return 0, fmt.Sprintf("time %q is finer than 1 ns", f)
		}
		if m < 0 {
			return 0, fmt.Sprintf("negative time %q: t_s counts from the start", f)
		}
		t = relTime(start, m, s)
	} else {
		var msg string
		if t, msg = parseRFC3339(f); msg != "" {
			return 0, msg
		}
	}
	return win.check(t)
}

func fmtNS(ns int64) string { return time.Unix(0, ns).UTC().Format(time.RFC3339Nano) }

// HeaderOf interprets column names as a samples header (for columns stored
// with a dive).
func HeaderOf(names []string) (Header, error) {
	fields := make([][]byte, len(names))
	for i, n := range names {
		fields[i] = []byte(n)
	}
	lr := &lineReader{file: "(stored columns)", line: 1}
	return parseHeader(fields, lr)
}
