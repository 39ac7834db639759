package charts

import (
	"bytes"
	"errors"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// example holds one small season of one hull for every chart.
type example struct {
	name   string
	render func(Size) ([]byte, error)
}

func examples() []example {
	nan := math.NaN()
	var dives, ratio, fel []float64
	comp := map[string][]float64{"SG-01 hoop": nil, "SG-02 axial": nil, "SG-03 hoop aft": nil}
	for i := 1; i <= 40; i++ {
		d := float64(i)
		dives = append(dives, d)
		ratio = append(ratio, 0.011*d+0.0001*d*d)
		f := 1.05 - 0.004*d
		if i%7 == 0 {
			f = nan
		}
		fel = append(fel, f)
		a, b, c := -41.0+0.02*d, 18.5+0.01*d, -39.2-0.05*d
		if i == 12 || i == 13 {
			b = nan
		}
		comp["SG-01 hoop"] = append(comp["SG-01 hoop"], a)
		comp["SG-02 axial"] = append(comp["SG-02 axial"], b)
		comp["SG-03 hoop aft"] = append(comp["SG-03 hoop aft"], c)
	}
	base := map[string]float64{"SG-01 hoop": -41, "SG-02 axial": 18.5, "SG-03 hoop aft": -39}
	var ranges, counts []float64
	for i := 0; i < 30; i++ {
		ranges = append(ranges, 0.2+0.22*float64(i))
		counts = append(counts, math.Round(3000*math.Exp(-0.35*float64(i)))+0.5)
	}
	var ts, ps []float64
	for s := 0.0; s <= 5*3600; s += 60 {
		var p float64
		switch {
		case s < 3600:
			p = 40 * s / 3600
		case s < 4*3600:
			p = 40 + 0.6*math.Sin(s/900)
		default:
			p = 40 * (5*3600 - s) / 3600
		}
		ts = append(ts, s)
		ps = append(ps, p)
	}
	proj := &Projection{FromDive: 40, RatePerDive: 0.019, UntilDive: 100}
	return []example{
		{"damage", func(sz Size) ([]byte, error) { return DamageHistory(dives, ratio, proj, 1, 0.5, sz) }},
		{"cycles", func(sz Size) ([]byte, error) { return CycleHistogram(ranges, counts, sz) }},
		{"felicity", func(sz Size) ([]byte, error) { return FelicityHistory(dives, fel, 0.95, sz) }},
		{"compliance", func(sz Size) ([]byte, error) { return ComplianceHistory(dives, comp, base, sz) }},
		{"profile", func(sz Size) ([]byte, error) { return DiveProfile(ts, ps, 45, sz) }},
	}
}

func empties() []example {
	return []example{
		{"damage", func(sz Size) ([]byte, error) {
			return DamageHistory(nil, nil, &Projection{FromDive: 1, RatePerDive: 0.1}, 1, 0.5, sz)
		}},
		{"cycles", func(sz Size) ([]byte, error) { return CycleHistogram(nil, nil, sz) }},
		{"felicity", func(sz Size) ([]byte, error) { return FelicityHistory(nil, nil, 0.95, sz) }},
		{"compliance", func(sz Size) ([]byte, error) { return ComplianceHistory(nil, nil, nil, sz) }},
		{"profile", func(sz Size) ([]byte, error) { return DiveProfile(nil, nil, 45, sz) }},
	}
}

// checkPNG decodes b and checks its pixel size against the printed size.
func checkPNG(t *testing.T, b []byte, wmm, hmm float64, dpi int) {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("decode PNG: %v", err)
	}
	wantW := wmm / 25.4 * float64(dpi)
	wantH := hmm / 25.4 * float64(dpi)
	r := img.Bounds()
	if math.Abs(float64(r.Dx())-wantW) > 1 || math.Abs(float64(r.Dy())-wantH) > 1 {
		t.Fatalf("image %d × %d px, want %.1f × %.1f", r.Dx(), r.Dy(), wantW, wantH)
	}
}

func TestChartsRender(t *testing.T) {
	for _, ex := range examples() {
		t.Run(ex.name, func(t *testing.T) {
			b, err := ex.render(Size{})
			if err != nil {
				t.Fatal(err)
			}
			checkPNG(t, b, DefaultWidthMM, DefaultHeightMM, DefaultDPI)
			b, err = ex.render(Size{WidthMM: 120, HeightMM: 70, DPI: 150})
			if err != nil {
				t.Fatal(err)
			}
			checkPNG(t, b, 120, 70, 150)
		})
	}
}

func TestChartsDeterministic(t *testing.T) {
	for _, ex := range append(examples(), empties()...) {
		a, err := ex.render(Size{})
		if err != nil {
			t.Fatal(ex.name, err)
		}
		b, err := ex.render(Size{})
		if err != nil {
			t.Fatal(ex.name, err)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s: two renderings of the same input differ", ex.name)
		}
	}
}

func TestChartsEmpty(t *testing.T) {
	for _, ex := range empties() {
		b, err := ex.render(Size{})
		if err != nil {
			t.Fatalf("%s: %v", ex.name, err)
		}
		checkPNG(t, b, DefaultWidthMM, DefaultHeightMM, DefaultDPI)
	}
	// All values missing is no data too.
	nan := math.NaN()
	if _, err := FelicityHistory([]float64{1, 2}, []float64{nan, nan}, 0.95, Size{}); err != nil {
		t.Error(err)
	}
	if _, err := ComplianceHistory([]float64{1, 2}, map[string][]float64{"SG-01": {nan, nan}}, nil, Size{}); err != nil {
		t.Error(err)
	}
	if _, err := CycleHistogram([]float64{1, 2}, []float64{0, 0}, Size{}); err != nil {
		t.Error(err)
	}
}

