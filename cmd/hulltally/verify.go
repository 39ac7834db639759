package main

import (
	"github.com/spf13/cobra"
)

func (a *app) verifyCmd() *cobra.Command {
	return &cobra.Command{
		Use:     "verify",
		Short:   "Recompute every hull's audit chain; exit 1 at the first broken link",
		Example: "  hulltally verify\n  hulltally verify --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			res, err := l.Verify(cmd.Context())
			if err != nil {
				return err
			}
			if !res.OK {
				a.exit = exitFailed
			}
			if a.asJSON {
				return a.printJSON(res)
			}
			if res.OK {
				a.printf("ledger verified: %d records on %d hull chains, every link holds\n", res.Records, res.Hulls)
				return nil
			}
			if b := res.FirstBroken; b != nil && b.Kind != "append_only_guard" {
				a.printf("LEDGER BROKEN: %d records checked; first broken link: hull %s, record %d (%s %s): %s\n", res.Records, b.Hull, b.Seq, b.Kind, b.Key, b.Reason)
			} else {
				a.printf("LEDGER BROKEN: %s\n", res.Problem)
			}
			for _, g := range res.Guards {
				a.printf("  guard: %s\n", g.Detail)
			}
			if len(res.Guards) > 0 {
				a.printf("  (hulltally db migrate restores the guards; the chain shows whether anything was changed while they were down)\n")
			}
			return nil
		},
	}
}
