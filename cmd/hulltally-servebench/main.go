// Command hulltally-servebench measures logging a dive through `hulltally
// serve` against `hulltally dive log` of a dive of the same length, in the
// same run, over several interleaved rounds (the order alternates), and
// the service's peak resident memory once four uploads have run at once.
//
// It builds hulltally, makes a home with the managed cluster, a person
// (operator) and a token, starts `hulltally serve` on loopback, and per
// round generates two dives of the same length and noise (another seed
// each: the same samples are refused on a second hull) into two hulls: one
// logged by a `dive log` child, one uploaded over HTTP (multipart, the
// file streamed from disk). It prints min/median/max of each side's wall
// time and rows per second, the per-round ratio service/direct (rows per
// second), and the server process's peak RSS (VmHWM) after the concurrent
// phase.
package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"hulltally/internal/benchproc"
	"hulltally/ledger"
	"hulltally/reports/web/client"
)

type options struct {
	hours  float64
	rows   int
	gauges int
	rounds int
	conc   int
	bin    string
	keep   bool
}

func main() {
	var o options
	flag.Float64Var(&o.hours, "hours", 10, "dive length, hours at 100 Hz (10 h: 3.6 million rows)")
	flag.IntVar(&o.rows, "rows", 0, "dive length in rows (overrides -hours when positive)")
	flag.IntVar(&o.gauges, "gauges", 8, "strain gauges")
	flag.IntVar(&o.rounds, "rounds", 3, "interleaved rounds of both sides")
	flag.IntVar(&o.conc, "concurrent", 4, "uploads at once in the memory phase")
	flag.StringVar(&o.bin, "hulltally", "", "hulltally binary (default: build it)")
	flag.BoolVar(&o.keep, "keep", false, "keep the work folder")
	flag.Parse()
	if o.rows > 0 {
		o.hours = float64(o.rows) / 100 / 3600
	}
	if err := run(context.Background(), o); err != nil {
		fmt.Fprintln(os.Stderr, "hulltally-servebench:", err)
		os.Exit(1)
	}
}

