package stream

import (
	"reflect"
	"strings"
	"testing"
)

func codes(fs []Finding) []string {
	out := []string{}
	for _, f := range fs {
		out = append(out, f.Code)
	}
	return out
}

// depthRecord is a record from the surface (0 MPa at 0 s) to depth 1 MPa
// at 1 s intervals except the given ones, and back to the surface: every
// interval has an end below the surface, so each counts.
func depthRecord(dts []float64) (t, p []float64) {
	t, p = []float64{0}, []float64{0}
	for i, dt := range dts {
		t = append(t, t[len(t)-1]+dt)
		if i == len(dts)-1 {
			p = append(p, 0)
		} else {
			p = append(p, 1)
		}
	}
	return t, p
}

func ones(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = 1
	}
	return s
}

// Findings at and beyond their limits: surface 0.05 MPa, gap 60 s,
// interval 10 s, below atmospheric -0.05 MPa; each limit itself is
// allowed (the comparisons are strict), anything past it is found.
func TestQualityLimits(t *testing.T) {
	dts := func(n int, odd ...float64) []float64 { return append(ones(n-len(odd)), odd...) }
	tests := []struct {
		name string
		t, p []float64
		want []string
	}{
		{"clean", []float64{0, 1, 2}, []float64{0, 1, 0}, nil},
		{"start at the tolerance", []float64{0, 1, 2}, []float64{0.05, 1, 0}, nil},
		{"start past the tolerance", []float64{0, 1, 2}, []float64{0.0501, 1, 0}, []string{FindingCutStart}},
		{"end at the tolerance", []float64{0, 1, 2}, []float64{0, 1, 0.05}, nil},
		{"end past the tolerance", []float64{0, 1, 2}, []float64{0, 1, 0.0501}, []string{FindingCutEnd}},
		{"at atmospheric limit", []float64{0, 1}, []float64{0, -0.05}, nil},
		{"below atmospheric", []float64{0, 1}, []float64{0, -0.0501}, []string{FindingBelowAtm}},
		// 200 intervals: one of 60 s is no gap (nor 1 % coarse).
		{"gap at the limit", nil, nil, nil},
		// One of 60.5 s is a gap; 1 coarse of 200 is not over 1 %.
		{"gap past the limit", nil, nil, []string{FindingGap}},
		// A long gap at the surface (both ends within the tolerance) is
		// no gap at depth.
		{"gap at the surface", []float64{0, 1000, 1001, 1002}, []float64{0, 0.05, 1, 0}, nil},
		// One end past the tolerance makes it an interval at depth: a gap,
		// and 1 of its 2 intervals at depth is coarse.
		{"gap leaving the surface", []float64{0, 1000, 1001}, []float64{0, 0.0501, 0}, []string{FindingGap, FindingCoarse}},
		// 100 intervals, one of 10.5 s: 1 % is not more than 1 %.
		{"coarse 1 %", nil, nil, nil},
		// 99 intervals, one of 10.5 s: more than 1 %.
		{"coarse over 1 %", nil, nil, []string{FindingCoarse}},
		// 99 intervals, one of exactly 10 s: not coarse.
		{"interval at the limit", nil, nil, nil},
	}
	gen := map[string][]float64{
		"gap at the limit":      dts(200, 60),
		"gap past the limit":    dts(200, 60.5),
		"coarse 1 %":            dts(100, 10.5),
		"coarse over 1 %":       dts(99, 10.5),
		"interval at the limit": dts(99, 10),
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			ts, ps := tt.t, tt.p
			if d, ok := gen[tt.name]; ok {
				// The odd interval is put in the middle of the record.
				d[len(d)/2], d[len(d)-1] = d[len(d)-1], d[len(d)/2]
				ts, ps = depthRecord(d)
			}
			q := NewQuality(0.05, 60, 10)
			q.Add(ts, ps, nil)
			want := tt.want
			if want == nil {
				want = []string{}
			}
			if got := codes(q.Findings()); !reflect.DeepEqual(got, want) {
				t.Errorf("findings %v, want %v: %+v", got, want, q.Findings())
			}
		})
	}
}

// The gap finding's words, worked by hand, and the list bounded at five.
func TestGapDetail(t *testing.T) {
	q := NewQuality(0.05, 60, 100)
	q.Add([]float64{0, 61, 62}, []float64{1, 1, 0}, nil)
	f := q.Findings()
	want := "1 gap(s) between samples below the surface longer than 60 s (longest 61 s): 61 s from 0 s (1 to 1 MPa); the time of each gap is charged at the higher neighbouring pressure, and anything that happened in it is unknown"
	if len(f) != 2 || f[1].Code != FindingGap || f[1].Detail != want {
		t.Fatalf("%+v", f)
	}
	q = NewQuality(0.05, 60, 100)
	var ts, ps []float64
	for i := range 8 {
		ts, ps = append(ts, float64(i)*70), append(ps, 2)
	}
	q.Add(ts, ps, nil)
	for _, f := range q.Findings() {
		if f.Code == FindingGap && (!strings.HasPrefix(f.Detail, "7 gap(s)") || strings.Count(f.Detail, " s from ") != 5 || !strings.Contains(f.Detail, ", …;")) {
			t.Fatalf("%s", f.Detail)
		}
	}
}

func TestSurfaceTemps(t *testing.T) {
	tests := []struct {
		name        string
		p, temp     []float64
		before, aft float64
		ok          bool
	}{
		// Before 20; after (18+19)/2 = 18.5; 4 °C at depth is not used.
		{"dive", []float64{0, 0, 1, 1, 0, 0}, []float64{20, 20, 4, 4, 18, 19}, 20, 18.5, true},
		// A stop at the surface mid-dive is not "after": going down again
		// forgets it; after is the final 18.
		{"bounce", []float64{0, 1, 0, 1, 0}, []float64{20, 5, 10, 5, 18}, 20, 18, true},
		{"no temperatures", []float64{0, 1, 0}, nil, 0, 0, false},
		{"never left the surface", []float64{0, 0}, []float64{20, 20}, 0, 0, false},
		// Cut off at depth: no surface after, so no comparison.
		{"ends at depth", []float64{0, 1}, []float64{20, 5}, 0, 0, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			q := NewQuality(0.05, 60, 10)
			ts := make([]float64, len(tt.p))
			for i := range ts {
				ts[i] = float64(i)
			}
			q.Add(ts, tt.p, tt.temp)
			b, a, ok := q.SurfaceTemps()
			if b != tt.before || a != tt.aft || ok != tt.ok {
				t.Fatalf("%v %v %v, want %v %v %v", b, a, ok, tt.before, tt.aft, tt.ok)
			}
		})
	}
}
