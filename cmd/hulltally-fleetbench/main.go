// Command hulltally-fleetbench builds fleets of given sizes and times
// hulltally's commands on them as whole processes, to show how each grows
// per hull and per dive.
//
// For each size HULLSxDIVES it makes a managed ledger in a work folder and
// fills it through the ledger's own write paths (AddHull, LogDive, and a
// passing inspection and proof test on every other hull, so the fleet
// mixes fit, watch and hold), several hulls at once. Each hull has the
// example spec (testdata/hulls/example-cylinder.yaml) and short synthetic
// dives (ledger/synth: 0.2 Hz, two strain gauges with noise, two acoustic
// emission channels). Then, over several rounds, it runs and times:
//
//   - fleet: the fleet view as read after the writes (every hull from
//     its fleet summary);
//   - hull show, report hull, clear: one hull, the last serial;
//   - verify: every chain and every fleet summary in use; verify
//     --chain-only: the chains alone;
//   - assess: a re-assessment of every hull (it moves every chain, so no
//     summary stands after it);
//   - fleet after assess: the fleet view with every hull evaluated from
//     the ledger (what the view cost before the summary);
//   - fleet rebuild: every summary written afresh.
//
// It prints, per size and command, the min/median/max wall time and the
// child's peak resident memory, then the growth per hull (between two
// sizes with the same dives per hull) and per dive (two sizes with the
// same hulls), from the medians. Run it from the project root:
//
//	go run ./cmd/hulltally-fleetbench -sizes 250x2,1000x2,250x8 -rounds 3
//
// With -pages N it also starts hulltally serve on each fleet, signs a
// maintenance person in, and times N requests of the fleet page and of
// the last hull's page, with the API's JSON of the same as the baseline:
//
//	go run ./cmd/hulltally-fleetbench -sizes 1000x1,1x10000 -only fleet -rounds 1 -pages 20
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"time"

	"golang.org/x/sync/errgroup"

	"hulltally/configs"
	"hulltally/internal/benchproc"
	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
)

// size is a fleet size: hulls of dives each.
type size struct{ hulls, dives int }

func (s size) String() string { return fmt.Sprintf("%dx%d", s.hulls, s.dives) }

// options are the command's flags.
type options struct {
	sizes   []size
	rounds  int
	bin     string
	keep    bool
	workers int
	// cmds are the commands timed (-only, default all).
	cmds []command
	// pages is the requests of each web page timed (0: none).
	pages int
}

func main() {
	var o options
	var sizes string
	flag.StringVar(&sizes, "sizes", "250x2,1000x2,250x8", "fleet sizes HULLSxDIVES, comma-separated")
	flag.IntVar(&o.rounds, "rounds", 3, "rounds of every command")
	flag.StringVar(&o.bin, "hulltally", "", "hulltally binary (default: build it)")
	flag.BoolVar(&o.keep, "keep", false, "keep the work folder")
	flag.IntVar(&o.workers, "workers", runtime.GOMAXPROCS(0), "hulls written at once while building a fleet")
	flag.IntVar(&o.pages, "pages", 0, "also time the web pages through hulltally serve: the fleet page and the last hull's page, this many requests each, against the API's JSON")
	only := flag.String("only", "", "time only these commands, comma-separated (e.g. \"fleet,hull show\"; default: all)")
	flag.Parse()
	o.cmds = commands
	if *only != "" {
		o.cmds = nil
		for _, n := range strings.Split(*only, ",") {
			i := slices.IndexFunc(commands, func(c command) bool { return c.name == strings.TrimSpace(n) })
			if i < 0 {
				fmt.Fprintf(os.Stderr, "hulltally-fleetbench: -only: no command %q\n", n)
				os.Exit(2)
			}
			o.cmds = append(o.cmds, commands[i])
		}
	}
	var err error
	if o.sizes, err = parseSizes(sizes); err != nil {
		fmt.Fprintln(os.Stderr, "hulltally-fleetbench: -sizes:", err)
		os.Exit(2)
	}
	if o.rounds < 1 || o.workers < 1 {
		fmt.Fprintln(os.Stderr, "hulltally-fleetbench: -rounds and -workers must be at least 1")
		os.Exit(2)
	}
	if err := run(context.Background(), o); err != nil {
		fmt.Fprintln(os.Stderr, "hulltally-fleetbench:", err)
		os.Exit(1)
	}
}

func parseSizes(s string) ([]size, error) {
	var out []size
	for _, f := range strings.Split(s, ",") {
		h, d, ok := strings.Cut(strings.TrimSpace(f), "x")
		hn, err1 := strconv.Atoi(h)
		dn, err2 := strconv.Atoi(d)
		if !ok || err1 != nil || err2 != nil || hn < 1 || dn < 1 {
			return nil, fmt.Errorf("%q is not HULLSxDIVES with both at least 1", f)
		}
		out = append(out, size{hn, dn})
	}
	return out, nil
}

