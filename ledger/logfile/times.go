package logfile

import (
	"fmt"
	"math"
	"time"
)

// DefaultMinTimeUnix is the earliest time stamp accepted when the caller
// gives no MinTime: 1990-01-01T00:00:00Z (Unix seconds). No logger record
// of a composite pressure hull predates it (operator's choice); an earlier
// stamp is a logger whose clock was never set.
const DefaultMinTimeUnix int64 = 631152000

// DefaultClockTolerance is how far past the present a time stamp may lie
// when the caller sets MaxTime to now plus a tolerance (the ledger's
// default; loggers' clocks drift).
const DefaultClockTolerance = 10 * time.Minute

// reprMin and reprMax are the times an int64 count of nanoseconds since
// 1970 can hold: 1677-09-21T00:12:43.145224192Z to
// 2262-04-11T23:47:16.854775807Z. Outside them a time would wrap into
// another century, so it is refused whatever the window.
func reprMin() time.Time { return time.Unix(0, math.MinInt64).UTC() }
func reprMax() time.Time { return time.Unix(0, math.MaxInt64).UTC() }

// window is the span of accepted time stamps.
type window struct {
	min, max time.Time
	hasMax   bool
}

func newWindow(minT, maxT time.Time) window {
	w := window{min: minT, max: maxT, hasMax: !maxT.IsZero()}
	if minT.IsZero() {
		w.min = time.Unix(DefaultMinTimeUnix, 0).UTC()
	}
	return w
}

// check returns t in nanoseconds since 1970, or a message naming the limit
// t lies beyond.
func (w *window) check(t time.Time) (int64, string) {
	switch {
	case t.Before(w.min):
		return 0, fmt.Sprintf("time %s is before the earliest accepted time %s (MinTime: no logger record predates it; a logger clock that was never set?)", fmtTime(t), fmtTime(w.min))
	case w.hasMax && t.After(w.max):
		return 0, fmt.Sprintf("time %s is after the latest accepted time %s (MaxTime: the present plus the clock tolerance)", fmtTime(t), fmtTime(w.max))
	case t.Before(reprMin()):
		return 0, fmt.Sprintf("time %s is before the earliest time hulltally can hold, %s", fmtTime(t), fmtTime(reprMin()))
	case t.After(reprMax()):
		return 0, fmt.Sprintf("time %s is after the latest time hulltally can hold, %s", fmtTime(t), fmtTime(reprMax()))
	}
	return t.UnixNano(), ""
}

func fmtTime(t time.Time) string { return t.UTC().Format(time.RFC3339Nano) }

// checkStart checks that a start time (for t_s files) is itself inside
// the window: t_s counts forward from it, so a start outside cannot give
// times inside without the window being wrong.
func (w *window) checkStart(start time.Time) string {
	if _, msg := w.check(start); msg != "" {
		return "start " + msg
	}
	return ""
}

// relTime is start + mant×10^-scale seconds (scale ≤ 9, mant ≥ 0), without
// overflow: it is computed on time.Time, which holds far more than int64
// nanoseconds.
func relTime(start time.Time, mant int64, scale uint8) time.Time {
	p := int64(1)
	for k := uint8(0); k < scale; k++ {
		p *= 10
	}
	secs, frac := mant/p, mant%p
	for k := scale; k < 9; k++ {
		frac *= 10
	}
	// |secs| ≤ 10^18 and start's Unix seconds lie within ±3·10^11 for
	// years 0000–9999: no overflow.
	return time.Unix(start.Unix()+secs, int64(start.Nanosecond())+frac).UTC()
}

