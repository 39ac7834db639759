package main

import (
	"fmt"
	"time"

	"github.com/spf13/cobra"

	"hulltally/reports"
)

func (a *app) reportCmd() *cobra.Command {
	rep := &cobra.Command{Use: "report", Short: "PDF reports: a hull's fitness-for-service summary, a dive sheet, the fleet summary; verify a report",
		Example: "  hulltally report hull EX-C4000-01 -o hull.pdf\n  hulltally report fleet -o fleet.pdf\n  hulltally report verify hull.pdf"}
	var out string
	mk := func(use, short, kind string, nargs int, example string, complete cobra.CompletionFunc) *cobra.Command {
		c := &cobra.Command{
			Use:               use,
			Short:             short,
			Example:           example,
			Args:              cobra.ExactArgs(nargs),
			ValidArgsFunction: complete,
			RunE: func(cmd *cobra.Command, args []string) error {
				if out == "" {
					return usageError{fmt.Errorf("-o FILE.pdf is required")}
				}
				subject := "fleet"
				if nargs == 1 {
					subject = args[0]
				}
				l, err := a.open(cmd.Context())
				if err != nil {
					return err
				}
				defer l.Close()
				w, err := reports.Write(cmd.Context(), l, kind, subject, out, time.Now())
				if err != nil {
					return err
				}
				// The warning goes to standard error in either mode (the
				// JSON carries it too): a report with characters that could
				// not be printed must not pass unnoticed.
				a.reportWarning(w)
				if a.asJSON {
					return a.printJSON(w)
				}
				a.printf("wrote %s (%d pages), fingerprint %s\n", w.Path, w.Pages, w.Fingerprint)
				return nil
			},
		}
		c.Flags().StringVarP(&out, "output", "o", "", "the PDF file to write (required)")
		must(c.MarkFlagRequired("output"))
		must(c.MarkFlagFilename("output", "pdf"))
		return c
	}
	verify := &cobra.Command{
		Use:     "verify FILE.pdf",
		Short:   "Check a report against the ledger (exit 0 when it matches, 1 with the reason when it does not)",
		Example: "  hulltally report verify hull.pdf\n  hulltally report verify hull.pdf --json",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			v, err := reports.Verify(cmd.Context(), l, args[0])
			if err != nil {
				return err
			}
			if !v.OK {
				a.exit = exitFailed
			}
			if a.asJSON {
				return a.printJSON(v)
			}
			verdict := "REPORT DOES NOT MATCH"
			if v.OK {
				verdict = "report verified"
			}
			a.printf("%s: %s %s generated %s: %s\n", verdict, v.Kind, v.Subject, v.GeneratedAt.Format(time.RFC3339), v.Reason)
			return nil
		},
	}
	verify.ValidArgsFunction = func(*cobra.Command, []string, string) ([]cobra.Completion, cobra.ShellCompDirective) {
		return []cobra.Completion{"pdf"}, cobra.ShellCompDirectiveFilterFileExt
	}
	rep.AddCommand(mk("hull SERIAL -o FILE.pdf", "A hull's fitness-for-service summary", reports.KindHull, 1,
		"  hulltally report hull EX-C4000-01 -o EX-C4000-01.pdf", a.completeSerialArg),
		mk("dive ID -o FILE.pdf", "A one-page dive sheet", reports.KindDive, 1, "  hulltally report dive 1a2b3c4d -o dive.pdf", a.completeDiveArg),
		mk("fleet -o FILE.pdf", "The fleet summary", reports.KindFleet, 0, "  hulltally report fleet -o fleet-summary.pdf", cobra.NoFileCompletions), verify)
	return rep
}

// reportWarning prints, on standard error, the renderer's warning of a
// written report (characters no font could print); nothing when empty.
func (a *app) reportWarning(w *reports.Written) {
	if w != nil && w.Warning != "" {
		fmt.Fprintf(a.errOut, "hulltally: warning: %s: %s\n", w.Path, w.Warning)
	}
}