func TestChartsMismatchedLengths(t *testing.T) {
	s := Size{}
	cases := map[string]func() ([]byte, error){
		"damage":   func() ([]byte, error) { return DamageHistory([]float64{1, 2}, []float64{0.1}, nil, 1, 0.5, s) },
		"cycles":   func() ([]byte, error) { return CycleHistogram([]float64{1}, []float64{1, 2}, s) },
		"felicity": func() ([]byte, error) { return FelicityHistory([]float64{1}, nil, 0.95, s) },
		"compliance": func() ([]byte, error) {
			return ComplianceHistory([]float64{1, 2}, map[string][]float64{"SG-01": {1}}, nil, s)
		},
		"profile": func() ([]byte, error) { return DiveProfile([]float64{0, 1, 2}, []float64{0, 1}, 45, s) },
	}
	for name, f := range cases {
		if _, err := f(); !errors.Is(err, ErrInput) {
			t.Errorf("%s: error %v, want one wrapping ErrInput", name, err)
		}
	}
}

func TestChartsInvalidInput(t *testing.T) {
	nan := math.NaN()
	cases := map[string]func() ([]byte, error){
		"size":           func() ([]byte, error) { return CycleHistogram(nil, nil, Size{WidthMM: -5}) },
		"dpi":            func() ([]byte, error) { return CycleHistogram(nil, nil, Size{DPI: 100000}) },
		"NaN dive":       func() ([]byte, error) { return FelicityHistory([]float64{nan}, []float64{1}, 0.95, Size{}) },
		"negative":       func() ([]byte, error) { return CycleHistogram([]float64{-1}, []float64{1}, Size{}) },
		"allowable":      func() ([]byte, error) { return DamageHistory(nil, nil, nil, -1, 0, Size{}) },
		"projection":     func() ([]byte, error) { return DamageHistory(nil, nil, &Projection{RatePerDive: nan}, 1, 0, Size{}) },
		"rated":          func() ([]byte, error) { return DiveProfile(nil, nil, nan, Size{}) },
		"Felicity limit": func() ([]byte, error) { return FelicityHistory(nil, nil, nan, Size{}) },
	}
	for name, f := range cases {
		if _, err := f(); !errors.Is(err, ErrInput) {
			t.Errorf("%s: error %v, want one wrapping ErrInput", name, err)
		}
	}
}

func TestDamageProjectionCases(t *testing.T) {
	dives := []float64{1, 2, 3}
	ratio := []float64{0.1, 0.2, 0.3}
	for _, pr := range []*Projection{
		{FromDive: 3, RatePerDive: 0.1},                 // no cap: meets allowable
		{FromDive: 3, RatePerDive: 0.001, UntilDive: 5}, // capped
		{FromDive: 3, RatePerDive: 0},                   // flat, no cap
		{FromDive: 3, RatePerDive: -1, UntilDive: 10},   // falling
	} {
		b, err := DamageHistory(dives, ratio, pr, 1, 0.5, Size{})
		if err != nil {
			t.Fatalf("%+v: %v", *pr, err)
		}
		checkPNG(t, b, DefaultWidthMM, DefaultHeightMM, DefaultDPI)
	}
	// Already past the allowable: no projection, still a chart.
	if _, err := DamageHistory(dives, []float64{0.5, 1.1, 1.3}, &Projection{FromDive: 3, RatePerDive: 0.1}, 1, 0.5, Size{}); err != nil {
		t.Fatal(err)
	}
}

func TestNiceStep(t *testing.T) {
	for _, c := range []struct{ x, want float64 }{{0.33, 0.5}, {0.2, 0.2}, {0.021, 0.025}, {7, 10}, {1, 1}} {
		if got := niceStep(c.x); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceStep(%g) = %g, want %g", c.x, got, c.want)
		}
	}
}

// TestWriteExamples writes the example charts to a temporary folder, or
// to $HULLTALLY_CHARTS_DIR when set, for looking at them.
func TestWriteExamples(t *testing.T) {
	dir := os.Getenv("HULLTALLY_CHARTS_DIR")
	if dir == "" {
		dir = t.TempDir()
	}
	for _, set := range []struct {
		suffix string
		exs    []example
	}{{"", examples()}, {"-empty", empties()}} {
		for _, ex := range set.exs {
			b, err := ex.render(Size{})
			if err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, ex.name+set.suffix+".png"), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
}

// TestSVG: the same chart drawn as SVG for the web pages (and still PNG
// for the PDF).
func TestSVG(t *testing.T) {
	svg, err := CycleHistogram([]float64{1, 2, 3}, []float64{1, 0.5, 2}, Size{SVG: true})
	if err != nil || !bytes.Contains(svg[:min(len(svg), 200)], []byte("<svg")) || !bytes.Contains(svg, []byte("</svg>")) {
		t.Fatalf("SVG: %v %.200s", err, svg)
	}
	png, err := CycleHistogram([]float64{1, 2, 3}, []float64{1, 0.5, 2}, Size{})
	if err != nil || !bytes.HasPrefix(png, []byte("\x89PNG")) {
		t.Fatalf("PNG: %v", err)
	}
}