// command is one timed command; args may name the last serial.
type command struct {
	name string
	args func(last, dir string) []string
}

var commands = []command{
	{"fleet", func(string, string) []string { return []string{"fleet"} }},
	{"hull show", func(s, _ string) []string { return []string{"hull", "show", s} }},
	{"report hull", func(s, dir string) []string {
		return []string{"report", "hull", s, "-o", filepath.Join(dir, "hull.pdf")}
	}},
	{"clear", func(s, _ string) []string { return []string{"clear", s, "--depth", "1000"} }},
	{"verify", func(string, string) []string { return []string{"verify"} }},
	{"verify --chain-only", func(string, string) []string { return []string{"verify", "--chain-only"} }},
	{"assess", func(string, string) []string { return []string{"assess", "--reason", "benchmark"} }},
	{"fleet after assess", func(string, string) []string { return []string{"fleet"} }},
	{"fleet rebuild", func(string, string) []string { return []string{"fleet", "rebuild"} }},
}

// measure is one timed run.
type measure struct {
	wallS float64
	rssKB int64
}

func run(ctx context.Context, o options) error {
	work, cleanup, err := benchproc.WorkDir("htfleet-", o.keep)
	if err != nil {
		return err
	}
	defer cleanup()
	if o.bin, err = benchproc.Hulltally(o.bin, work); err != nil {
		return err
	}
	specYAML, err := os.ReadFile("testdata/hulls/example-cylinder.yaml")
	if err != nil {
		return fmt.Errorf("the example spec (run from the project root): %w", err)
	}
	medians := map[size]map[string]float64{}
	for i, sz := range o.sizes {
		home := filepath.Join(work, fmt.Sprintf("fleet-%d", i+1))
		t0 := time.Now()
		last, err := build(ctx, home, sz, specYAML, o.workers)
		if err != nil {
			return fmt.Errorf("building fleet %s: %w", sz, err)
		}
		// The summaries were written by this process, another executable
		// than hulltally's (the basis includes the executable's hash):
		// hulltally writes its own before the timing.
		if _, err := timeChild(o.bin, home, []string{"fleet", "rebuild"}); err != nil {
			return fmt.Errorf("fleet %s: %w", sz, err)
		}
		fmt.Printf("fleet %s (%d hulls, %d dives each): built in %.1f s through the ledger's write paths\n", sz, sz.hulls, sz.dives, time.Since(t0).Seconds())
		res := map[string][]measure{}
		for r := 0; r < o.rounds; r++ {
			for _, c := range o.cmds {
				m, err := timeChild(o.bin, home, c.args(last, home))
				if err != nil {
					return fmt.Errorf("%s on fleet %s: %w", c.name, sz, err)
				}
				res[c.name] = append(res[c.name], m)
			}
		}
		medians[sz] = map[string]float64{}
		for _, c := range o.cmds {
			var w, rss []float64
			for _, m := range res[c.name] {
				w, rss = append(w, m.wallS), append(rss, float64(m.rssKB)/1024)
			}
			medians[sz][c.name] = benchproc.Median(w)
			fmt.Printf("  %-19s %s s   peak RSS %s MB\n", c.name, benchproc.MinMedMax(w, "%.3f"), benchproc.MinMedMax(rss, "%.1f"))
		}
		if o.pages > 0 {
			if err := timePages(o.bin, home, last, o.pages); err != nil {
				return fmt.Errorf("pages on fleet %s: %w", sz, err)
			}
		}
		stop := exec.Command(o.bin, "db", "stop")
		stop.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
		if out, err := stop.CombinedOutput(); err != nil {
			return fmt.Errorf("stopping the managed server of fleet %s: %v\n%s", sz, err, out)
		}
	}
	growth(o.sizes, medians, o.cmds)
	return nil
}

// growth prints, from the medians, the time per hull between sizes with
// the same dives per hull and per dive between sizes with the same hulls.
func growth(sizes []size, med map[size]map[string]float64, cmds []command) {
	for i, a := range sizes {
		for _, b := range sizes[i+1:] {
			var what string
			var per float64
			switch {
			case a.dives == b.dives && a.hulls != b.hulls:
				what, per = fmt.Sprintf("per hull (%s to %s)", a, b), float64(b.hulls-a.hulls)
			case a.hulls == b.hulls && a.dives != b.dives:
				what, per = fmt.Sprintf("per dive (%s to %s)", a, b), float64(a.hulls*(b.dives-a.dives))
			default:
				continue
			}
			fmt.Printf("growth %s, ms from the medians:\n", what)
			for _, c := range cmds {
				fmt.Printf("  %-19s %8.3f\n", c.name, 1000*(med[b][c.name]-med[a][c.name])/per)
			}
		}
	}
}

