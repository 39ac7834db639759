package ledger_test

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/ledger"
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
		res, err := l.Assess(ctx, ledger.AssessOptions{Actor: "bench", Reason: "benchmark"})
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
	ctx := context.Background()
	base := exampleSpec(tb)
	rng := rand.New(rand.NewPCG(1, 2))
	for h := 0; h < hulls; h++ {
		sp := *base
		sp.Serial = fmt.Sprintf("%s-%03d", prefix, h)
		rec, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{Actor: "bench"})
		if err != nil {
			tb.Fatal(err)
		}
		var diveRows, cycleRows, holdRows [][]any
		t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
		for d := 0; d < dives(h); d++ {
			id := uuid.New()
			peak := 20 + 20*rng.Float64()
			st := t0.Add(time.Duration(d) * 30 * time.Hour)
			sha := make([]byte, 32)
			copy(sha, id[:])
			diveRows = append(diveRows, []any{id, rec.ID, int32(1), "bench.csv", sha, int64(1), st, st.Add(5 * time.Hour), 45.0, false, "", "", "pressure_mpa",
				[]string{"t_s", "pressure_mpa"}, []string{}, int64(1000), int32(1), 18000.0, peak * 99, peak, false, int32(0), st, l.Identity().Name})
			r, m, n := []float64{peak, peak}, []float64{peak / 2, peak / 2}, []float64{0.5, 0.5}
			for k := 0; k < 10; k++ {
				r, m, n = append(r, 0.1+0.3*rng.Float64()), append(m, peak-0.2), append(n, 1)
			}
			cycleRows = append(cycleRows, []any{id, rec.ID, "pressure", "MPa", 0.05, r, m, n})
			var lv, sec []float64
			for k := 1; k <= 24; k++ {
				lv, sec = append(lv, peak*float64(k)/24), append(sec, 60+rng.Float64()*600)
			}
			holdRows = append(holdRows, []any{id, rec.ID, 0.05, lv, sec})
		}
		err = pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
			cols := []string{"id", "hull_id", "hull_revision", "source_name", "source_sha256", "source_bytes", "start_time", "end_time", "latitude", "latitude_assumed",
				"site", "operator", "load_column", "columns", "gauges", "sample_count", "block_count", "duration_s", "max_depth_m", "max_pressure_mpa", "beyond_rated", "ae_hit_count", "recorded_at", "recorded_by"}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dives"}, cols, pgx.CopyFromRows(diveRows)); err != nil {
				return err
			}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_cycles"}, []string{"dive_id", "hull_id", "series", "unit", "gate", "ranges", "means", "counts"}, pgx.CopyFromRows(cycleRows)); err != nil {
				return err
			}
			_, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_holds"}, []string{"dive_id", "hull_id", "bin_mpa", "levels", "seconds"}, pgx.CopyFromRows(holdRows))
			return err
		})
		if err != nil {
			tb.Fatal(err)
		}
	}
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
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{Actor: "bench"}); err != nil {
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
