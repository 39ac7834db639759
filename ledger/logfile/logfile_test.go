package logfile

import (
	"errors"
	"io"
	"strconv"
	"strings"
	"testing"
	"time"
)

func readAll(t testing.TB, src string, opt SampleOptions) (int64, []float64, error) {
	sr, err := NewSampleReader(strings.NewReader(src), "f.csv", opt)
	if err != nil {
		return 0, nil, err
	}
	b := sr.NewBlock()
	var load []float64
	for {
		err := sr.ReadBlock(b)
		if err == io.EOF {
			return sr.Rows(), load, nil
		}
		if err != nil {
			return 0, nil, err
		}
		load = append(load, b.Cols[sr.Header().Load].Value...)
	}
}

func TestFormats(t *testing.T) {
	start := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	tests := []struct {
		name, src string
		rows      int64
		load      []float64
	}{
		{"CRLF and BOM", "\xef\xbb\xbftime,depth_m\r\n2026-05-01T00:00:00Z,1.5\r\n2026-05-01T00:00:01Z,2\r\n", 2, []float64{1.5, 2}},
		{"comments and blanks", "# logger 7\n\ntime,pressure_bar\n# mid\n2026-05-01T00:00:00Z,10\n\n2026-05-01T00:00:01Z,12.5\n", 2, []float64{10, 12.5}},
		{"spaces around fields", "t_s , depth_m\n 0 , 1 \n0.5,2\n", 2, []float64{1, 2}},
		{"exponent falls back to float", "t_s,depth_m\n0,1e1\n1,2.5E0\n", 2, []float64{10, 2.5}},
		{"no final newline", "t_s,depth_m\n0,1\n1,2", 2, []float64{1, 2}},
		{"upper-case header", "T_S,DEPTH_M\n0,1\n", 1, []float64{1}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			n, load, err := readAll(t, tc.src, SampleOptions{Start: &start, BlockSamples: 16})
			if err != nil {
				t.Fatal(err)
			}
			if n != tc.rows || len(load) != len(tc.load) {
				t.Fatalf("rows %d load %v", n, load)
			}
			for i := range load {
				if load[i] != tc.load[i] {
					t.Fatalf("load %v, want %v", load, tc.load)
				}
			}
		})
	}
}

func TestErrorPlace(t *testing.T) {
	_, _, err := readAll(t, "time,depth_m,temp_c\n2026-05-01T00:00:00Z,1,2\n2026-05-01T00:00:01Z,1,x\n", SampleOptions{})
	var e *Error
	if !errors.As(err, &e) || e.Line != 3 || e.Column != 3 || e.Name != "temp_c" {
		t.Fatalf("%#v", err)
	}
}

func TestBlocksSplit(t *testing.T) {
	var b strings.Builder
	b.WriteString("t_s,depth_m\n")
	for i := 0; i < 100; i++ {
		b.WriteString(strconv.Itoa(i) + "," + strconv.Itoa(i%7) + "\n")
	}
	start := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	sr, err := NewSampleReader(strings.NewReader(b.String()), "f", SampleOptions{Start: &start, BlockSamples: 16})
	if err != nil {
		t.Fatal(err)
	}
	blk := sr.NewBlock()
	sizes := []int{}
	for {
		err := sr.ReadBlock(blk)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		sizes = append(sizes, blk.Len())
	}
	// 100 rows in blocks of 16: six full blocks and one of 4.
	if len(sizes) != 7 || sizes[6] != 4 || sizes[0] != 16 {
		t.Fatalf("block sizes %v", sizes)
	}
}

func TestHits(t *testing.T) {
	src := "channel,time,amplitude_db,energy,counts,duration_us,rise_us\n1,2026-05-01T00:00:00Z,50,1.5,3,100,10\n2,2026-05-01T00:00:00Z,60,2,4,200,20\n"
	hr, err := NewHitReader(strings.NewReader(src), "h", nil)
	if err != nil {
		t.Fatal(err)
	}
	var h Hit
	n := 0
	for {
		err := hr.Next(&h)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		n++
	}
	if n != 2 || h.Channel != 2 || h.AmplitudeDB != 60 || h.Counts != 4 {
		t.Fatalf("n %d last %+v", n, h)
	}
	for _, bad := range []string{
		"time,channel,amplitude_db,energy,counts,duration_us\n",                                               // missing rise_us
		"time,channel,amplitude_db,energy,counts,duration_us,rise_us,extra\n",                                 // unknown column
		"time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1.5,50,1,1,10,1\n", // channel
		"time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1,50,-1,1,10,1\n",  // energy
		"time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:01Z,1,50,1,1,10,1\n2026-05-01T00:00:00Z,1,50,1,1,10,1\n",
	} {
		hr, err := NewHitReader(strings.NewReader(bad), "h", nil)
		for err == nil {
			err = hr.Next(&h)
		}
		if err == io.EOF {
			t.Errorf("accepted %q", bad)
		}
	}
}

