// Command hulltally-bench measures dive logging against psql's \copy on the
// same server in the same run, over several interleaved rounds.
//
// Each round generates a long dive (default 10 h at 100 Hz with 8 strain
// gauges: 3.6 million rows; a new seed each round, so that every round is a
// new dive), then times four loads of that same file, in an order that
// alternates from round to round:
//
//   - hulltally: `hulltally dive log` of the file into its own hull (parse,
//     count, check, encode into compact blocks, store, audit chain);
//   - hulltally on one core: the same with GOMAXPROCS=1, into a second
//     hull, of a second file of the same length (another seed), since the
//     same samples are refused on a second hull; how much the second core
//     gives;
//   - psql-plain: psql \copy of the file into a plain table of the same
//     columns (one row per sample);
//   - psql-blocks: psql \copy into a table of the same layout as
//     reading_blocks (without its foreign key) of a CSV holding, one row per
//     block, exactly the encoded blocks hulltally stores for that file
//     (made from the file with ledger/logfile and ledger/blocks before the
//     timing, data and sha256 as hex bytea): the like-for-like load of the
//     same stored bytes.
//
// It prints, per side, min/median/max of wall time and rows per second, the
// child process's CPU use ((user+system CPU time)/wall, from its
// os.ProcessState; 2.0 would be both cores busy), the database server's CPU
// use over the same wall time where the server is the managed cluster on
// this machine (CPU of the backends, reaped by the postmaster), and the
// child's peak resident memory; and min/median/max over rounds of the
// per-round ratios of rows per second.
package main

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/google/uuid"

	"hulltally/configs"
	"hulltally/internal/benchproc"
	"hulltally/ledger"
	"hulltally/ledger/blocks"
	"hulltally/ledger/cluster"
	"hulltally/ledger/logfile"
	"hulltally/ledger/spec"
)

// options are the command's flags.
type options struct {
	hours  float64
	rows   int
	hz     float64
	gauges int
	rounds int
	bin    string
	keep   bool
}

func main() {
	var o options
	flag.Float64Var(&o.hours, "hours", 10, "dive length, hours (10 h at 100 Hz: 3.6 million rows)")
	flag.IntVar(&o.rows, "rows", 0, "dive length in rows (overrides -hours when positive)")
	flag.Float64Var(&o.hz, "hz", 100, "sample rate, Hz")
	flag.IntVar(&o.gauges, "gauges", 8, "strain gauges")
	flag.IntVar(&o.rounds, "rounds", 3, "interleaved rounds of every side (the order alternates each round)")
	flag.StringVar(&o.bin, "hulltally", "", "hulltally binary (default: build it)")
	flag.BoolVar(&o.keep, "keep", false, "keep the work folder")
	flag.Parse()
	if o.rows > 0 {
		o.hours = float64(o.rows) / (3600 * o.hz)
	}
	if o.rounds < 1 || o.hours <= 0 || o.hz <= 0 || o.gauges < 0 {
		fmt.Fprintln(os.Stderr, "hulltally-bench: -rounds must be ≥ 1, -hours/-rows and -hz positive, -gauges ≥ 0")
		os.Exit(2)
	}
	if err := run(context.Background(), o); err != nil {
		fmt.Fprintln(os.Stderr, "hulltally-bench:", err)
		os.Exit(1)
	}
}

// Sides of the comparison, in the order of the first round.
const (
	sideHT = iota
	sidePlain
	sideBlocks
	sideHT1
	nSides
)

var sideNames = [nSides]string{"hulltally dive log", "psql \\copy plain", "psql \\copy blocks", "hulltally GOMAXPROCS=1"}

// measure is one timed load.
type measure struct {
	wallS   float64
	cpuS    float64 // child user+system CPU, s
	serverS float64 // server backends' CPU, s (negative: not measured)
	rssKB   int64   // child peak RSS, KiB
}

