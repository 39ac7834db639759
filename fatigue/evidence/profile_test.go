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
	// Hand-made profiles, samples 100 s apart (each sample stands for longer
	// than the 60 s sustain window, so the sustained peak is the peak);
	// expected indices counted by hand from the definition (first and last
	// sample with p ≥ frac·peak).
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
				p.TimeS[i] = 100 * float64(i)
			}
			ph, err := Phases(p, tt.frac)
			if err != nil {
				t.Fatal(err)
			}
			if ph.PeakMPa != tt.wantPeak || ph.PeakIndex != tt.wantPeakI || ph.HoldStart != tt.wantHS || ph.HoldEnd != tt.wantHE {
				t.Fatalf("got peak %g@%d hold %d–%d, want %g@%d hold %d–%d", ph.PeakMPa, ph.PeakIndex, ph.HoldStart, ph.HoldEnd, tt.wantPeak, tt.wantPeakI, tt.wantHS, tt.wantHE)
			}
			if ph.HoldStartS != 100*float64(tt.wantHS) || ph.HoldEndS != 100*float64(tt.wantHE) || ph.EndS != 100*float64(len(tt.pressure)-1) {
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

// TestPhasesSpike: one sample of 32 MPa at the start of a 20-minute hold
// at 30 MPa (samples every 5 s) must not shrink the hold to that sample:
// the hold is judged against the pressure sustained for 60 s (30 MPa), so
// it runs over the whole time at 30 MPa (0.95·30 = 28.5 MPa: from the
// descent's 28.5 MPa at 1485 s to the ascent's at 2835 s, worked by hand
// from the 0.02 MPa/s ramps).
func TestPhasesSpike(t *testing.T) {
	var p Profile
	for ts := 0.0; ts <= 4320; ts += 5 {
		var v float64
		switch {
		case ts < 60:
			v = 0
		case ts < 1560:
			v = 0.02 * (ts - 60)
		case ts <= 2760:
			v = 30
		case ts < 4260:
			v = 30 - 0.02*(ts-2760)
		}
		if ts == 1560 {
			v = 32 // the spike
		}
		p.TimeS, p.Pressure = append(p.TimeS, ts), append(p.Pressure, v)
	}
	ph, err := Phases(p, 0)
	if err != nil {
		t.Fatal(err)
	}
	if ph.PeakMPa != 32 || math.Abs(ph.HoldLevel()-28.5) > 1e-9 {
		t.Fatalf("peak %g, level %g: want 32 and 0.95·30 = 28.5", ph.PeakMPa, ph.HoldLevel())
	}
	if ph.HoldStartS != 1485 || ph.HoldEndS != 2835 {
		t.Fatalf("hold %g–%g s, want 1485–2835 s", ph.HoldStartS, ph.HoldEndS)
	}
	if !ph.InHold(2000) || ph.InDescent(1500) {
		t.Fatalf("hold membership wrong: %+v", ph)
	}
}