func FuzzSamples(f *testing.F) {
	f.Add("time,depth_m,strain_a_ue\n2026-05-01T00:00:00Z,1,2\n2026-05-01T00:00:01Z,3,4\n")
	f.Add("t_s,pressure_bar,temp_c\n0,1,2\n0.5,1e2,3\n")
	f.Add("t_s,pressure_abs_psi\n0,14.7\n")
	f.Add("time,depth_m\n1989-12-31T23:59:59Z,1\n2262-04-11T23:47:16.854775808Z,0x1p3\n")
	f.Add("t_s,depth_m\n0,1_0\n9999999999,Inf\n")
	f.Add("time,depth_m\n2026-05-01t00:00:00+24:00,1\n")
	f.Add("")
	start := time.Unix(1700000000, 0)
	minT, maxT := time.Unix(DefaultMinTimeUnix, 0), time.Date(2100, 1, 1, 0, 0, 0, 0, time.UTC)
	f.Fuzz(func(t *testing.T, src string) {
		sr, err := NewSampleReader(strings.NewReader(src), "f", SampleOptions{Start: &start, BlockSamples: 4, MaxTime: maxT})
		var times []int64
		var n int64
		if err == nil {
			b := sr.NewBlock()
			for {
				if err = sr.ReadBlock(b); err != nil {
					break
				}
				times = append(times, b.TimeNS...)
				n += int64(len(b.Cols[sr.Header().Load].Value))
			}
			if err == io.EOF {
				err = nil
			}
		}
		if err != nil {
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		if n != sr.Rows() || n == 0 || int64(len(times)) != n {
			t.Fatalf("rows %d, load values %d, times %d", sr.Rows(), n, len(times))
		}
		for _, ns := range times {
			if ns < minT.UnixNano() || ns > maxT.UnixNano() {
				t.Fatalf("accepted time %s outside %s..%s", fmtNS(ns), minT, maxT)
			}
		}
		// Every accepted field is a plain number or an RFC 3339 time.
		h := sr.Header()
		for _, row := range dataFields(src) {
			for i, v := range row {
				switch {
				case i == h.Time && h.Columns[i].Kind == KindTime:
					if !rfc3339RE.MatchString(v) {
						t.Fatalf("accepted time %q", v)
					}
				case !plainNumberRE.MatchString(v):
					t.Fatalf("accepted number %q", v)
				}
			}
		}
	})
}

func FuzzHits(f *testing.F) {
	f.Add("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1,50,1.5,3,100,10\n")
	f.Add("t_s,channel,amplitude_db,energy,counts,duration_us,rise_us\n0.5,1,50,1.5,3,100,10\n")
	f.Add("event,time,channel,amplitude_db,energy,counts,duration_us,rise_us\nlead_break,2026-05-01T00:00:00Z,1,98,1e3,400,2000,5\nsensor_test,2026-05-01T00:00:01Z,2,90,800,300,1500,4\n")
	f.Add("t_s,channel,amplitude_db,energy,counts,duration_us,rise_us\n99999999999,1,50,0x1p3,3.0,100,10\n")
	start := time.Unix(1700000000, 0)
	minT, maxT := time.Unix(DefaultMinTimeUnix, 0), time.Date(2100, 1, 1, 0, 0, 0, 0, time.UTC)
	f.Fuzz(func(t *testing.T, src string) {
		hr, err := NewHitReaderOptions(strings.NewReader(src), "h", HitOptions{Start: &start, MaxTime: maxT})
		if err != nil {
			return
		}
		var h Hit
		var n int
		for i := 0; i < 10000; i++ {
			err = hr.Next(&h)
			if err != nil {
				break
			}
			n++
			if h.RiseUS > h.DurationUS || h.AmplitudeDB < 0 || h.Counts < 0 || h.Channel < 0 {
				t.Fatalf("accepted an impossible hit %+v", h)
			}
			if h.TimeNS < minT.UnixNano() || h.TimeNS > maxT.UnixNano() {
				t.Fatalf("accepted time %s outside %s..%s", fmtNS(h.TimeNS), minT, maxT)
			}
			if h.Event > EventSensorTest {
				t.Fatalf("accepted event %d", h.Event)
			}
		}
		if err != io.EOF {
			return
		}
		// Every field of an accepted file is well formed.
		rows := dataFields(src)
		if len(rows) != n {
			t.Fatalf("%d rows accepted, %d data lines", n, len(rows))
		}
		for _, row := range rows {
			for slot, at := range hr.idx {
				if at < 0 {
					continue
				}
				v := row[at]
				ok := true
				switch {
				case slot == 0 && !hr.rel:
					ok = rfc3339RE.MatchString(v)
				case slot == slotChannel || slot == slotCounts:
					ok = digitsRE.MatchString(v)
				case slot == slotEvent:
					_, ok = ParseEvent(v)
				default:
					ok = plainNumberRE.MatchString(v)
				}
				if !ok {
					t.Fatalf("accepted field %q in column %d", v, at+1)
				}
			}
		}
	})
}

// FuzzRFC3339 checks the time parser against the syntax of RFC 3339 and,
// where the standard library also reads the text, against its instant.
func FuzzRFC3339(f *testing.F) {
	for _, s := range []string{"2026-05-01T08:30:00Z", "2026-05-01t08:30:00.5+02:00", "2016-12-31T23:59:60Z", "2026-05-01T08:30:00+24:00", "2026-02-29T00:00:00Z", "2026-05-01T08:30:00,5Z"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, msg := parseRFC3339([]byte(s))
		if msg != "" {
			return
		}
		if !rfc3339RE.MatchString(s) {
			t.Fatalf("accepted %q", s)
		}
		if want, err := time.Parse(time.RFC3339Nano, s); err == nil && !want.Equal(got) {
			t.Fatalf("%q: %v, time.Parse %v", s, got, want)
		}
	})
}