func run(ctx context.Context, o options) error {
	work, cleanup, err := benchproc.WorkDir("htbench-", o.keep)
	if err != nil {
		return err
	}
	defer cleanup()
	if o.bin, err = benchproc.Hulltally(o.bin, work); err != nil {
		return err
	}

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
	dbURL := cfg.Database.URL
	var pmPID int
	if dbURL == "" {
		defer ledger.StopManaged(context.Background(), cfg)
		if dbURL, err = managedURL(home); err != nil {
			return err
		}
		pmPID = postmasterPID(ledger.DBStatus(ctx, cfg).Dir)
	}

	// Plain table of the same columns for psql; a table of the same layout
	// as reading_blocks (LIKE copies the checks, primary key and storage,
	// never the foreign key).
	cols := []string{"t_s double precision", "pressure_mpa double precision"}
	for g := 0; g < o.gauges; g++ {
		cols = append(cols, fmt.Sprintf("strain_g%d_ue double precision", g+1))
	}
	cols = append(cols, "temp_c double precision")
	if _, err := l.Pool().Exec(ctx, "DROP TABLE IF EXISTS bench_plain; CREATE TABLE bench_plain ("+strings.Join(cols, ", ")+"); "+
		"DROP TABLE IF EXISTS bench_blocks; CREATE TABLE bench_blocks (LIKE reading_blocks INCLUDING ALL)"); err != nil {
		return err
	}

	start, _ := time.Parse(time.RFC3339, "2026-06-01T00:00:00Z")
	if time.Now().Before(start.Add(time.Duration(o.hours * float64(time.Hour)))) {
		start = time.Now().Add(-time.Duration((o.hours + 24) * float64(time.Hour))).UTC().Truncate(time.Hour)
	}
	var res [nSides][]measure
	var rowsPerRound []int
	var plainBytes, blockBytes, htBytes int64
	for r := 0; r < o.rounds; r++ {
		// A new dive each round (new seed, its own hull): a re-log of the
		// same samples would be recognised as a duplicate.
		file := filepath.Join(work, fmt.Sprintf("bench-dive-%d.csv", r+1))
		t0 := time.Now()
		rows, err := benchproc.WriteDive(file, o.hours, o.hz, o.gauges, uint64(r+1))
		if err != nil {
			return err
		}
		// The one-core side logs a dive of its own (same length and noise,
		// another seed): the same file again would be refused as the same
		// samples on another hull.
		file1 := filepath.Join(work, fmt.Sprintf("bench-dive-%d-1.csv", r+1))
		if _, err := benchproc.WriteDive(file1, o.hours, o.hz, o.gauges, uint64(1000+r+1)); err != nil {
			return err
		}
		st, _ := os.Stat(file)
		serial := fmt.Sprintf("BENCH-%02d", r+1)
		if err := addHull(ctx, l, serial, o.gauges); err != nil {
			return err
		}
		if err := addHull(ctx, l, serial+"-1", o.gauges); err != nil {
			return err
		}
		blockCSV := file + ".blocks.csv"
		nBlocks, err := writeBlocksCSV(blockCSV, file, start, cfg.Ingest.BlockSamples)
		if err != nil {
			return err
		}
		fmt.Printf("round %d: %d rows (%.0f MB, %d blocks of %d) generated in %.1f s\n", r+1, rows, float64(st.Size())/1e6, nBlocks, blockSamples(cfg.Ingest.BlockSamples), time.Since(t0).Seconds())
		rowsPerRound = append(rowsPerRound, rows)
		if _, err := l.Pool().Exec(ctx, "TRUNCATE bench_plain, bench_blocks"); err != nil {
			return err
		}
		// Warm the page cache for every side alike.
		if err := benchproc.Warm(file); err != nil {
			return err
		}
		if err := benchproc.Warm(blockCSV); err != nil {
			return err
		}
		if err := benchproc.Warm(file1); err != nil {
			return err
		}
		order := []int{sideHT, sidePlain, sideBlocks, sideHT1}
		if r%2 == 1 {
			slices.Reverse(order)
		}
		for _, side := range order {
			var cmd *exec.Cmd
			switch side {
			case sideHT:
				cmd = exec.CommandContext(ctx, o.bin, "dive", "log", "--hull", serial, "--start", start.Format(time.RFC3339), "--lat", "45", "--json", file)
				cmd.Env = env
			case sideHT1:
				// The same file into a second hull, on one core.
				cmd = exec.CommandContext(ctx, o.bin, "dive", "log", "--hull", serial+"-1", "--start", start.Format(time.RFC3339), "--lat", "45", "--json", file1)
				cmd.Env = append(slices.Clone(env), "GOMAXPROCS=1")
			case sidePlain:
				cmd = psqlCopy(ctx, dbURL, "bench_plain", file)
			case sideBlocks:
				cmd = psqlCopy(ctx, dbURL, "bench_blocks", blockCSV)
			}
			m, err := timeChild(cmd, pmPID)
			if err != nil {
				return fmt.Errorf("round %d, %s: %w", r+1, sideNames[side], err)
			}
			res[side] = append(res[side], m)
			fmt.Printf("  %-20s %8.2f s  %10.0f rows/s  cpu %4.2f%s  peak RSS %6.1f MB\n", sideNames[side], m.wallS, float64(rows)/m.wallS, m.cpuS/m.wallS, serverUse(m), float64(m.rssKB)/1024)
		}
		_ = l.Pool().QueryRow(ctx, "SELECT pg_total_relation_size('bench_plain')").Scan(&plainBytes)
		_ = l.Pool().QueryRow(ctx, "SELECT pg_total_relation_size('bench_blocks')").Scan(&blockBytes)
		_ = l.Pool().QueryRow(ctx, "SELECT pg_total_relation_size('reading_blocks')").Scan(&htBytes)
		if !o.keep {
			os.Remove(file)
			os.Remove(file1)
			os.Remove(blockCSV)
		}
	}

	fmt.Printf("\n%d rounds, order alternating (round 1: %s, %s, %s, %s; round 2 reversed; …)\n", o.rounds, sideNames[0], sideNames[1], sideNames[2], sideNames[3])
	fmt.Printf("%-20s %26s  %32s  %17s  %17s  %s\n", "", "wall s min/median/max", "rows/s min/median/max", "cpu (child)", "cpu (server)", "peak RSS MB max")
	for side := 0; side < nSides; side++ {
		var wall, rps, cpu, srv []float64
		var rss int64
		for i, m := range res[side] {
			wall = append(wall, m.wallS)
			rps = append(rps, float64(rowsPerRound[i])/m.wallS)
			cpu = append(cpu, m.cpuS/m.wallS)
			if m.serverS >= 0 {
				srv = append(srv, m.serverS/m.wallS)
			}
			rss = max(rss, m.rssKB)
		}
		fmt.Printf("%-20s %26s  %32s  %17s  %17s  %.1f\n", sideNames[side], benchproc.MinMedMax(wall, "%.2f"), benchproc.MinMedMax(rps, "%.0f"), benchproc.MinMedMax(cpu, "%.2f"), benchproc.MinMedMax(srv, "%.2f"), float64(rss)/1024)
	}
	fmt.Println("cpu = (user+system CPU time)/wall time; 2.00 = both cores busy the whole time. Server: the backends' CPU (managed cluster only).")
	fmt.Println("\nratio of rows per second, per round (min/median/max):")
	ratio := func(a, b int) []float64 {
		var out []float64
		for i := range res[a] {
			out = append(out, res[b][i].wallS/res[a][i].wallS)
		}
		return out
	}
	fmt.Printf("  hulltally / psql \\copy plain:  %s\n", benchproc.MinMedMax(ratio(sideHT, sidePlain), "%.2f"))
	fmt.Printf("  hulltally / psql \\copy blocks: %s   (same stored bytes, like for like)\n", benchproc.MinMedMax(ratio(sideHT, sideBlocks), "%.2f"))
	fmt.Printf("  psql blocks / psql plain:      %s\n", benchproc.MinMedMax(ratio(sideBlocks, sidePlain), "%.2f"))
	fmt.Printf("  hulltally / hulltally on one core (GOMAXPROCS=1): %s\n", benchproc.MinMedMax(ratio(sideHT, sideHT1), "%.2f"))
	fmt.Printf("\nstored size of the last round: plain table %.0f MB, blocks table %.1f MB; hulltally reading_blocks (all %d rounds, both hulltally sides) %.1f MB\n",
		float64(plainBytes)/1e6, float64(blockBytes)/1e6, o.rounds, float64(htBytes)/1e6)
	return nil
}

