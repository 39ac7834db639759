package evidence

import (
	"math"
	"strings"
	"testing"
)

func TestPhasesErrors(t *testing.T) {
	ok := Profile{TimeS: []float64{0, 1, 2}, Pressure: []float64{0, 1, 0}}
	tests := []struct {
		name string
		p    Profile
		frac float64
		want string
	}{
		{"empty", Profile{}, 0, "no samples"},
		{"mismatched pressure", Profile{TimeS: []float64{0, 1}, Pressure: []float64{0}}, 0, "2 times but 1 pressures"},
		{"mismatched strain", Profile{TimeS: []float64{0, 1}, Pressure: []float64{0, 1}, Strain: map[string][]float64{"g": {1}}}, 0, `gauge "g"`},
		{"time not increasing", Profile{TimeS: []float64{0, 1, 1}, Pressure: []float64{0, 1, 0}}, 0, "does not follow"},
		{"NaN pressure", Profile{TimeS: []float64{0, 1}, Pressure: []float64{0, math.NaN()}}, 0, "NaN"},
		{"NaN strain", Profile{TimeS: []float64{0, 1}, Pressure: []float64{0, 1}, Strain: map[string][]float64{"g": {0, math.NaN()}}}, 0, "NaN"},
		{"no dive", Profile{TimeS: []float64{0, 1}, Pressure: []float64{0, 0}}, 0, "not positive"},
		{"frac above 1", ok, 1.5, "outside"},
		{"frac negative", ok, -0.1, "outside"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Phases(tt.p, tt.frac)
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("Phases error = %v, want one containing %q", err, tt.want)
			}
		})
	}
}

func TestPhases(t *testing.T) {
	// Hand-made profiles; expected indices counted by hand from the
	// definition (first and last sample with p ≥ frac·peak).
	tests := []struct {
		name           string
		pressure       []float64
		frac           float64
		wantPeak       float64
		wantPeakI      int
		wantHS, wantHE int
	}{
		// peak 10 at index 4; 0.95·10 = 9.5: first ≥ at 3 (9.6), last at 6 (9.5).
		{"default frac", []float64{0, 4, 8, 9.6, 10, 9.8, 9.5, 5, 0}, 0, 10, 4, 3, 6},
		// 0.5·10 = 5: first ≥ at 2 (8), last at 7 (5).
		{"half", []float64{0, 4, 8, 9.6, 10, 9.8, 9.5, 5, 0}, 0.5, 10, 4, 2, 7},
		// frac 1: only the peak samples; the first of two equal peaks is PeakIndex.
		{"two peaks", []float64{0, 10, 3, 10, 0}, 1, 10, 1, 1, 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := Profile{TimeS: make([]float64, len(tt.pressure)), Pressure: tt.pressure}
			for i := range p.TimeS {
				p.TimeS[i] = 10 * float64(i)
			}
			ph, err := Phases(p, tt.frac)
			if err != nil {
				t.Fatal(err)
			}
			if ph.PeakMPa != tt.wantPeak || ph.PeakIndex != tt.wantPeakI || ph.HoldStart != tt.wantHS || ph.HoldEnd != tt.wantHE {
				t.Fatalf("got peak %g@%d hold %d–%d, want %g@%d hold %d–%d", ph.PeakMPa, ph.PeakIndex, ph.HoldStart, ph.HoldEnd, tt.wantPeak, tt.wantPeakI, tt.wantHS, tt.wantHE)
			}
			if ph.HoldStartS != 10*float64(tt.wantHS) || ph.HoldEndS != 10*float64(tt.wantHE) || ph.EndS != 10*float64(len(tt.pressure)-1) {
				t.Fatalf("times %+v", ph)
			}
		})
	}
}

func TestPhasesGeneratedDive(t *testing.T) {
	// deepDive: descent from t = 600 s to 2410 s; 0.95 of it is 1719.5 s,
	// so the first sample ≥ 38 MPa is at 600 + 1720 = 2320 s; the ascent
	// starts at 6010 s and the last sample ≥ 38 MPa is 90 s later, 6100 s.
	ph, err := Phases(deepDive().profile(), 0)
	if err != nil {
		t.Fatal(err)
	}
	if ph.HoldStartS != 2320 || ph.HoldEndS != 6100 || ph.PeakMPa != 40 || ph.PeakIndex != 2410 {
		t.Fatalf("phase %+v, want hold 2320–6100 s, peak 40 MPa at 2410", ph)
	}
}
