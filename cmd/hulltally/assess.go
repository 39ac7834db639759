package main

import (
	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports/view"
)

func (a *app) assessCmd() *cobra.Command {
	var o ledger.AssessOptions
	c := &cobra.Command{
		Use:   "assess [--hull SERIAL]",
		Short: "Re-assess damage from the stored cycles with the configuration in force (the old assessment stays)",
		Example: `  hulltally assess --reason "design fatigue factor 2 after review"
  hulltally --config dff2.yaml assess --hull EX-C4000-01 --reason "curve revision"`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			res, err := l.Assess(cmd.Context(), o)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"assessments": res, "caution": cautionText()})
			}
			for _, r := range res {
				a.printf("hull %s: new assessment %s of %d dives (configuration %s)\n", r.Hull, r.AssessmentID, r.Dives, r.ConfigHash[:12])
				if r.CountedFromRaw > 0 {
					a.printf("  %d dives logged before cycles were stored were counted from their raw readings first\n", r.CountedFromRaw)
				}
				for i, c := range r.Current.Components {
					before := r.Previous.Components[i]
					a.printf("  %-14s damage %.3e -> %.3e (%s -> %s of allowable)\n", c.Name,
						float64(before.CyclicDamage+before.SustainedDamage), float64(c.CyclicDamage+c.SustainedDamage), view.Percent(float64(before.Ratio)), view.Percent(float64(c.Ratio)))
				}
				a.printf("  remaining dives: %s -> %s\n", view.LifeOf("", r.Previous).Short(), view.LifeOf("", r.Current).Short())
			}
			a.printf("\n%s\n", cautionText())
			return nil
		},
	}
	c.Flags().StringVar(&o.Hull, "hull", "", "one hull (default: every hull)")
	c.Flags().StringVar(&o.Reason, "reason", "", "why (for the record)")
	actorFlag(c.Flags(), &o.Actor)
	must(c.RegisterFlagCompletionFunc("hull", a.completeHullFlag))
	return c
}