// mmm formats min/median/max of v (the median of an even count is the
// mean of the middle two); "n/a" when v is empty.
func serverUse(m measure) string {
	if m.serverS < 0 {
		return ""
	}
	return fmt.Sprintf("  server %4.2f", m.serverS/m.wallS)
}

func addHull(ctx context.Context, l *ledger.Ledger, serial string, gauges int) error {
	sp := &spec.Hull{Serial: serial, Name: "benchmark hull (invented)", MaterialSystem: "carbon/epoxy", Shape: "cylinder",
		InnerRadiusM: 0.5, WallThicknessM: 0.1, LengthM: 2, RatedDepthM: 4000, DesignPressureMPa: 44, ProofPressureMPa: 50, CollapsePressureMPa: 90,
		Components: []spec.Component{{Name: "laminate", Kind: "laminate_cylinder", Transfer: spec.Transfer{Basis: "lame"}, Curve: "carbon-epoxy-cc-illustrative"}}}
	for g := 0; g < gauges; g++ {
		sp.Gauges = append(sp.Gauges, spec.Gauge{Name: fmt.Sprintf("g%d", g+1), Kind: "strain", Component: "laminate"})
	}
	_, err := l.AddHull(ctx, sp, ledger.AddHullOptions{})
	return err
}

func blockSamples(n int) int {
	if n <= 0 {
		return 8192
	}
	return n
}

