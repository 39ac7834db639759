package logfile

import (
	"bytes"
	"errors"
	"io"
	"regexp"
	"strings"
	"testing"
	"time"

	"hulltally/ledger/blocks"
)

// readTimes reads a samples file and returns its time stamps.
func readTimes(src string, opt SampleOptions) ([]int64, error) {
	sr, err := NewSampleReader(strings.NewReader(src), "f.csv", opt)
	if err != nil {
		return nil, err
	}
	b := sr.NewBlock()
	var ts []int64
	for {
		err := sr.ReadBlock(b)
		if err == io.EOF {
			return ts, nil
		}
		if err != nil {
			return nil, err
		}
		ts = append(ts, b.TimeNS...)
	}
}

// wantErr checks that err is an *Error at line:col whose message holds msg.
func wantErr(t *testing.T, err error, line, col int, msg string) {
	t.Helper()
	var e *Error
	if !errors.As(err, &e) {
		t.Fatalf("want an error at %d:%d containing %q, got %v", line, col, msg, err)
	}
	if e.Line != line || e.Column != col || !strings.Contains(e.Msg, msg) {
		t.Fatalf("want an error at %d:%d containing %q, got %d:%d %q", line, col, msg, e.Line, e.Column, e.Msg)
	}
}

func utc(s string) time.Time {
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		panic(err)
	}
	return t
}

func ptr(t time.Time) *time.Time { return &t }

// A time outside the window would put a dive into another century or
// before the hull existed; it must be refused, never wrapped.
func TestTimeWindow(t *testing.T) {
	maxT := utc("2026-05-01T00:10:00Z")
	tests := []struct {
		name    string
		src     string
		opt     SampleOptions
		want    []int64 // nil: refused
		line    int
		col     int
		msg     string
		wantErr bool
	}{
		{name: "before 1990 refused", src: "time,depth_m\n1989-12-31T23:59:59Z,1\n",
			line: 2, col: 1, msg: "before the earliest accepted time 1990-01-01T00:00:00Z"},
		{name: "1990 itself accepted", src: "time,depth_m\n1990-01-01T00:00:00Z,1\n",
			want: []int64{631152000e9}},
		{name: "offset moves it before 1990", src: "depth_m,time\n1,1990-01-01T00:30:00+01:00\n",
			line: 2, col: 2, msg: "before the earliest accepted time"},
		{name: "1677 would wrap", src: "time,depth_m\n1677-01-01T00:00:00Z,1\n", opt: SampleOptions{MinTime: utc("1600-01-01T00:00:00Z")},
			line: 2, col: 1, msg: "before the earliest time hulltally can hold, 1677-09-21T00:12:43.145224192Z"},
		{name: "2263 would wrap", src: "time,depth_m\n2263-01-01T00:00:00Z,1\n",
			line: 2, col: 1, msg: "after the latest time hulltally can hold, 2262-04-11T23:47:16.854775807Z"},
		{name: "year 9999 would wrap", src: "time,depth_m\n2026-05-01T00:00:00Z,1\n9999-12-31T23:59:59Z,1\n",
			line: 3, col: 1, msg: "after the latest time hulltally can hold"},
		{name: "last representable ns accepted", src: "time,depth_m\n2262-04-11T23:47:16.854775807Z,1\n",
			want: []int64{9223372036854775807}},
		{name: "first ns past it refused", src: "time,depth_m\n2262-04-11T23:47:16.854775808Z,1\n",
			line: 2, col: 1, msg: "latest time hulltally can hold"},
		{name: "offset brings 2262 back in range", src: "time,depth_m\n2262-04-12T01:00:00+02:00,1\n",
			want: []int64{utc("2262-04-11T23:00:00Z").UnixNano()}},
		{name: "after MaxTime refused", src: "time,depth_m\n2026-05-01T00:00:00Z,1\n2026-05-01T00:10:00.000000001Z,1\n", opt: SampleOptions{MaxTime: maxT},
			line: 3, col: 1, msg: "after the latest accepted time 2026-05-01T00:10:00Z"},
		{name: "at MaxTime accepted", src: "time,depth_m\n2026-05-01T00:10:00Z,1\n", opt: SampleOptions{MaxTime: maxT},
			want: []int64{maxT.UnixNano()}},
		{name: "t_s past MaxTime refused", src: "t_s,depth_m\n0,1\n600.5,1\n", opt: SampleOptions{Start: ptr(utc("2026-05-01T00:00:00Z")), MaxTime: maxT},
			line: 3, col: 1, msg: "after the latest accepted time"},
		{name: "t_s overflow refused, not wrapped", src: "t_s,depth_m\n0,1\n86400,1\n", opt: SampleOptions{Start: ptr(utc("2262-04-11T00:00:00Z"))},
			line: 3, col: 1, msg: "after the latest time hulltally can hold"},
		{name: "t_s of 18 digits refused", src: "t_s,depth_m\n999999999999999999,1\n", opt: SampleOptions{Start: ptr(utc("2026-05-01T00:00:00Z"))},
			line: 2, col: 1, msg: "latest time hulltally can hold"},
		{name: "start before the window refused", src: "depth_m,t_s\n1,0\n", opt: SampleOptions{Start: ptr(utc("1980-01-01T00:00:00Z"))},
			line: 1, col: 2, msg: "start time 1980-01-01T00:00:00Z is before the earliest accepted time"},
		{name: "start beyond int64 ns refused", src: "t_s,depth_m\n0,1\n", opt: SampleOptions{Start: ptr(utc("2300-01-01T00:00:00Z"))},
			line: 1, col: 1, msg: "latest time hulltally can hold"},
		// Before 1970 the start is negative in ns; the overflow check must
		// not wrap on it.
		{name: "start before 1970 with an earlier MinTime", src: "t_s,depth_m\n0,1\n1.5,1\n",
			opt:  SampleOptions{Start: ptr(utc("1960-01-01T00:00:00Z")), MinTime: utc("1950-01-01T00:00:00Z")},
			want: []int64{utc("1960-01-01T00:00:00Z").UnixNano(), utc("1960-01-01T00:00:01.5Z").UnixNano()}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := readTimes(tc.src, tc.opt)
			if tc.want == nil {
				wantErr(t, err, tc.line, tc.col, tc.msg)
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(tc.want) {
				t.Fatalf("times %v, want %v", got, tc.want)
			}
			for i := range got {
				if got[i] != tc.want[i] {
					t.Fatalf("times %v, want %v", got, tc.want)
				}
			}
		})
	}
}

