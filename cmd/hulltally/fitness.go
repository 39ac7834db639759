package main

import (
	"fmt"
	"sort"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"hulltally/fatigue/fitness"
	"hulltally/ledger"
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
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			c, err := l.Clear(cmd.Context(), args[0], depth, bottom, time.Now().UTC())
			if err != nil {
				return err
			}
			if !c.Go {
				a.exit = exitNoGo
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
			seen := map[string]int{}
			for _, r := range c.Reasons {
				mark := "  ok  "
				switch {
				case r.NoGo:
					mark = "  NO  "
				case r.State == string(fitness.Watch):
					mark = "  note"
				}
				// The same rule raised by many dives is shown once.
				if r.Kind == "flag" {
					seen[r.Code]++
					if seen[r.Code] > 1 {
						continue
					}
				}
				a.printf("%s %s\n", mark, short(r.Text))
			}
			for _, code := range sortedKeys(seen) {
				if n := seen[code]; n > 1 {
					a.printf("       (%s raised by %d dives in all; --json lists each)\n", code, n)
				}
			}
			a.printf("predicted damage of the planned dive: %s of the allowable (%s)\n", pct(float64(c.PredictedDamageRatio)), c.PredictionBasis)
			a.printf("planned pressure %.3f MPa against the collapse pressure %.3f MPa (%.0f %%)\n", c.PressureMPa, c.CollapsePressureMPa, 100*c.PressureMPa/c.CollapsePressureMPa)
			a.printImplosion(c.Implosion, fmt.Sprintf("at the planned depth %.0f m", c.DepthM))
			a.printf("\n%s\n", cautionText())
			return nil
		},
	}
	c.Flags().Float64Var(&depth, "depth", 0, "planned depth, m (required)")
	c.Flags().Float64Var(&bottom, "bottom-time", 0, "planned time at depth, minutes")
	must(c.MarkFlagRequired("depth"))
	return c
}

// urgency orders statuses for the fleet view: hold first.
func urgency(s string) int {
	switch s {
	case "hold":
		return 0
	case "watch":
		return 1
	case "fit":
		return 2
	}
	return 3 // withdrawn: out of service
}

func (a *app) fleetCmd() *cobra.Command {
	return &cobra.Command{
		Use:     "fleet",
		Short:   "Every hull with status, damage, remaining dives, last dive and open flags; most urgent first",
		Example: "  hulltally fleet\n  hulltally fleet --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			fl, err := a.fleet(cmd, l)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"hulls": fl, "caution": cautionText()})
			}
			a.printFleet(fl)
			return nil
		},
	}
}

// fleetRow is one hull of the fleet view.
type fleetRow struct {
	Serial string `json:"serial"`
	Name   string `json:"name"`
	Status string `json:"status"`
	// DamagePercent is null, with DamageOverload, when the damage is
	// infinite (a static overload): never the string "inf".
	DamagePercent  *float64 `json:"damage_percent_of_allowable"`
	DamageOverload bool     `json:"damage_overload"`
	Governing      string   `json:"governing_component"`
	RemainingDives *int64   `json:"remaining_dives"`
	Remaining      string   `json:"remaining"`
	// RemainingMoreThan: the figure is the horizon; RemainingReason says
	// how the figure was reached, or why there is none.
	RemainingMoreThan bool            `json:"remaining_more_than"`
	RemainingStatus   string          `json:"remaining_status"`
	RemainingReason   string          `json:"remaining_reason"`
	LastDive          *time.Time      `json:"last_dive"`
	OpenFlags         []ledger.Reason `json:"open_flags"`
	Reasons           []ledger.Reason `json:"reasons"`
	ratio             float64         // the governing damage ratio, for sorting and the text
}

func (a *app) fleet(cmd *cobra.Command, l *ledger.Ledger) ([]fleetRow, error) {
	hs, err := l.Hulls(cmd.Context())
	if err != nil {
		return nil, err
	}
	now := time.Now().UTC()
	out := []fleetRow{}
	for _, s := range hs {
		h, err := l.Hull(cmd.Context(), s.Serial)
		if err != nil {
			return nil, err
		}
		// A read: evaluated, not recorded.
		f, err := l.FitnessAt(cmd.Context(), h, now)
		if err != nil {
			return nil, err
		}
		r := fleetRow{Serial: s.Serial, Name: s.Name, Status: f.Status, ratio: float64(f.Damage.GoverningRatio),
			Governing: f.Damage.Governing, RemainingDives: f.Damage.RemainingDives, Remaining: remaining(f.Damage), LastDive: f.LastDive,
			RemainingMoreThan: f.Damage.RemainingMoreThan, RemainingStatus: f.Damage.RemainingStatus, RemainingReason: f.Damage.RemainingReason,
			OpenFlags: []ledger.Reason{}, Reasons: f.Reasons}
		for _, x := range f.Reasons {
			if x.Kind == "flag" && x.State != string(fitness.Fit) {
				r.OpenFlags = append(r.OpenFlags, x)
			}
		}
		r.DamagePercent, r.DamageOverload = percentOf(r.ratio)
		out = append(out, r)
	}
	sort.SliceStable(out, func(i, j int) bool {
		if ui, uj := urgency(out[i].Status), urgency(out[j].Status); ui != uj {
			return ui < uj
		}
		return out[i].ratio > out[j].ratio
	})
	return out, nil
}

func (a *app) printFleet(fl []fleetRow) {
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "SERIAL\tNAME\tSTATUS\tDAMAGE/ALLOWABLE\tGOVERNING\tDIVES LEFT\tLAST DIVE\tOPEN FLAGS")
	for _, r := range fl {
		last := "-"
		if r.LastDive != nil {
			last = r.LastDive.UTC().Format("2006-01-02")
		}
		fmt.Fprintf(w, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%d\n", r.Serial, r.Name, strings.ToUpper(r.Status), pct(r.ratio), r.Governing, r.Remaining, last, len(r.OpenFlags))
	}
	w.Flush()
	for _, r := range fl {
		if len(r.OpenFlags) == 0 && r.Status != "withdrawn" {
			continue
		}
		a.printf("\n%s %s — %s:\n", r.Serial, r.Name, r.Status)
		shown := map[string]int{}
		for _, x := range r.Reasons {
			if x.State == string(fitness.Fit) {
				continue
			}
			// The same rule raised by many dives is shown once with a count.
			key := x.Code + "|" + string(x.State)
			if shown[key] > 0 {
				shown[key]++
				continue
			}
			shown[key] = 1
			a.printf("  [%s] %s\n", x.State, short(x.Text))
		}
		for _, key := range sortedKeys(shown) {
			if n := shown[key]; n > 1 {
				parts := strings.Split(key, "|")
				a.printf("  (%s at %s: raised by %d dives in all)\n", parts[0], parts[1], n)
			}
		}
	}
	a.printf("\n%s\n", cautionText())
}

// short cuts a reason's text before its rule, basis and source, which the
// JSON output and the reports carry in full.
func short(text string) string {
	if i := strings.Index(text, " [rule "); i > 0 {
		return text[:i]
	}
	return text
}

func sortedKeys(m map[string]int) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}