// writeBlocksCSV writes, one row per block, the blocks hulltally stores
// for the samples file (read with the same reader and block size, encoded
// with ledger/blocks), in the columns of reading_blocks: dive_id, hull_id,
// block_no, first_sample, samples, t_first_ns, t_last_ns, data, sha256,
// the bytea columns as hex. It returns the number of blocks.
func writeBlocksCSV(dst, src string, start time.Time, perBlock int) (int, error) {
	in, err := os.Open(src)
	if err != nil {
		return 0, err
	}
	defer in.Close()
	sr, err := logfile.NewSampleReader(bufio.NewReaderSize(in, 1<<20), src, logfile.SampleOptions{Start: &start, BlockSamples: perBlock})
	if err != nil {
		return 0, err
	}
	out, err := os.Create(dst)
	if err != nil {
		return 0, err
	}
	defer out.Close()
	w := bufio.NewWriterSize(out, 1<<20)
	w.WriteString("dive_id,hull_id,block_no,first_sample,samples,t_first_ns,t_last_ns,data,sha256\n")
	dive, hull := uuid.New().String(), uuid.New().String()
	b := sr.NewBlock()
	var enc, line []byte
	var first int64
	n := 0
	for {
		err := sr.ReadBlock(b)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return n, err
		}
		enc = blocks.Encode(enc[:0], b)
		sum := sha256.Sum256(enc)
		k := b.Len()
		line = append(line[:0], dive...)
		line = append(line, ',')
		line = append(line, hull...)
		line = append(line, ',')
		line = strconv.AppendInt(line, int64(n), 10)
		line = append(line, ',')
		line = strconv.AppendInt(line, first, 10)
		line = append(line, ',')
		line = strconv.AppendInt(line, int64(k), 10)
		line = append(line, ',')
		line = strconv.AppendInt(line, b.TimeNS[0], 10)
		line = append(line, ',')
		line = strconv.AppendInt(line, b.TimeNS[k-1], 10)
		line = append(line, ",\\x"...)
		line = hex.AppendEncode(line, enc)
		line = append(line, ",\\x"...)
		line = hex.AppendEncode(line, sum[:])
		line = append(line, '\n')
		if _, err := w.Write(line); err != nil {
			return n, err
		}
		first += int64(k)
		n++
	}
	if err := w.Flush(); err != nil {
		return n, err
	}
	return n, out.Close()
}