// parseRFC3339 parses a time stamp as RFC 3339 section 5.6 writes it:
//
//	YYYY-MM-DD T HH:MM:SS [.fraction] (Z | +HH:MM | -HH:MM)
//
// with T and Z also in lower case (RFC 3339 section 5.6, NOTE: "T" and "Z"
// may alternatively be lower case). It is stricter than time.Parse: the
// fraction is written with a point only (time.Parse also takes a comma),
// with 1 to 9 digits (finer than a nanosecond is refused, not rounded);
// the offset's hours are 00–23 and minutes 00–59; the date must exist
// (2026-02-30 is refused). A leap second (second 60) is refused: the
// ledger counts time without leap seconds (as Unix time does), so 23:59:60
// has no place on its axis, and mapping it onto a neighbouring second
// could make a duplicate or reversed stamp look valid. The offset -00:00
// (RFC 3339 section 4.3: UTC, local offset unknown) is read as UTC.
func parseRFC3339(s []byte) (time.Time, string) {
	const example = "e.g. 2026-05-01T08:30:00Z or 2026-05-01T10:30:00.25+02:00"
	bad := func(what string) (time.Time, string) {
		return time.Time{}, fmt.Sprintf("not an RFC 3339 time (%s): %s: %q", example, what, s)
	}
	if len(s) < 20 {
		return bad("too short")
	}
	num := func(at, n int) (int, bool) {
		v := 0
		for _, c := range s[at : at+n] {
			if c < '0' || c > '9' {
				return 0, false
			}
			v = v*10 + int(c-'0')
		}
		return v, true
	}
	year, ok1 := num(0, 4)
	month, ok2 := num(5, 2)
	day, ok3 := num(8, 2)
	if !ok1 || !ok2 || !ok3 || s[4] != '-' || s[7] != '-' {
		return bad("the date is written YYYY-MM-DD")
	}
	if s[10] != 'T' && s[10] != 't' {
		return bad("date and time are separated by T")
	}
	hour, ok1 := num(11, 2)
	minute, ok2 := num(14, 2)
	sec, ok3 := num(17, 2)
	if !ok1 || !ok2 || !ok3 || s[13] != ':' || s[16] != ':' {
		return bad("the time is written HH:MM:SS")
	}
	if month < 1 || month > 12 {
		return bad(fmt.Sprintf("month %02d", month))
	}
	if day < 1 || day > daysIn(year, month) {
		return bad(fmt.Sprintf("day %02d does not exist in %04d-%02d", day, year, month))
	}
	if hour > 23 {
		return bad(fmt.Sprintf("hour %02d (00 to 23)", hour))
	}
	if minute > 59 {
		return bad(fmt.Sprintf("minute %02d (00 to 59)", minute))
	}
	if sec == 60 {
		return time.Time{}, fmt.Sprintf("leap second (second 60) in %q: time stamps are counted without leap seconds; refused rather than moved onto a neighbouring second", s)
	}
	if sec > 59 {
		return bad(fmt.Sprintf("second %02d (00 to 59)", sec))
	}
	i := 19
	nsec := 0
	if s[i] == '.' {
		i++
		digits := 0
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			if digits == 9 {
				return time.Time{}, fmt.Sprintf("time %q is finer than 1 ns (at most 9 decimals of a second)", s)
			}
			nsec = nsec*10 + int(s[i]-'0')
			digits++
			i++
		}
		if digits == 0 {
			return bad("a decimal point without digits")
		}
		for k := digits; k < 9; k++ {
			nsec *= 10
		}
	}
	if i >= len(s) {
		return bad("missing the offset (Z or ±HH:MM)")
	}
	offset := 0
	switch c := s[i]; c {
	case 'Z', 'z':
		i++
	case '+', '-':
		if len(s)-i != 6 || s[i+3] != ':' {
			return bad("the offset is written Z or ±HH:MM")
		}
		oh, ok1 := num(i+1, 2)
		om, ok2 := num(i+4, 2)
		if !ok1 || !ok2 {
			return bad("the offset is written Z or ±HH:MM")
		}
		if oh > 23 || om > 59 {
			return bad(fmt.Sprintf("offset %s (hours 00 to 23, minutes 00 to 59)", s[i:]))
		}
		offset = (oh*60 + om) * 60
		if c == '-' {
			offset = -offset
		}
		i += 6
	default:
		return bad("the offset is written Z or ±HH:MM")
	}
	if i != len(s) {
		return bad("text after the offset")
	}
	t := time.Date(year, time.Month(month), day, hour, minute, sec, nsec, time.UTC)
	return t.Add(-time.Duration(offset) * time.Second), ""
}

func daysIn(year, month int) int {
	switch month {
	case 2:
		if year%4 == 0 && (year%100 != 0 || year%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}
