// Command hulltally-bench measures dive logging against psql's \copy of
// the same file into a plain table of the same columns, on the same server
// in the same run: it generates a long dive (default 10 h at 100 Hz with 8
// strain gauges: 3.6 million rows), logs it with the hulltally binary, loads
// it with psql, and prints rows per second for both, their ratio and
// hulltally's peak resident memory.
package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
)

func main() {
	hours := flag.Float64("hours", 10, "dive length, hours")
	hz := flag.Float64("hz", 100, "sample rate, Hz")
	gauges := flag.Int("gauges", 8, "strain gauges")
	bin := flag.String("hulltally", "", "hulltally binary (default: build it)")
	keep := flag.Bool("keep", false, "keep the work folder")
	flag.Parse()
	if err := run(context.Background(), *hours, *hz, *gauges, *bin, *keep); err != nil {
		fmt.Fprintln(os.Stderr, "hulltally-bench:", err)
		os.Exit(1)
	}
}

func run(ctx context.Context, hours, hz float64, gauges int, bin string, keep bool) error {
	work, err := os.MkdirTemp("", "htbench-")
	if err != nil {
		return err
	}
	if err := os.Chmod(work, 0o755); err != nil {
		return err
	}
	if !keep {
		defer os.RemoveAll(work)
	}
	if bin == "" {
		bin = filepath.Join(work, "hulltally")
		out, err := exec.Command("go", "build", "-o", bin, "./cmd/hulltally").CombinedOutput()
		if err != nil {
			return fmt.Errorf("building hulltally (run from the project root or give -hulltally): %v\n%s", err, out)
		}
	}
	file := filepath.Join(work, "bench-dive.csv")
	f, err := os.Create(file)
	if err != nil {
		return err
	}
	t0 := time.Now()
	rows, err := synth.BenchFile(f, hours, hz, gauges, 1)
	if err == nil {
		err = f.Close()
	}
	if err != nil {
		return err
	}
	st, _ := os.Stat(file)
	fmt.Printf("generated %d rows (%.0f MB) in %.1f s: %s\n", rows, float64(st.Size())/1e6, time.Since(t0).Seconds(), file)

	env := os.Environ()
	home := filepath.Join(work, "home")
	env = append(env, "HULLTALLY_HOME="+home)
	cfg, err := configs.Load(configs.Options{Env: func(k string) (string, bool) {
		if k == "HULLTALLY_HOME" {
			return home, true
		}
		return os.LookupEnv(k)
	}})
	if err != nil {
		return err
	}
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		return err
	}
	defer l.Close()
	if cfg.Database.URL == "" {
		defer ledger.StopManaged(context.Background(), cfg)
	}
	sp := &spec.Hull{Serial: "BENCH-01", Name: "benchmark hull (invented)", MaterialSystem: "carbon/epoxy", Shape: "cylinder",
		InnerRadiusM: 0.5, WallThicknessM: 0.1, LengthM: 2, RatedDepthM: 4000, DesignPressureMPa: 44, ProofPressureMPa: 50, CollapsePressureMPa: 90,
		Components: []spec.Component{{Name: "laminate", Kind: "laminate_cylinder", Transfer: spec.Transfer{Basis: "lame"}, Curve: "carbon-epoxy-cc-illustrative"}}}
	for g := 0; g < gauges; g++ {
		sp.Gauges = append(sp.Gauges, spec.Gauge{Name: fmt.Sprintf("g%d", g+1), Kind: "strain", Component: "laminate"})
	}
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{Actor: "bench"}); err != nil {
		return err
	}
	dbURL := cfg.Database.URL
	if dbURL == "" {
		dbURL = managedURL(home)
	}
	// Plain table of the same columns for psql.
	cols := []string{"t_s double precision", "pressure_mpa double precision"}
	for g := 0; g < gauges; g++ {
		cols = append(cols, fmt.Sprintf("strain_g%d_ue double precision", g+1))
	}
	cols = append(cols, "temp_c double precision")
	if _, err := l.Pool().Exec(ctx, "DROP TABLE IF EXISTS bench_plain; CREATE TABLE bench_plain ("+strings.Join(cols, ", ")+")"); err != nil {
		return err
	}
	// Warm the page cache for both.
	_, _, _ = readAll(file)

	// psql \copy.
	t1 := time.Now()
	cmd := exec.CommandContext(ctx, "psql", "-X", "-q", "-v", "ON_ERROR_STOP=1", dbURL, "-c", fmt.Sprintf(`\copy bench_plain FROM '%s' WITH (FORMAT csv, HEADER true)`, file))
	if out, err := cmd.CombinedOutput(); err != nil {
		return fmt.Errorf("psql \\copy: %v\n%s", err, out)
	}
	psqlS := time.Since(t1).Seconds()

	// hulltally dive log.
	t2 := time.Now()
	cmd = exec.CommandContext(ctx, bin, "dive", "log", "--hull", "BENCH-01", "--start", "2026-06-01T00:00:00Z", "--lat", "45", "--json", file)
	cmd.Env = env
	out, err := cmd.CombinedOutput()
	if err != nil {
		return fmt.Errorf("hulltally dive log: %v\n%s", err, out)
	}
	htS := time.Since(t2).Seconds()
	rss := cmd.ProcessState.SysUsage().(*syscall.Rusage).Maxrss // KiB on Linux

	var plainBytes, blockBytes int64
	_ = l.Pool().QueryRow(ctx, "SELECT pg_total_relation_size('bench_plain')").Scan(&plainBytes)
	_ = l.Pool().QueryRow(ctx, "SELECT pg_total_relation_size('reading_blocks')").Scan(&blockBytes)
	fmt.Printf("psql \\copy:        %8.2f s  %10.0f rows/s  (plain table %.0f MB)\n", psqlS, float64(rows)/psqlS, float64(plainBytes)/1e6)
	fmt.Printf("hulltally dive log: %8.2f s  %10.0f rows/s  (reading blocks %.0f MB)\n", htS, float64(rows)/htS, float64(blockBytes)/1e6)
	fmt.Printf("ratio hulltally/psql rows per second: %.2f\n", psqlS/htS)
	fmt.Printf("hulltally peak RSS: %.1f MB\n", float64(rss)/1024)
	return nil
}

func managedURL(home string) string {
	return "postgresql:///hulltally?host=" + filepath.Join(home, "postgres") + "&port=5432&user=hulltally"
}

func readAll(p string) (int64, int, error) {
	f, err := os.Open(p)
	if err != nil {
		return 0, 0, err
	}
	defer f.Close()
	buf := make([]byte, 1<<20)
	var n int64
	for {
		k, err := f.Read(buf)
		n += int64(k)
		if err != nil {
			return n, 0, nil
		}
	}
}
