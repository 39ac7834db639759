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
	start := time.Unix(0, 0)
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
	f.Add("")
	f.Fuzz(func(t *testing.T, src string) {
		start := time.Unix(1700000000, 0)
		n, load, err := readAll(t, src, SampleOptions{Start: &start, BlockSamples: 4})
		if err != nil {
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		if int64(len(load)) != n || n == 0 {
			t.Fatalf("rows %d, load values %d", n, len(load))
		}
	})
}

func FuzzHits(f *testing.F) {
	f.Add("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n2026-05-01T00:00:00Z,1,50,1.5,3,100,10\n")
	f.Add("t_s,channel,amplitude_db,energy,counts,duration_us,rise_us\n0.5,1,50,1.5,3,100,10\n")
	f.Fuzz(func(t *testing.T, src string) {
		start := time.Unix(1700000000, 0)
		hr, err := NewHitReader(strings.NewReader(src), "h", &start)
		if err != nil {
			return
		}
		var h Hit
		for i := 0; i < 10000; i++ {
			err := hr.Next(&h)
			if err != nil {
				return
			}
			if h.RiseUS > h.DurationUS || h.AmplitudeDB < 0 || h.Counts < 0 {
				t.Fatalf("accepted an impossible hit %+v", h)
			}
		}
	})
}