func TestHitTimeWindow(t *testing.T) {
	const head = "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n"
	maxT := utc("2026-05-01T00:10:00Z")
	tests := []struct {
		name string
		src  string
		opt  HitOptions
		msg  string // "" accepted
	}{
		{"inside", head + "2026-05-01T00:00:00Z,1,50,1,1,10,1\n", HitOptions{MaxTime: maxT}, ""},
		{"before 1990", head + "1970-01-01T00:00:00Z,1,50,1,1,10,1\n", HitOptions{}, "earliest accepted time 1990-01-01T00:00:00Z"},
		{"after MaxTime", head + "2026-05-01T00:10:01Z,1,50,1,1,10,1\n", HitOptions{MaxTime: maxT}, "latest accepted time 2026-05-01T00:10:00Z"},
		{"would wrap", head + "2300-01-01T00:00:00Z,1,50,1,1,10,1\n", HitOptions{}, "latest time hulltally can hold"},
		{"t_s would wrap", strings.Replace(head, "time", "t_s", 1) + "9000000000,1,50,1,1,10,1\n", HitOptions{Start: ptr(utc("2026-05-01T00:00:00Z"))}, "latest time hulltally can hold"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			hr, err := NewHitReaderOptions(strings.NewReader(tc.src), "h", tc.opt)
			if err != nil {
				t.Fatal(err)
			}
			var h Hit
			err = hr.Next(&h)
			if tc.msg == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			wantErr(t, err, 2, 1, tc.msg)
		})
	}
}