func run(ctx context.Context, o options) error {
	work, cleanup, err := benchproc.WorkDir("htserve-", o.keep)
	if err != nil {
		return err
	}
	defer cleanup()
	if o.bin, err = benchproc.Hulltally(o.bin, work); err != nil {
		return err
	}
	home := filepath.Join(work, "home")
	if err := os.Mkdir(home, 0o755); err != nil {
		return err
	}
	env := append(os.Environ(), "HULLTALLY_HOME="+home)
	ht := func(args ...string) ([]byte, error) {
		c := exec.CommandContext(ctx, o.bin, args...)
		c.Env = env
		out, err := c.Output()
		if err != nil {
			return out, fmt.Errorf("hulltally %s: %w", strings.Join(args, " "), err)
		}
		return out, nil
	}
	defer func() {
		c := exec.Command(o.bin, "db", "stop")
		c.Env = env
		_ = c.Run()
	}()
	nHulls := 2*o.rounds + o.conc
	spec := filepath.Join(work, "hull.yaml")
	for i := range nHulls {
		if err := os.WriteFile(spec, []byte(hullYAML(fmt.Sprintf("SB-%02d", i+1), o.gauges)), 0o644); err != nil {
			return err
		}
		if _, err := ht("hull", "add", "-f", spec); err != nil {
			return err
		}
	}
	if _, err := ht("person", "add", "bench-op", "--role", "operator"); err != nil {
		return err
	}
	out, err := ht("token", "create", "--person", "bench-op", "--days", "1", "--json")
	if err != nil {
		return err
	}
	var tok struct{ Token string }
	if err := json.Unmarshal(out, &tok); err != nil {
		return err
	}

	srv := exec.CommandContext(ctx, o.bin, "serve", "--listen", "127.0.0.1:0")
	srv.Env = env
	stderr, err := srv.StderrPipe()
	if err != nil {
		return err
	}
	if err := srv.Start(); err != nil {
		return err
	}
	defer func() { _ = srv.Process.Kill(); _ = srv.Wait() }()
	url, err := benchproc.ServeURL(stderr)
	if err != nil {
		return err
	}
	go func() { _, _ = io.Copy(io.Discard, stderr) }()

	start := time.Now().Add(-time.Duration((o.hours + 24) * float64(time.Hour))).UTC().Truncate(time.Hour)
	hull := 0
	next := func() string { hull++; return fmt.Sprintf("SB-%02d", hull) }
	var direct, service, ratios []float64
	rowsOf := 0
	for r := range o.rounds {
		fd := filepath.Join(work, fmt.Sprintf("direct-%d.csv", r))
		fs := filepath.Join(work, fmt.Sprintf("service-%d.csv", r))
		rows, err := benchproc.WriteDive(fd, o.hours, 100, o.gauges, uint64(2*r+1))
		if err != nil {
			return err
		}
		if _, err := benchproc.WriteDive(fs, o.hours, 100, o.gauges, uint64(2*r+2)); err != nil {
			return err
		}
		rowsOf = rows
		for _, f := range []string{fd, fs} {
			if err := benchproc.Warm(f); err != nil {
				return err
			}
		}
		hd, hs := next(), next()
		var wd, ws float64
		sides := []string{"direct", "service"}
		if r%2 == 1 {
			slices.Reverse(sides)
		}
		for _, side := range sides {
			switch side {
			case "direct":
				c := exec.CommandContext(ctx, o.bin, "dive", "log", "--hull", hd, "--start", start.Format(time.RFC3339), "--lat", "45", "--json", fd)
				c.Env = env
				m, err := benchproc.Run(c)
				if err != nil {
					return fmt.Errorf("dive log: %w\n%s", err, m.Output)
				}
				wd = m.WallS
			case "service":
				t0 := time.Now()
				if err := uploadFile(ctx, url, tok.Token, hs, fs, start); err != nil {
					return err
				}
				ws = time.Since(t0).Seconds()
			}
		}
		direct, service = append(direct, wd), append(service, ws)
		ratios = append(ratios, wd/ws)
		fmt.Printf("round %d: %d rows: dive log %.2f s, through the service %.2f s, ratio (service rows/s over direct) %.2f\n", r+1, rows, wd, ws, wd/ws)
		if !o.keep {
			os.Remove(fd)
			os.Remove(fs)
		}
	}

	// Memory: o.conc uploads at once.
	var files []string
	for i := range o.conc {
		f := filepath.Join(work, fmt.Sprintf("conc-%d.csv", i))
		if _, err := benchproc.WriteDive(f, o.hours, 100, o.gauges, uint64(1000+i)); err != nil {
			return err
		}
		files = append(files, f)
	}
	var wg sync.WaitGroup
	errs := make([]error, o.conc)
	t0 := time.Now()
	for i, f := range files {
		wg.Add(1)
		h := next()
		go func() {
			defer wg.Done()
			errs[i] = uploadFile(ctx, url, tok.Token, h, f, start)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	hwm, err := peakRSS(srv.Process.Pid)
	if err != nil {
		return err
	}
	fmt.Printf("\n%d rounds of %d rows, order alternating:\n", o.rounds, rowsOf)
	fmt.Printf("  dive log            wall s %s\n", benchproc.MinMedMax(direct, "%.2f"))
	fmt.Printf("  through the service wall s %s\n", benchproc.MinMedMax(service, "%.2f"))
	fmt.Printf("  ratio service/direct (rows per second), per round: %s (goal ≥ 0.9)\n", benchproc.MinMedMax(ratios, "%.2f"))
	fmt.Printf("%d uploads at once: %.2f s; the service's peak RSS over the whole run %.1f MB (goal < 128 MB)\n", o.conc, time.Since(t0).Seconds(), float64(hwm)/1024)
	return nil
}

// uploadFile logs a samples file through the service, as the command
// line's client does (reports/web/client: a streamed multipart upload).
func uploadFile(ctx context.Context, url, token, hull, file string, start time.Time) error {
	c, err := client.New(url, token, nil)
	if err != nil {
		return err
	}
	lat := 45.0
	d, _, err := c.LogDive(ctx, ledger.LogRequest{Hull: hull, Samples: file, Start: &start, Latitude: &lat}, nil)
	if err != nil {
		return fmt.Errorf("upload to %s: %w", hull, err)
	}
	if d.Duplicate {
		return fmt.Errorf("upload to %s: already recorded", hull)
	}
	return nil
}

// peakRSS is a process's peak resident memory (VmHWM), KiB.
func peakRSS(pid int) (int64, error) {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return 0, err
	}
	for _, line := range strings.Split(string(b), "\n") {
		if rest, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			return strconv.ParseInt(strings.TrimSuffix(strings.TrimSpace(rest), " kB"), 10, 64)
		}
	}
	return 0, fmt.Errorf("no VmHWM for process %d", pid)
}

// hullYAML is an invented benchmark hull with gauges g1…gN.
func hullYAML(serial string, gauges int) string {
	var b strings.Builder
	fmt.Fprintf(&b, "serial: %s\nname: benchmark hull (invented)\nmaterial_system: carbon/epoxy\nshape: cylinder\ninner_radius_m: 0.5\nwall_thickness_m: 0.1\nlength_m: 2\n", serial)
	b.WriteString("rated_depth_m: 4000\ndesign_pressure_mpa: 44\nproof_pressure_mpa: 50\ncollapse_pressure_mpa: 90\n")
	b.WriteString("components:\n  - name: laminate\n    kind: laminate_cylinder\n    transfer:\n      basis: lame\n    curve: carbon-epoxy-cc-illustrative\n")
	if gauges > 0 {
		b.WriteString("gauges:\n")
		for g := range gauges {
			fmt.Fprintf(&b, "  - name: g%d\n    kind: strain\n    component: laminate\n", g+1)
		}
	}
	return b.String()
}
