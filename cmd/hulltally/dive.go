package main

import (
	"fmt"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/google/uuid"
	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports/view"
)

func (a *app) diveCmd() *cobra.Command {
	dive := &cobra.Command{Use: "dive", Short: "Dives: log a data-logger file, list, show, correct, void",
		Example: "  hulltally dive log --hull EX-C4000-01 --lat 45 dive.csv\n  hulltally dive list --hull EX-C4000-01\n  hulltally dive show 1a2b3c4d"}
	var req ledger.LogRequest
	var lat, start string
	var progress bool
	logc := &cobra.Command{
		Use:   "log --hull SERIAL SAMPLES.csv",
		Short: "Record a dive from its data-logger file (and acoustic-emission hits)",
		Example: `  hulltally dive log --hull EX-C4000-01 --lat 45 dive.csv
  hulltally dive log --hull EX-C4000-01 --ae hits.csv --site "North Bank" --operator "A. Diver" dive.csv --json
  hulltally dive log --hull EX-C4000-01 --start 2026-05-01T08:30:00Z --progress long.csv`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			req.Samples = args[0]
			if err := a.fillLog(&req, lat, start); err != nil {
				return err
			}
			rc, err := a.remote()
			if err != nil {
				return err
			}
			var g *view.Logged
			if rc != nil {
				var sent func(int64)
				if progress {
					sent = func(n int64) { fmt.Fprintf(a.errOut, "progress: %d bytes sent to %s\n", n, rc.URL()) }
				}
				var raw []byte
				if g, raw, err = rc.LogDive(cmd.Context(), req, sent); err != nil {
					return err
				}
				if a.asJSON {
					return a.printRaw(raw)
				}
			} else {
				if progress {
					req.Progress = func(n int64) { fmt.Fprintf(a.errOut, "progress: %d samples stored\n", n) }
				}
				l, err := a.open(cmd.Context())
				if err != nil {
					return err
				}
				defer l.Close()
				if g, err = view.LogDive(cmd.Context(), l, req, time.Now().UTC(), cautionText()); err != nil {
					return err
				}
				if a.asJSON {
					return a.printJSON(g)
				}
			}
			a.printLogged(g)
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
	must(logc.MarkFlagRequired("hull"))
	must(logc.RegisterFlagCompletionFunc("hull", a.completeHullFlag))
	must(logc.MarkFlagFilename("ae", "csv"))

	var hull string
	list := &cobra.Command{
		Use:     "list --hull SERIAL",
		Short:   "List a hull's dives",
		Example: "  hulltally dive list --hull EX-C4000-01\n  hulltally dive list --hull EX-C4000-01 --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
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
				var notes []string
				if d.ProofTest {
					notes = append(notes, "proof test")
				}
				if d.BeyondRated {
					notes = append(notes, "BEYOND RATED DEPTH")
				}
				if d.Voided {
					notes = append(notes, "VOID")
				}
				note := strings.Join(notes, ", ")
				fmt.Fprintf(w, "%s\t%s\t%.2f\t%.1f\t%.3f\t%d\t%d\t%s\n", d.ID.String()[:8], d.Start.UTC().Format("2006-01-02 15:04"), d.DurationS/3600, d.MaxDepthM, d.MaxPressureMPa, d.Samples, d.AEHits, note)
			}
			w.Flush()
			return nil
		},
	}
	list.Flags().StringVar(&hull, "hull", "", "hull serial (required)")
	must(list.MarkFlagRequired("hull"))
	must(list.RegisterFlagCompletionFunc("hull", a.completeHullFlag))

	show := &cobra.Command{
		Use:               "show ID",
		Short:             "Show one dive (the id or its first 8 characters)",
		Example:           "  hulltally dive show 1a2b3c4d\n  hulltally dive show 1a2b3c4d-0000-4000-8000-000000000000 --json",
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeDiveArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			dv, err := view.DiveOf(cmd.Context(), l, args[0])
			if err != nil {
				return err
			}
			d, load := dv.Record, dv.Load
			if a.asJSON {
				return a.printJSON(struct {
					*ledger.Dive
					*ledger.DiveLoad
					Caution string `json:"caution"`
				}{d, load, cautionText()})
			}
			a.printDive(d)
			a.printEvidence(d.Evidence)
			a.printDiveLoad(load)
			return nil
		},
	}
	var voidReason, voidActor string
	void := &cobra.Command{
		Use:               "void ID --reason TEXT",
		Short:             "Take a dive out of damage, evidence and status from now on (logged to the wrong hull, say); the record stays",
		Example:           `  hulltally dive void 1a2b3c4d --reason "logged to the wrong hull"`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeDiveArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			if strings.TrimSpace(voidReason) == "" {
				return usageError{fmt.Errorf("--reason TEXT is required")}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			v, err := l.VoidDive(cmd.Context(), args[0], voidReason, voidActor)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(v)
			}
			a.printf("dive %s of hull %s is void from now on (%s, by %s); it no longer counts for damage, evidence or status\n", v.Dive, v.Hull, v.Reason, v.Actor)
			if len(v.Rejudged) > 0 {
				a.printf("judged again without it: %d later dive(s): %s\n", len(v.Rejudged), shortIDs(v.Rejudged))
			}
			return nil
		},
	}
	void.Flags().StringVar(&voidReason, "reason", "", "why (required)")
	actorFlag(void.Flags(), &voidActor)
	must(void.MarkFlagRequired("reason"))
	var field, value, reason, actor string
	correct := &cobra.Command{
		Use:               "correct ID --field site|operator --value TEXT --reason TEXT",
		Short:             "Record a correction of a dive's site or operator (the original record stays)",
		Example:           `  hulltally dive correct 1a2b3c4d --field site --value "Right Bay" --reason "typed the wrong site"`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeDiveArg,
		RunE: func(cmd *cobra.Command, args []string) error {
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
	actorFlag(cf, &actor)
	must(correct.MarkFlagRequired("field"))
	must(correct.MarkFlagRequired("value"))
	must(correct.MarkFlagRequired("reason"))
	must(correct.RegisterFlagCompletionFunc("field", fixedValues("site", "operator")))
	dive.AddCommand(logc, list, show, correct, void)
	return dive
}

func (a *app) printDive(d *ledger.Dive) {
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintf(w, "dive\t%s\n", d.ID)
	fmt.Fprintf(w, "hull\t%s (spec revision %d)\n", d.Hull, d.HullRevision)
	fmt.Fprintf(w, "time\t%s to %s UTC (%.2f h)\n", d.Start.UTC().Format("2006-01-02 15:04:05"), d.End.UTC().Format("2006-01-02 15:04:05"), d.DurationS/3600)
	fmt.Fprintf(w, "deepest\t%.1f m, %.3f MPa gauge (rated depth %.0f m)\n", d.MaxDepthM, d.MaxPressureMPa, d.RatedDepthM)
	if d.ProofTest {
		fmt.Fprintf(w, "proof test\tthese samples record a proof test of the hull\n")
	}
	if d.BeyondRated {
		fmt.Fprintf(w, "WARNING\tthis dive went beyond the hull's rated depth: it is recorded and flagged\n")
	}
	if d.Void != nil {
		fmt.Fprintf(w, "VOID\tsince %s, by %s: %s (kept in the ledger; not counted for damage, evidence or status)\n", d.Void.RecordedAt.Format(time.RFC3339), d.Void.Actor, d.Void.Reason)
	}
	if d.Replaces != nil {
		fmt.Fprintf(w, "replaces\tvoid dive %s (the same samples, logged to another hull)\n", d.Replaces)
	}
	if len(d.Rejudged) > 0 {
		fmt.Fprintf(w, "logged late\tthe evidence of %d later dive(s) was judged again: %s\n", len(d.Rejudged), shortIDs(d.Rejudged))
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
	if d.RecordedBy != nil {
		fmt.Fprintf(w, "logged by\t%s\n", view.TerminalSafe(*d.RecordedBy))
	}
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

// shortIDs lists dive ids by their first 8 characters.
func shortIDs(ids []uuid.UUID) string {
	out := make([]string, len(ids))
	for i, id := range ids {
		out[i] = id.String()[:8]
	}
	return strings.Join(out, ", ")
}

func optNum(v *float64, format string) string {
	if v == nil {
		return "not evaluated"
	}
	return fmt.Sprintf(format, *v)
}

// printEvidence prints a dive's evidence of damage: Felicity with its
// reference, onset, hold emission, per channel and per gauge figures and
// the data-quality findings.
func (a *app) printEvidence(e *ledger.EvidenceView) {
	if e == nil {
		a.printf("evidence: none recorded for this dive\n")
		return
	}
	a.printf("evidence of damage:\n")
	if !e.Evaluated {
		a.printf("  not evaluated: %s\n", e.Reason)
	}
	if e.ReferencePressureMPa != nil {
		a.printf("  reference pressure %.4g MPa (%s)\n", *e.ReferencePressureMPa, e.ReferenceSource)
	} else {
		a.printf("  reference pressure: none (%s)\n", e.ReferenceSource)
	}
	switch {
	case e.FelicityRatio != nil:
		a.printf("  Felicity ratio %.3f: %s\n", *e.FelicityRatio, e.FelicityReason)
	case e.FelicityLowerBound != nil:
		a.printf("  Felicity ratio not evaluated, at least %.3f: %s\n", *e.FelicityLowerBound, e.FelicityReason)
	default:
		a.printf("  Felicity ratio not evaluated: %s\n", e.FelicityReason)
	}
	if e.OnsetMPa != nil {
		a.printf("  onset of significant emission at %.4g MPa (%s)\n", *e.OnsetMPa, e.OnsetCriterion)
	}
	if h := e.HoldEmission; h != nil {
		verdict := "not significant"
		if h.Significant {
			verdict = "SIGNIFICANT"
		}
		a.printf("  hold emission: %s — %d hits, %d after settling; %s\n", verdict, h.Hits, h.HitsAfterSettle, h.Reason)
	}
	if e.MissingAE {
		a.printf("  acoustic emission: MISSING (the hull has channels and no hits file was given)\n")
	}
	if len(e.Channels) > 0 {
		w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
		fmt.Fprintln(w, "  CHANNEL\tSTATE\tHITS\tHIST. INDEX\tSEVERITY\tHIGH-AMPL.\tCOUNTS\tNOTE")
		for _, c := range e.Channels {
			state := "MISSING"
			switch {
			case c.Checked:
				state = "checked"
			case c.Present:
				state = "hits"
			}
			fmt.Fprintf(w, "  %d\t%s\t%d\t%s\t%s\t%d\t%.0f\t%s\n", c.Channel, state, c.Hits, optNum(c.HistoricIndex, "%.3g"), optNum(c.Severity, "%.3g"),
				c.HighAmplitudeHits, c.TotalCounts, view.TerminalSafe(c.Notes))
		}
		w.Flush()
	}
	if len(e.Gauges) > 0 {
		w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
		fmt.Fprintln(w, "  GAUGE\tCOMPLIANCE µε/MPa\tCHANGE\tRESIDUAL µε\tHYSTERESIS\tCREEP µε\tNOTE")
		for _, g := range e.Gauges {
			change := "no baseline"
			if g.ComplianceChange != nil {
				change = fmt.Sprintf("%+.2f %%", 100**g.ComplianceChange)
			}
			residual := optNum(g.ResidualUE, "%.1f")
			if g.ResidualNotComparable != "" {
				residual = "not comparable"
			}
			note := e.GaugeProblems[g.Gauge]
			fmt.Fprintf(w, "  %s\t%s\t%s\t%s\t%s\t%s\t%s\n", g.Gauge, optNum(g.ComplianceUEPerMPa, "%.2f"), change, residual,
				optNum(g.Hysteresis, "%.3f"), optNum(g.CreepUE, "%.1f"), view.TerminalSafe(note))
		}
		w.Flush()
	}
	for _, g := range e.MissingGauges {
		a.printf("  strain gauge %s: MISSING (no column in the file)\n", g)
	}
	if len(e.DataQuality) == 0 {
		a.printf("  data quality: no findings\n")
	}
	for _, q := range e.DataQuality {
		a.printf("  data quality: %s — %s\n", q.Code, q.Detail)
	}
}

// printLogged prints the answer to logging a dive.
func (a *app) printLogged(g *view.Logged) {
	d := g.Dive
	if d.Duplicate {
		a.printf("already recorded: dive %s of hull %s (recorded %s); nothing added\n", d.ID, d.Hull, d.RecordedAt.Format(time.RFC3339))
		return
	}
	a.printDive(d)
	a.printEvidence(d.Evidence)
	a.printStatusChange(g)
	a.printDiveLoad(g.DiveLoad)
}

// printStatusChange prints the hull's status before and after a dive,
// with the reasons when it changed.
func (a *app) printStatusChange(g *view.Logged) {
	if g.StatusBefore == g.StatusAfter {
		a.printf("hull status: %s (unchanged)\n", g.StatusAfter)
	} else {
		a.printf("hull status: %s → %s\n", strings.ToUpper(g.StatusBefore), strings.ToUpper(g.StatusAfter))
	}
	was := map[string]bool{}
	for _, r := range g.ReasonsBefore {
		was[r.Text] = true
	}
	// The same rule raised by many dives is shown once, with a count.
	for _, x := range view.CollapseReasons(g.Reasons, false) {
		mark := "  "
		if !was[x.First.Text] {
			mark = "+ "
		}
		a.printf("  %s%s: %s\n", mark, x.First.State, x.Text())
	}
}
