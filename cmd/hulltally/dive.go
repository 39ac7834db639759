package main

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
)

func (a *app) diveCmd() *cobra.Command {
	dive := &cobra.Command{Use: "dive", Short: "Dives: log a data-logger file, list, show"}
	var req ledger.LogRequest
	var lat, start string
	var progress bool
	logc := &cobra.Command{
		Use:   "log --hull SERIAL SAMPLES.csv",
		Short: "Record a dive from its data-logger file (and acoustic-emission hits)",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			req.Samples = args[0]
			if req.Hull == "" {
				return usageError{fmt.Errorf("--hull SERIAL is required")}
			}
			if err := a.fillLog(&req, lat, start); err != nil {
				return err
			}
			if progress {
				req.Progress = func(n int64) { fmt.Fprintf(a.errOut, "progress: %d samples stored\n", n) }
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			d, err := l.LogDive(cmd.Context(), req)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(d)
			}
			if d.Duplicate {
				a.printf("already recorded: dive %s of hull %s (recorded %s); nothing added\n", d.ID, d.Hull, d.RecordedAt.Format(time.RFC3339))
				return nil
			}
			a.printDive(d)
			load, err := l.LoadOf(cmd.Context(), d.ID)
			if err != nil {
				return err
			}
			a.printDiveLoad(load)
			return nil
		},
	}
	f := logc.Flags()
	f.StringVar(&req.Hull, "hull", "", "hull serial (required)")
	f.StringVar(&req.AE, "ae", "", "acoustic-emission hits file (CSV)")
	f.StringVar(&lat, "lat", "", "latitude of the dive site, degrees (default: conservative, see README)")
	f.StringVar(&req.Site, "site", "", "dive site")
	f.StringVar(&req.Operator, "operator", "", "operator's name")
	f.StringVar(&start, "start", "", "start time for files with t_s columns (RFC 3339)")
	f.BoolVar(&progress, "progress", false, "report stored samples on stderr as it goes")

	var hull string
	list := &cobra.Command{
		Use:   "list --hull SERIAL",
		Short: "List a hull's dives",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if hull == "" {
				return usageError{fmt.Errorf("--hull SERIAL is required")}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			ds, err := l.Dives(cmd.Context(), hull)
			if err != nil {
				return &ledger.InputError{Err: err}
			}
			if a.asJSON {
				if ds == nil {
					ds = []ledger.Dive{}
				}
				return a.printJSON(map[string]any{"hull": hull, "dives": ds})
			}
			w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
			fmt.Fprintln(w, "DIVE\tSTART (UTC)\tHOURS\tDEEPEST m\tMAX MPa\tSAMPLES\tAE HITS\tNOTE")
			for _, d := range ds {
				note := ""
				if d.BeyondRated {
					note = "BEYOND RATED DEPTH"
				}
				fmt.Fprintf(w, "%s\t%s\t%.2f\t%.1f\t%.3f\t%d\t%d\t%s\n", d.ID.String()[:8], d.Start.UTC().Format("2006-01-02 15:04"), d.DurationS/3600, d.MaxDepthM, d.MaxPressureMPa, d.Samples, d.AEHits, note)
			}
			w.Flush()
			return nil
		},
	}
	list.Flags().StringVar(&hull, "hull", "", "hull serial (required)")

	show := &cobra.Command{
		Use:   "show ID",
		Short: "Show one dive (the id or its first 8 characters)",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			d, err := l.Dive(cmd.Context(), args[0])
			if err != nil {
				return err
			}
			load, err := l.LoadOf(cmd.Context(), d.ID)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(struct {
					*ledger.Dive
					*ledger.DiveLoad
					Caution string `json:"caution"`
				}{d, load, cautionText()})
			}
			a.printDive(d)
			a.printDiveLoad(load)
			return nil
		},
	}
	var field, value, reason, actor string
	correct := &cobra.Command{
		Use:   "correct ID --field site|operator --value TEXT --reason TEXT [--actor NAME]",
		Short: "Record a correction of a dive's site or operator (the original record stays)",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if actor == "" {
				actor = currentActor()
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			c, err := l.CorrectDive(cmd.Context(), args[0], field, value, reason, actor)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(c)
			}
			a.printf("recorded correction %s of dive %s: %s = %q (%s, by %s)\n", c.ID, c.Dive, c.Field, c.Value, c.Reason, c.Actor)
			return nil
		},
	}
	cf := correct.Flags()
	cf.StringVar(&field, "field", "", "site or operator")
	cf.StringVar(&value, "value", "", "the value it should have had")
	cf.StringVar(&reason, "reason", "", "why (required)")
	cf.StringVar(&actor, "actor", "", "who (default: the login name)")
	dive.AddCommand(logc, list, show, correct)
	return dive
}