// build makes a managed ledger in home and fills it; it returns the last
// serial.
func build(ctx context.Context, home string, sz size, specYAML []byte, workers int) (string, error) {
	cfg, err := configs.Load(configs.Options{Env: func(k string) (string, bool) {
		if k == "HULLTALLY_HOME" {
			return home, true
		}
		return os.LookupEnv(k)
	}})
	if err != nil {
		return "", err
	}
	cfg.Database.MaxConns = int32(max(4, workers+1))
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		return "", err
	}
	defer l.Close()
	dir := filepath.Join(home, "dives")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", err
	}
	serial := func(h int) string { return fmt.Sprintf("FB-%05d", h) }
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(workers)
	for h := 0; h < sz.hulls; h++ {
		g.Go(func() error { return fillHull(gctx, l, specYAML, serial(h), h, sz.dives, dir) })
	}
	if err := g.Wait(); err != nil {
		return "", err
	}
	return serial(sz.hulls - 1), nil
}

// fillHull adds one hull with its dives; every other hull gets a passing
// inspection and proof test.
func fillHull(ctx context.Context, l *ledger.Ledger, specYAML []byte, serial string, h, dives int, dir string) error {
	sp, err := spec.Parse(specYAML)
	if err != nil {
		return err
	}
	sp.Serial = serial
	if _, err := l.AddHull(ctx, sp, ledger.AddHullOptions{}); err != nil {
		return err
	}
	lat := 45.0
	// Recent dives and records, so that no inspection or proof test has
	// fallen due (a hull whose verdict changes with the time is evaluated
	// at every read, by design).
	t0 := time.Now().UTC().Truncate(time.Hour).Add(-time.Duration(dives)*20*time.Hour - 48*time.Hour)
	for i := 0; i < dives; i++ {
		d := synth.Dive{Start: t0.Add(time.Duration(i) * 20 * time.Hour), SampleHz: 0.2, Latitude: lat, MaxDepthM: float64(500 + (i*37+h*11)%3000),
			DescentMPS: 1, AscentMPS: 1, BottomS: 1800, SurfaceS: 120, WanderM: 5, DepthNoiseM: 0.05,
			Gauges:     []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -118, NoiseUE: 1}, {Name: "axial1", ComplianceUEPerMPa: -50, NoiseUE: 1}},
			AEChannels: []int{1, 2}, AEBottomRate: 3, AEOnsetFrac: 1, AmplitudeMean: 45}
		sf, hf := filepath.Join(dir, serial+"-s.csv"), filepath.Join(dir, serial+"-h.csv")
		if err := writeDive(d, sf, hf, uint64(h*1000+i)); err != nil {
			return err
		}
		if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: sf, AE: hf, Latitude: &lat}); err != nil {
			return fmt.Errorf("hull %s dive %d: %w", serial, i+1, err)
		}
	}
	if h%2 == 0 {
		at := t0.Add(time.Duration(dives) * 20 * time.Hour)
		if _, err := l.RecordInspection(ctx, serial, ledger.Inspection{At: at, Method: "visual", Result: "pass"}); err != nil {
			return err
		}
		if _, err := l.RecordProofTest(ctx, serial, ledger.ProofTest{At: at, PressureMPa: sp.ProofPressureMPa, Result: "pass"}); err != nil {
			return err
		}
	}
	return nil
}

func writeDive(d synth.Dive, samples, hits string, seed uint64) error {
	s, err := os.Create(samples)
	if err != nil {
		return err
	}
	hh, err := os.Create(hits)
	if err != nil {
		s.Close()
		return err
	}
	_, err = d.Write(s, hh, seed)
	return errors.Join(err, s.Close(), hh.Close())
}

func timeChild(bin, home string, args []string) (measure, error) {
	cmd := exec.Command(bin, args...)
	cmd.Env = append(os.Environ(), "HULLTALLY_HOME="+home)
	r, err := benchproc.Run(cmd)
	m := measure{wallS: r.WallS, rssKB: r.RSSKB}
	// clear answers a no-go with exit 3: an answer, not a failure.
	var ee *exec.ExitError
	if err != nil && !(args[0] == "clear" && errors.As(err, &ee) && ee.ExitCode() == 3) {
		return m, fmt.Errorf("%s: %v\n%s", strings.Join(args, " "), err, r.Output)
	}
	return m, nil
}