func TestRFC3339(t *testing.T) {
	tests := []struct {
		in   string
		want string // UTC instant, or "" refused
		msg  string
	}{
		{"2026-05-01T08:30:00Z", "2026-05-01T08:30:00Z", ""},
		// RFC 3339 section 5.6 NOTE: T and Z may be lower case.
		{"2026-05-01t08:30:00z", "2026-05-01T08:30:00Z", ""},
		{"2026-05-01T08:30:00.123456789Z", "2026-05-01T08:30:00.123456789Z", ""},
		{"2026-05-01T08:30:00.5+02:00", "2026-05-01T06:30:00.5Z", ""},
		{"2026-05-01T08:30:00-00:00", "2026-05-01T08:30:00Z", ""},
		{"2026-05-01T00:30:00+23:59", "2026-04-30T00:31:00Z", ""},
		{"2026-05-01T23:30:00-23:59", "2026-05-02T23:29:00Z", ""},
		{"2024-02-29T00:00:00Z", "2024-02-29T00:00:00Z", ""},
		{"2000-02-29T00:00:00Z", "2000-02-29T00:00:00Z", ""},
		{"2026-05-01T08:30:00+24:00", "", "offset +24:00"},
		{"2026-05-01T08:30:00+02:60", "", "offset +02:60"},
		{"2026-05-01T08:30:60Z", "", "leap second"},
		{"2016-12-31T23:59:60Z", "", "leap second"},
		{"2026-05-01T08:30:61Z", "", "second 61"},
		{"2026-05-01T08:60:00Z", "", "minute 60"},
		{"2026-05-01T24:00:00Z", "", "hour 24"},
		{"2026-02-29T00:00:00Z", "", "day 29 does not exist"},
		{"2100-02-29T00:00:00Z", "", "day 29 does not exist"},
		{"2026-04-31T00:00:00Z", "", "day 31 does not exist"},
		{"2026-13-01T00:00:00Z", "", "month 13"},
		{"2026-00-01T00:00:00Z", "", "month 00"},
		{"2026-05-00T00:00:00Z", "", "day 00"},
		{"2026-05-01 08:30:00Z", "", "separated by T"},
		{"2026-05-01T08:30:00,5Z", "", "offset is written"}, // time.Parse takes the comma
		{"2026-05-01T08:30:00.Z", "", "point without digits"},
		{"2026-05-01T08:30:00.1234567891Z", "", "finer than 1 ns"},
		{"2026-05-01T08:30:00", "", "too short"},
		{"2026-05-01T08:30:00.5", "", "missing the offset"},
		{"2026-05-01T08:30:00+0200", "", "offset is written"},
		{"2026-05-01T08:30:00+02", "", "offset is written"},
		{"2026-05-01T08:30:00+02:00:00", "", "offset is written"},
		{"2026-05-01T08:30:00ZZ", "", "text after the offset"},
		{"2026-05-01T08:30:00UTC", "", "offset is written"},
		{"2026-5-01T08:30:00Z", "", "too short"}, {"2026-5-01T08:30:00.5Z", "", "YYYY-MM-DD"},
		{"+2026-05-01T08:30:00Z", "", "YYYY-MM-DD"},
		{"2026-05-01T8:30:00.5Z", "", "HH:MM:SS"},
		{"2026-05-01T08:30Z", "", "too short"},
		{"２０２６-05-01T08:30:00Z", "", "YYYY-MM-DD"},
		{"1", "", "too short"},
	}
	for _, tc := range tests {
		got, msg := parseRFC3339([]byte(tc.in))
		if tc.want == "" {
			if msg == "" || !strings.Contains(msg, tc.msg) {
				t.Errorf("%q: got %v, %q; want refused with %q", tc.in, got, msg, tc.msg)
			}
			continue
		}
		if msg != "" || !got.Equal(utc(tc.want)) {
			t.Errorf("%q: got %v, %q; want %s", tc.in, got, msg, tc.want)
		}
	}
	// Through the reader: the place is reported.
	_, err := readTimes("depth_m,time\n1,2026-05-01T08:30:00Z\n2,2026-05-01T08:30:00+24:00\n", SampleOptions{})
	wantErr(t, err, 3, 2, "not an RFC 3339 time")
}

