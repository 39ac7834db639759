package ledger_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/ledgertest"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
)

// BenchmarkReassessFleet re-assesses 50 hulls × 1000 dives from their
// stored cycles, end to end against PostgreSQL (read cycles, compute,
// store the new assessments and chain records). The dives are written
// straight into the tables (their raw readings are not needed to
// re-assess), each with 12 pressure cycles and 24 time-at-pressure levels (the most
// a dive keeps by default),
// like the demo's dives.
//
//	go test -run XXX -bench ReassessFleet -benchtime 3x ./ledger/
func BenchmarkReassessFleet(b *testing.B) {
	const hulls, dives = 50, 1000
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(b))
	if err != nil {
		b.Fatal(err)
	}
	defer l.Close()
	copyFleet(b, l, "FLEET", hulls, func(int) int { return dives })
	if _, err := l.Pool().Exec(ctx, "ANALYZE"); err != nil {
		b.Fatal(err)
	}
	runtime.GC()
	peak := watchHeap()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		res, err := l.Assess(ctx, ledger.AssessOptions{Reason: "benchmark"})
		if err != nil {
			b.Fatal(err)
		}
		if len(res) != hulls || res[0].Dives != dives {
			b.Fatalf("assessed %d hulls, %d dives", len(res), res[0].Dives)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Seconds())/float64(b.N), "s/fleet")
	b.ReportMetric(float64(hulls*dives)*float64(b.N)/b.Elapsed().Seconds(), "dives/s")
	b.ReportMetric(float64(peak())/(1<<20), "peak-heap-MB")
}

// copyFleet adds hulls example hulls named PREFIX-NNN and, with COPY,
// dives(h) dives of stored cycles and holds for hull h (no readings: the
// fleet is for re-assessment). The cycles are random but seeded.
func copyFleet(tb testing.TB, l *ledger.Ledger, prefix string, hulls int, dives func(h int) int) {
	tb.Helper()
	ledgertest.CopyFleet(tb, l, exampleSpec(tb), prefix, hulls, dives)
}

// watchHeap samples the heap in use every 5 ms until the returned
// function is called, which returns the largest sample (a lower bound of
// the true peak; the process's RSS is what hulltally-bench reports).
func watchHeap() func() uint64 {
	stop, done := make(chan struct{}), make(chan uint64)
	go func() {
		var m runtime.MemStats
		var max uint64
		t := time.NewTicker(5 * time.Millisecond)
		defer t.Stop()
		for {
			runtime.ReadMemStats(&m)
			max = maxU(max, m.HeapInuse)
			select {
			case <-stop:
				done <- max
				return
			case <-t.C:
			}
		}
	}()
	return func() uint64 { close(stop); return <-done }
}

func maxU(a, b uint64) uint64 {
	if a > b {
		return a
	}
	return b
}

// BenchmarkLogDive logs a one-hour, 100 Hz dive with 8 strain gauges
// (360 000 rows) per iteration, each time as a new file.
//
//	go test -run XXX -bench LogDive -benchmem ./ledger/
func BenchmarkLogDive(b *testing.B) {
	ctx := context.Background()
	l, err := ledger.Open(ctx, testConfig(b))
	if err != nil {
		b.Fatal(err)
	}
	defer l.Close()
	sp := exampleSpec(b)
	sp.Gauges = nil
	for g := 0; g < 8; g++ {
		sp.Gauges = append(sp.Gauges, spec.Gauge{Name: fmt.Sprintf("g%d", g+1), Kind: "strain", Component: "laminate"})
	}
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{}); err != nil {
		b.Fatal(err)
	}
	dir := b.TempDir()
	files := make([]string, b.N)
	rows := 0
	for i := range files {
		files[i] = filepath.Join(dir, fmt.Sprintf("d%d.csv", i))
		f, err := os.Create(files[i])
		if err != nil {
			b.Fatal(err)
		}
		if rows, err = synth.BenchFile(f, 1, 100, 8, uint64(i+1)); err != nil {
			b.Fatal(err)
		}
		f.Close()
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		// One hull makes one dive at a time: each file its own hour.
		start := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC).Add(time.Duration(i) * 2 * time.Hour)
		if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: sp.Serial, Samples: files[i], Start: &start}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}
