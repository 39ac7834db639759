package reports_test

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
	"hulltally/reports"
)

// BenchmarkHullReport1000 builds and writes the report of a hull with 1000
// dives (each a short synthetic dive with strain and acoustic emission),
// end to end against PostgreSQL: gathering, charts, PDF.
//
//	go test -run XXX -bench HullReport1000 -benchtime 5x ./reports/
func BenchmarkHullReport1000(b *testing.B) {
	l := srv.Open(b)
	ctx := context.Background()
	data, err := os.ReadFile("../testdata/hulls/example-cylinder.yaml")
	if err != nil {
		b.Fatal(err)
	}
	sp, err := spec.Parse(data)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{}); err != nil {
		b.Fatal(err)
	}
	dir := b.TempDir()
	lat := 45.0
	t0 := time.Date(2024, 1, 1, 6, 0, 0, 0, time.UTC)
	for i := 0; i < 1000; i++ {
		d := synth.Dive{Start: t0.Add(time.Duration(i) * 20 * time.Hour), SampleHz: 0.2, Latitude: lat, MaxDepthM: float64(500 + (i*37)%3000),
			DescentMPS: 1, AscentMPS: 1, BottomS: 1800, SurfaceS: 120, Stops: 1, StopS: 60, WanderM: 5, DepthNoiseM: 0.05,
			Gauges:     []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -118, NoiseUE: 1}, {Name: "axial1", ComplianceUEPerMPa: -50, NoiseUE: 1}},
			AEChannels: []int{1, 2}, AEBottomRate: 3, AEOnsetFrac: 1, AmplitudeMean: 45}
		sf, hf := filepath.Join(dir, "s.csv"), filepath.Join(dir, "h.csv")
		s, _ := os.Create(sf)
		h, _ := os.Create(hf)
		if _, err := d.Write(s, h, uint64(i)); err != nil {
			b.Fatal(err)
		}
		s.Close()
		h.Close()
		if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: sp.Serial, Samples: sf, AE: hf, Latitude: &lat}); err != nil {
			b.Fatal(err)
		}
	}
	out := filepath.Join(dir, "r.pdf")
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		w, err := reports.Write(ctx, l, reports.KindHull, sp.Serial, out, time.Now().Add(time.Duration(i)*time.Second))
		if err != nil {
			b.Fatal(err)
		}
		if i == 0 {
			b.ReportMetric(float64(w.Pages), "pages")
		}
	}
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/report")
}