// Numbers are written as loggers write them; anything strconv.ParseFloat
// would take beyond that is refused in every numeric column.
func TestNumberSyntax(t *testing.T) {
	start := utc("2026-05-01T00:00:00Z")
	accepted := []struct {
		in   string
		want float64
	}{
		{"1.5", 1.5}, {"+1.5", 1.5}, {"-0.5", -0.5}, {"1.50", 1.5}, {".5", 0.5}, {"5.", 5},
		{"1e1", 10}, {"1E+1", 10}, {"2.5e-1", 0.25}, {"0012", 12}, {"1.5e0", 1.5}, {"-0", 0},
		{"1234.0123456789012345", 1234.0123456789012345},
	}
	for _, tc := range accepted {
		_, load, err := readAll(t, "t_s,depth_m\n0, "+tc.in+" \n", SampleOptions{Start: &start})
		if err != nil || len(load) != 1 || load[0] != tc.want {
			t.Errorf("%q: %v %v, want %v", tc.in, load, err, tc.want)
		}
	}
	refused := []struct{ in, msg string }{
		{"1_000", "not a number"}, {"0x1p3", "not a number"}, {"0x10", "not a number"},
		{"0b101", "not a number"}, {"0o17", "not a number"},
		{"Inf", "NaN and Inf"}, {"+Inf", "NaN and Inf"}, {"-infinity", "NaN and Inf"}, {"NaN", "NaN and Inf"}, {"nan", "NaN and Inf"},
		{"+.", "not a number"}, {".", "not a number"}, {"-", "not a number"}, {"+", "not a number"},
		{"1e", "not a number"}, {"1e+", "not a number"}, {"e5", "not a number"}, {".e1", "not a number"},
		{"1.2.3", "not a number"}, {"1..2", "not a number"}, {"1 000", "not a number"}, {"--1", "not a number"},
		{"+-1", "not a number"}, {"1e5x", "not a number"}, {"1d3", "not a number"}, {"١", "not a number"},
		{"1e1.5", "not a number"}, {"", "empty value"},
		{"1e400", "out of range"},
	}
	for _, tc := range refused {
		_, _, err := readAll(t, "t_s,depth_m\n0,1\n1,"+tc.in+"\n", SampleOptions{Start: &start})
		t.Run("samples "+tc.in, func(t *testing.T) { wantErr(t, err, 3, 2, tc.msg) })
		// The same in a hits file's energy column (column 4).
		hr, err := NewHitReader(strings.NewReader("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1,50,"+tc.in+",1,10,1\n"), "h", nil)
		if err != nil {
			t.Fatal(err)
		}
		var h Hit
		err = hr.Next(&h)
		t.Run("hits "+tc.in, func(t *testing.T) { wantErr(t, err, 2, 4, tc.msg) })
	}
	// t_s takes plain decimals only.
	for _, in := range []string{"1_0", "0x1p3", "1e1", "Inf", ".", "+."} {
		_, _, err := readAll(t, "t_s,depth_m\n0,1\n"+in+",1\n", SampleOptions{Start: &start})
		wantErr(t, err, 3, 1, "")
	}
}

func TestWholeNumbers(t *testing.T) {
	const head = "time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,"
	tests := []struct {
		channel, counts string
		col             int // 0: accepted
		msg             string
	}{
		{"1", "3", 0, ""},
		{"0", "0", 0, ""},
		{"007", "1000000000000", 0, ""},
		{"1", "3.0", 5, "whole number"},
		{"1", "+3", 5, "whole number"},
		{"1", "-0", 5, "whole number"},
		{"1", "3e0", 5, "whole number"},
		{"1", "1_0", 5, "whole number"},
		{"1", "-1", 5, "whole number"},
		{"1", "1000000000001", 5, "0..10^12"},
		{"1", "", 5, "whole number"},
		{"1.0", "3", 2, "whole number"},
		{"-1", "3", 2, "whole number"},
		{"1000001", "3", 2, "0..1000000"},
		{"0x1", "3", 2, "whole number"},
	}
	for _, tc := range tests {
		hr, err := NewHitReader(strings.NewReader(head+tc.channel+",50,1,"+tc.counts+",10,1\n"), "h", nil)
		if err != nil {
			t.Fatal(err)
		}
		var h Hit
		err = hr.Next(&h)
		if tc.col == 0 {
			if err != nil {
				t.Errorf("%s/%s: %v", tc.channel, tc.counts, err)
			}
			continue
		}
		t.Run(tc.channel+"/"+tc.counts, func(t *testing.T) { wantErr(t, err, 2, tc.col, tc.msg) })
	}
}

