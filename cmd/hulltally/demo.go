package main

import (
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger/demo"
)

func (a *app) demoCmd() *cobra.Command {
	var dives int
	var hz float64
	c := &cobra.Command{
		Use:   "demo",
		Short: "Set up an invented fleet, generate a season of dives, log them and show the fleet",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			t0 := time.Now()
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			sum, err := demo.Run(cmd.Context(), l, demo.Options{Dir: filepath.Join(a.cfg.Home, "demo"), DivesPerHull: dives, SampleHz: hz, Log: a.errOut})
			if err != nil {
				return err
			}
			hs, err := l.Hulls(cmd.Context())
			if err != nil {
				return err
			}
			dmg, err := a.damages(cmd.Context(), l)
			if err != nil {
				return err
			}
			fl, err := a.fleet(cmd, l)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"demo": sum, "hulls": hs, "damage": dmg, "fleet": fl, "seconds": time.Since(t0).Seconds(), "caution": cautionText()})
			}
			a.printf("demo fleet of the Corrigan Shelf Survey Cooperative (invented), files in %s\n", sum.Dir)
			a.printf("%d dives: %d logged now (%d samples), %d already recorded; %.1f s\n\n", sum.Dives, sum.Logged, sum.Samples, sum.Duplicates, time.Since(t0).Seconds())
			a.printHulls(hs, dmg, false)
			a.printf("\nfleet status, most urgent first:\n")
			a.printFleet(fl)
			return nil
		},
	}
	c.Flags().IntVar(&dives, "dives", 60, "dives per hull")
	c.Flags().Float64Var(&hz, "hz", 0.5, "logger sample rate, Hz")
	return c
}
