package reports_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
	"hulltally/reports/view"
)

// BenchmarkFleetView times the fleet view (`hulltally fleet`'s content:
// every hull's status, damage, dives left, last dive and open flags, at
// one snapshot) on fleets of logged dives, to show how it grows per hull
// and per dive, walked hull by hull from the ledger (walk) and read
// through the fleet summary (summary), in the same run:
//
//	go test -run XXX -bench FleetView -benchtime 5x ./reports/
//
// Each hull has the example spec and short synthetic dives with strain
// and acoustic emission, logged through LogDive.
func BenchmarkFleetView(b *testing.B) {
	for _, size := range []struct{ hulls, dives int }{{20, 5}, {80, 5}, {20, 20}} {
		b.Run(fmt.Sprintf("hulls=%d/dives=%d", size.hulls, size.dives), func(b *testing.B) {
			l := srv.Open(b)
			ctx := context.Background()
			data, err := os.ReadFile("../testdata/hulls/example-cylinder.yaml")
			if err != nil {
				b.Fatal(err)
			}
			dir := b.TempDir()
			lat := 45.0
			t0 := time.Date(2024, 1, 1, 6, 0, 0, 0, time.UTC)
			for h := 0; h < size.hulls; h++ {
				sp, err := spec.Parse(data)
				if err != nil {
					b.Fatal(err)
				}
				sp.Serial = fmt.Sprintf("FV-%03d", h)
				if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{}); err != nil {
					b.Fatal(err)
				}
				for i := 0; i < size.dives; i++ {
					d := synth.Dive{Start: t0.Add(time.Duration(i) * 20 * time.Hour), SampleHz: 0.2, Latitude: lat, MaxDepthM: float64(500 + (i*37+h*11)%3000),
						DescentMPS: 1, AscentMPS: 1, BottomS: 1800, SurfaceS: 120, WanderM: 5, DepthNoiseM: 0.05,
						Gauges:     []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -118, NoiseUE: 1}, {Name: "axial1", ComplianceUEPerMPa: -50, NoiseUE: 1}},
						AEChannels: []int{1, 2}, AEBottomRate: 3, AEOnsetFrac: 1, AmplitudeMean: 45}
					sf, hf := filepath.Join(dir, "s.csv"), filepath.Join(dir, "h.csv")
					s, _ := os.Create(sf)
					hh, _ := os.Create(hf)
					if _, err := d.Write(s, hh, uint64(h*1000+i)); err != nil {
						b.Fatal(err)
					}
					s.Close()
					hh.Close()
					if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: sp.Serial, Samples: sf, AE: hf, Latitude: &lat}); err != nil {
						b.Fatal(err)
					}
				}
			}
			// The walk evaluates every hull from the ledger; the summary
			// reads the rows the writes left (every hull's is current).
			views := []struct {
				name string
				rows func() (int, error)
			}{
				{"walk", func() (int, error) {
					fv, err := view.FleetOf(ctx, l, time.Now())
					if err != nil {
						return 0, err
					}
					return len(fv.Rows()), nil
				}},
				{"summary", func() (int, error) {
					rows, err := view.FleetRowsOf(ctx, l, time.Now())
					return len(rows), err
				}},
			}
			for _, v := range views {
				b.Run(v.name, func(b *testing.B) {
					for i := 0; i < b.N; i++ {
						n, err := v.rows()
						if err != nil {
							b.Fatal(err)
						}
						if n != size.hulls {
							b.Fatalf("fleet view has %d rows, want %d", n, size.hulls)
						}
					}
					per := b.Elapsed().Seconds() / float64(b.N)
					b.ReportMetric(per, "s/view")
					b.ReportMetric(per/float64(size.hulls)*1000, "ms/hull")
				})
			}
		})
	}
}