func TestEvents(t *testing.T) {
	src := "event,time,channel,amplitude_db,energy,counts,duration_us,rise_us\n" +
		"lead_break,2026-05-01T00:00:00Z,1,98,1000,400,2000,5\n" +
		"sensor_test,2026-05-01T00:00:01Z,2,90,800,300,1500,4\n" +
		"hit,2026-05-01T00:00:02Z,1,50,1.5,3,100,10\n"
	hr, err := NewHitReader(strings.NewReader(src), "h", nil)
	if err != nil {
		t.Fatal(err)
	}
	want := []Hit{
		{TimeNS: utc("2026-05-01T00:00:00Z").UnixNano(), Channel: 1, AmplitudeDB: 98, Energy: 1000, Counts: 400, DurationUS: 2000, RiseUS: 5, Event: EventLeadBreak},
		{TimeNS: utc("2026-05-01T00:00:01Z").UnixNano(), Channel: 2, AmplitudeDB: 90, Energy: 800, Counts: 300, DurationUS: 1500, RiseUS: 4, Event: EventSensorTest},
		{TimeNS: utc("2026-05-01T00:00:02Z").UnixNano(), Channel: 1, AmplitudeDB: 50, Energy: 1.5, Counts: 3, DurationUS: 100, RiseUS: 10, Event: EventHit},
	}
	for i, w := range want {
		var h Hit
		if err := hr.Next(&h); err != nil {
			t.Fatal(err)
		}
		if h != w {
			t.Fatalf("row %d: %+v, want %+v", i, h, w)
		}
	}
	if EventLeadBreak.String() != "lead_break" || EventSensorTest.String() != "sensor_test" || EventHit.String() != "hit" {
		t.Fatal("event names")
	}
	// Without the column every row is a hit (the zero Event).
	hr, err = NewHitReader(strings.NewReader("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1,50,1,1,10,1\n"), "h", nil)
	if err != nil {
		t.Fatal(err)
	}
	h := Hit{Event: EventSensorTest}
	if err := hr.Next(&h); err != nil || h.Event != EventHit {
		t.Fatalf("%+v %v", h, err)
	}
	// Unknown values are refused with line and column: a real hit must not
	// be hidden behind a misspelt check.
	for _, v := range []string{"Hit", "lead-break", "pencil", "sensor test", "", "leadbreak", "0"} {
		src := "time,channel,amplitude_db,energy,counts,duration_us,rise_us,event\n" +
			"2026-05-01T00:00:00Z,1,50,1,1,10,1,hit\n" +
			"2026-05-01T00:00:01Z,1,50,1,1,10,1," + v + "\n"
		hr, err := NewHitReader(strings.NewReader(src), "h", nil)
		if err != nil {
			t.Fatal(err)
		}
		var h Hit
		if err := hr.Next(&h); err != nil {
			t.Fatal(err)
		}
		err = hr.Next(&h)
		wantErr(t, err, 3, 8, "event")
	}
	_, err = NewHitReader(strings.NewReader("time,channel,amplitude_db,energy,counts,duration_us,rise_us,event,event\n"), "h", nil)
	wantErr(t, err, 1, 9, "repeated")
	// A row with an event column but too few fields is ragged.
	hr, _ = NewHitReader(strings.NewReader("time,channel,amplitude_db,energy,counts,duration_us,rise_us,event\n2026-05-01T00:00:00Z,1,50,1,1,10,1\n"), "h", nil)
	wantErr(t, hr.Next(&h), 2, 0, "7 fields, the header has 8")
}

// fingerprint reads a samples file and fingerprints it both from the
// blocks as read and from the blocks encoded and decoded.
func fingerprint(t *testing.T, src string, opt SampleOptions) []byte {
	t.Helper()
	sr, err := NewSampleReader(strings.NewReader(src), "f", opt)
	if err != nil {
		t.Fatal(err)
	}
	fp, fd := NewFingerprint(sr.Header()), NewFingerprint(sr.Header())
	b := sr.NewBlock()
	for {
		err := sr.ReadBlock(b)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		fp.AddBlock(b)
		d, err := blocks.Decode(blocks.Encode(nil, b))
		if err != nil {
			t.Fatal(err)
		}
		if err := fd.AddDecoded(d); err != nil {
			t.Fatal(err)
		}
	}
	if !bytes.Equal(fp.Sum(), fd.Sum()) || fp.Rows() != sr.Rows() || fd.Rows() != sr.Rows() {
		t.Fatalf("fingerprint of read blocks and of stored blocks differ (%d, %d rows)", fp.Rows(), fd.Rows())
	}
	return fp.Sum()
}

