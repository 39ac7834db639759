package main

import (
	"fmt"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"hulltally/fatigue/fitness"
	"hulltally/ledger"
	"hulltally/reports/view"
)

func (a *app) clearCmd() *cobra.Command {
	var depth, bottom float64
	c := &cobra.Command{
		Use:   "clear SERIAL --depth M [--bottom-time MIN]",
		Short: "Pre-dive clearance: go or no-go for the planned dive, with every reason (exit 0 go, 3 no-go)",
		Example: `  hulltally clear EX-C4000-01 --depth 3500
  hulltally clear EX-C4000-01 --depth 3500 --bottom-time 120 --json   # read "go" and "reasons", or the exit code`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			if depth <= 0 {
				return usageError{fmt.Errorf("--depth M (the planned depth in metres, more than 0) is required")}
			}
			rc, err := a.remote()
			if err != nil {
				return err
			}
			var c *ledger.Clearance
			var raw []byte // the service's answer, printed as it came
			if rc != nil {
				c, raw, err = rc.Clear(cmd.Context(), args[0], depth, bottom)
			} else {
				l, oerr := a.open(cmd.Context())
				if oerr != nil {
					return oerr
				}
				defer l.Close()
				c, err = l.Clear(cmd.Context(), args[0], depth, bottom, time.Now().UTC())
			}
			if err != nil {
				return err
			}
			if !c.Go {
				a.exit = exitNoGo
			}
			if a.asJSON && raw != nil {
				return a.printRaw(raw)
			}
			if a.asJSON {
				return a.printJSON(struct {
					*ledger.Clearance
					Caution string `json:"caution"`
				}{c, cautionText()})
			}
			verdict := "GO"
			if !c.Go {
				verdict = "NO-GO"
			}
			a.printf("%s: %s for %.0f m", c.Hull, verdict, c.DepthM)
			if c.BottomTimeMin > 0 {
				a.printf(" and %.0f min at depth", c.BottomTimeMin)
			}
			a.printf(" (status %s)\n", c.Status)
			// The same rule raised by many dives is shown once, with a
			// count; --json lists each.
			for _, x := range view.CollapseReasons(c.Reasons, true) {
				r := x.First
				mark := "  ok  "
				switch {
				case r.NoGo:
					mark = "  NO  "
				case r.State == string(fitness.Watch):
					mark = "  note"
				}
				a.printf("%s %s\n", mark, x.Text())
			}
			a.printf("predicted damage of the planned dive: %s of the allowable (%s)\n", view.Percent(float64(c.PredictedDamageRatio)), c.PredictionBasis)
			a.printf("planned pressure %.3f MPa against the collapse pressure %.3f MPa (%.0f %%)\n", c.PressureMPa, c.CollapsePressureMPa, 100*c.PressureMPa/c.CollapsePressureMPa)
			a.printImplosion(c.Implosion, fmt.Sprintf("at the planned depth %.0f m", c.DepthM))
			a.printf("\n%s\n", cautionText())
			return nil
		},
	}
	c.Flags().Float64Var(&depth, "depth", 0, "planned depth, m (required)")
	c.Flags().Float64Var(&bottom, "bottom-time", 0, "planned time at depth, minutes (left out: the typical recent dive's, or the design dive's with none on record)")
	must(c.MarkFlagRequired("depth"))
	return c
}

func (a *app) fleetCmd() *cobra.Command {
	c := &cobra.Command{
		Use:     "fleet",
		Short:   "Every hull with status, damage, remaining dives, last dive and open flags; most urgent first",
		Example: "  hulltally fleet\n  hulltally fleet --json\n  hulltally fleet rebuild",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			rc, err := a.remote()
			if err != nil {
				return err
			}
			var fl []view.FleetRow
			var raw []byte // the service's answer, printed as it came
			if rc != nil {
				fl, raw, err = rc.Fleet(cmd.Context())
			} else {
				l, oerr := a.open(cmd.Context())
				if oerr != nil {
					return oerr
				}
				defer l.Close()
				fl, err = view.FleetRowsOf(cmd.Context(), l, time.Now().UTC())
			}
			if err != nil {
				return err
			}
			if a.asJSON && raw != nil {
				return a.printRaw(raw)
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"hulls": fl, "caution": cautionText()})
			}
			a.printFleet(fl)
			return nil
		},
	}
	c.AddCommand(&cobra.Command{
		Use:   "rebuild",
		Short: "Evaluate every hull and write the fleet summary the fleet view reads (and note any status that changed, as status record does)",
		Long: "The fleet view reads each hull from a derived summary written after every write, and evaluates from the ledger any hull " +
			"whose summary no longer stands for it (a write since, another configuration or build, or a verdict that changes with the time, " +
			"such as an inspection falling due). This command writes every hull's summary afresh, for example after an assess, an upgrade or a " +
			"configuration change; verify checks the summaries in use against the ledger.",
		Example: "  hulltally fleet rebuild\n  hulltally fleet rebuild --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			t0 := time.Now()
			n, err := l.RebuildFleetSummary(cmd.Context(), time.Now().UTC().Truncate(time.Microsecond), 0)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"written": n, "seconds": time.Since(t0).Seconds()})
			}
			a.printf("fleet summary rebuilt: %d hulls written in %.1f s\n", n, time.Since(t0).Seconds())
			return nil
		},
	})
	return c
}

// printFleet prints the fleet view, most urgent first, with each hull's
// open reasons.
func (a *app) printFleet(fl []view.FleetRow) {
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "SERIAL\tNAME\tSTATUS\tDAMAGE/ALLOWABLE\tGOVERNING\tDIVES LEFT\tLAST DIVE\tOPEN FLAGS")
	for _, r := range fl {
		last := "-"
		if r.LastDive != nil {
			last = r.LastDive.UTC().Format("2006-01-02")
		}
		fmt.Fprintf(w, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%d\n", view.TerminalSafe(r.Serial), view.TerminalSafe(r.Name), strings.ToUpper(r.Status), view.Percent(float64(r.Ratio)), r.Governing, r.Remaining, last, len(r.OpenFlags))
	}
	w.Flush()
	for _, r := range fl {
		if len(r.OpenFlags) == 0 && r.Status != "withdrawn" {
			continue
		}
		a.printf("\n%s %s — %s:\n", view.TerminalSafe(r.Serial), view.TerminalSafe(r.Name), r.Status)
		// The same rule raised by many dives is shown once with a count.
		for _, x := range view.CollapseReasons(r.Reasons, false) {
			a.printf("  [%s] %s\n", x.First.State, x.Text())
		}
	}
	a.printf("\n%s\n", cautionText())
}