func psqlCopy(ctx context.Context, dbURL, table, file string) *exec.Cmd {
	return exec.CommandContext(ctx, "psql", "-X", "-q", "-v", "ON_ERROR_STOP=1", dbURL, "-c",
		fmt.Sprintf(`\copy %s FROM '%s' WITH (FORMAT csv, HEADER true)`, table, file))
}

// timeChild runs cmd and measures its wall time, its CPU time and peak
// RSS, and (when pmPID > 0) the CPU its server backends used.
func timeChild(cmd *exec.Cmd, pmPID int) (measure, error) {
	m := measure{serverS: -1}
	srv0, srvOK := settledServerCPU(pmPID)
	r, err := benchproc.Run(cmd)
	m.wallS, m.cpuS, m.rssKB = r.WallS, r.CPUS, r.RSSKB
	if err != nil {
		return m, fmt.Errorf("%v\n%s", err, r.Output)
	}
	if srv1, ok := settledServerCPU(pmPID); ok && srvOK {
		m.serverS = srv1 - srv0
	}
	return m, nil
}

// settledServerCPU reads the postmaster's CPU including its reaped
// children (the backends of finished sessions) once it has stopped
// changing, so a backend that is still exiting is counted.
func settledServerCPU(pid int) (float64, bool) {
	if pid <= 0 {
		return 0, false
	}
	prev, ok := serverCPU(pid)
	for i := 0; ok && i < 20; i++ {
		time.Sleep(50 * time.Millisecond)
		cur, ok2 := serverCPU(pid)
		if !ok2 {
			return 0, false
		}
		if cur == prev {
			return cur, true
		}
		prev = cur
	}
	return prev, ok
}

// serverCPU is utime+stime+cutime+cstime of pid from /proc, seconds
// (clock ticks assumed 100 a second, the Linux USER_HZ).
func serverCPU(pid int) (float64, bool) {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return 0, false
	}
	s := string(b)
	i := strings.LastIndexByte(s, ')')
	if i < 0 {
		return 0, false
	}
	f := strings.Fields(s[i+1:])
	// After the command: state is field 3; utime 14 … cstime 17.
	if len(f) < 15 {
		return 0, false
	}
	var ticks int64
	for _, k := range f[11:15] {
		v, err := strconv.ParseInt(k, 10, 64)
		if err != nil {
			return 0, false
		}
		ticks += v
	}
	return float64(ticks) / 100, true
}

// postmasterPID reads the managed server's process id from the
// postmaster.pid of its data folder (<dir>/data); 0 when not found.
func postmasterPID(dir string) int {
	if dir == "" {
		return 0
	}
	b, err := os.ReadFile(filepath.Join(dir, "data", "postmaster.pid"))
	if err != nil {
		return 0
	}
	line, _, _ := strings.Cut(string(b), "\n")
	pid, err := strconv.Atoi(strings.TrimSpace(line))
	if err != nil {
		return 0
	}
	return pid
}

func managedURL(home string) (string, error) {
	// The managed cluster asks for its owner's password (the secret in the
	// home): the cluster package gives the URL with it.
	c, err := cluster.New(home, nil)
	if err != nil {
		return "", err
	}
	return c.URL(), nil
}