func TestFingerprint(t *testing.T) {
	start := utc("2026-05-01T08:00:00Z")
	base := "time,depth_m,strain_hoop1_ue,temp_c\n" +
		"2026-05-01T08:00:00Z,0.0,0.0,12.0\n" +
		"2026-05-01T08:00:02Z,1.6,-2.1,12.0\n" +
		"2026-05-01T08:00:04Z,3.25,-4.5,11.9\n"
	want := fingerprint(t, base, SampleOptions{})
	if len(want) != 32 {
		t.Fatalf("fingerprint of %d bytes", len(want))
	}
	same := map[string]struct {
		src string
		opt SampleOptions
	}{
		"comments and blanks": {"# logger 7\n\n" + strings.Replace(base, "\n2026-05-01T08:00:02Z", "\n# mid-dive\n\n2026-05-01T08:00:02Z", 1), SampleOptions{}},
		"CRLF and BOM":        {"\xef\xbb\xbf" + strings.ReplaceAll(base, "\n", "\r\n"), SampleOptions{}},
		"columns reordered": {"temp_c,strain_hoop1_ue,time,depth_m\n" +
			"12.0,0.0,2026-05-01T08:00:00Z,0.0\n" +
			"12.0,-2.1,2026-05-01T08:00:02Z,1.6\n" +
			"11.9,-4.5,2026-05-01T08:00:04Z,3.25\n", SampleOptions{}},
		"numbers written otherwise": {"TIME , Depth_M,strain_hoop1_ue,temp_c\n" +
			"2026-05-01t08:00:00z, 0,-0,12\n" +
			"2026-05-01T10:00:02+02:00,1.60,-2.10e0,+12.00\n" +
			"2026-05-01T08:00:04.000Z,325e-2,-4.5,11.9\n", SampleOptions{}},
		"relative times":   {"t_s,depth_m,strain_hoop1_ue,temp_c\n0,0.0,0.0,12.0\n2,1.6,-2.1,12.0\n4.0,3.25,-4.5,11.9\n", SampleOptions{Start: &start}},
		"other block size": {base, SampleOptions{BlockSamples: 1}},
	}
	for name, tc := range same {
		if got := fingerprint(t, tc.src, tc.opt); !bytes.Equal(got, want) {
			t.Errorf("%s: fingerprint differs", name)
		}
	}
	differ := map[string]string{
		"one value changed":    strings.Replace(base, "3.25", "3.26", 1),
		"one time changed":     strings.Replace(base, "08:00:04Z", "08:00:04.000000001Z", 1),
		"values swapped":       strings.Replace(base, "1.6,-2.1", "-2.1,1.6", 1),
		"load in another unit": strings.Replace(base, "depth_m", "pressure_bar", 1),
		"gauge renamed":        strings.Replace(base, "hoop1", "hoop2", 1),
		"a row fewer":          strings.TrimSuffix(base, "2026-05-01T08:00:04Z,3.25,-4.5,11.9\n"),
		"a column fewer": "time,depth_m,strain_hoop1_ue\n" +
			"2026-05-01T08:00:00Z,0.0,0.0\n2026-05-01T08:00:02Z,1.6,-2.1\n2026-05-01T08:00:04Z,3.25,-4.5\n",
	}
	for name, src := range differ {
		if got := fingerprint(t, src, SampleOptions{}); bytes.Equal(got, want) {
			t.Errorf("%s: same fingerprint", name)
		}
	}
	// A decoded block that does not fit the header is refused.
	h, _ := HeaderOf([]string{"time", "depth_m", "temp_c"})
	if err := NewFingerprint(h).AddDecoded(&blocks.Decoded{TimeNS: []int64{1}, Values: [][]float64{nil, {1}}}); !errors.Is(err, blocks.ErrCorrupt) {
		t.Fatalf("short block: %v", err)
	}
}

// Independent statements of the syntax, for the fuzz targets.
var (
	plainNumberRE = regexp.MustCompile(`^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?$`)
	rfc3339RE     = regexp.MustCompile(`^[0-9]{4}-(0[1-9]|1[0-2])-(0[1-9]|[12][0-9]|3[01])[Tt]([01][0-9]|2[0-3]):[0-5][0-9]:[0-5][0-9](\.[0-9]{1,9})?([Zz]|[+-]([01][0-9]|2[0-3]):[0-5][0-9])$`)
	digitsRE      = regexp.MustCompile(`^[0-9]+$`)
)

// dataFields returns the trimmed fields of the data lines of src, as the
// line reader sees them (the header is skipped).
func dataFields(src string) [][]string {
	src = strings.TrimPrefix(src, "\xef\xbb\xbf")
	var out [][]string
	header := true
	for _, line := range strings.Split(src, "\n") {
		line = strings.TrimRight(line, "\r\n")
		tl := strings.TrimSpace(line)
		if tl == "" || tl[0] == '#' {
			continue
		}
		if header {
			header = false
			continue
		}
		fs := strings.Split(line, ",")
		for i := range fs {
			fs[i] = strings.TrimSpace(fs[i])
		}
		out = append(out, fs)
	}
	return out
}