func (a *app) printDive(d *ledger.Dive) {
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintf(w, "dive\t%s\n", d.ID)
	fmt.Fprintf(w, "hull\t%s (spec revision %d)\n", d.Hull, d.HullRevision)
	fmt.Fprintf(w, "time\t%s to %s UTC (%.2f h)\n", d.Start.UTC().Format("2006-01-02 15:04:05"), d.End.UTC().Format("2006-01-02 15:04:05"), d.DurationS/3600)
	fmt.Fprintf(w, "deepest\t%.1f m, %.3f MPa gauge (rated depth %.0f m)\n", d.MaxDepthM, d.MaxPressureMPa, d.RatedDepthM)
	if d.BeyondRated {
		fmt.Fprintf(w, "WARNING\tthis dive went beyond the hull's rated depth: it is recorded and flagged\n")
	}
	latNote := ""
	if d.LatitudeAssumed {
		latNote = " (assumed: no --lat given; conservative for the logged column)"
	}
	fmt.Fprintf(w, "latitude\t%.4g°%s\n", d.Latitude, latNote)
	fmt.Fprintf(w, "samples\t%d from %s (%s), %d blocks\n", d.Samples, d.Source, d.LoadColumn, d.Blocks)
	gauges := "none"
	if len(d.Gauges) > 0 {
		gauges = strings.Join(d.Gauges, ", ")
	}
	fmt.Fprintf(w, "strain gauges\t%s\n", gauges)
	fmt.Fprintf(w, "AE hits\t%d\n", d.AEHits)
	if d.Site != "" || d.Operator != "" {
		fmt.Fprintf(w, "site / operator\t%s / %s\n", d.Site, d.Operator)
	}
	for _, c := range d.Corrections {
		fmt.Fprintf(w, "correction\t%s set to %q on %s by %s: %s\n", c.Field, c.Value, c.RecordedAt.Format("2006-01-02"), c.Actor, c.Reason)
	}
	w.Flush()
}

func (a *app) printDiveLoad(load *ledger.DiveLoad) {
	cycles, dmg := load.PressureCycles, load.Damage
	var full, half float64
	biggest := 0.0
	for _, c := range cycles {
		if c.Count == 1 {
			full++
		} else {
			half++
		}
		biggest = max(biggest, c.RangeMPa)
	}
	a.printf("pressure cycles: %d counted (%g full, %g half), largest range %.3f MPa\n", len(cycles), full, half, biggest)
	names := make([]string, 0, len(dmg))
	for n := range dmg {
		names = append(names, n)
	}
	sort.Strings(names)
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "  COMPONENT\tCYCLIC DAMAGE\tSUSTAINED DAMAGE\tTRANSFER\tCURVE")
	for _, n := range names {
		d := dmg[n]
		fmt.Fprintf(w, "  %s\t%.3e\t%.3e\t%s\t%s\n", n, float64(d.Cyclic), float64(d.Sustained), d.Basis, d.Curve)
	}
	w.Flush()
	a.printf("\n%s\n", cautionText())
}

// fillLog reads the --lat and --start flags into a log request.
func (a *app) fillLog(req *ledger.LogRequest, lat, start string) error {
	if lat != "" {
		v, err := strconv.ParseFloat(lat, 64)
		if err != nil {
			return usageError{fmt.Errorf("--lat %q: not a number of degrees", lat)}
		}
		req.Latitude = &v
	}
	if start != "" {
		t, err := time.Parse(time.RFC3339Nano, start)
		if err != nil {
			return usageError{fmt.Errorf("--start %q: not an RFC 3339 time (e.g. 2026-05-01T08:30:00Z)", start)}
		}
		req.Start = &t
	}
	return nil
}
