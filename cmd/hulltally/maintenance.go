package main

import (
	"fmt"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
)

// parseAt reads an optional --at time (RFC 3339); empty means now.
func parseAt(s string) (time.Time, error) {
	if s == "" {
		return time.Time{}, nil
	}
	t, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		return time.Time{}, usageError{fmt.Errorf("--at %q: not an RFC 3339 time (e.g. 2026-07-01T09:00:00Z)", s)}
	}
	return t, nil
}

func (a *app) inspectCmd() *cobra.Command {
	var in ledger.Inspection
	var at string
	c := &cobra.Command{
		Use:   "inspect SERIAL --method M --result pass|fail [--findings TEXT] [--at TIME]",
		Short: "Record an inspection of a hull (append-only, in the audit chain)",
		Example: `  hulltally inspect EX-C4000-01 --method visual --result pass
  hulltally inspect EX-C4000-01 --method ultrasonic --result fail --findings "delamination at the fwd ring" --at 2026-07-01T09:00:00Z`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			var err error
			if in.At, err = parseAt(at); err != nil {
				return err
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			rec, err := l.RecordInspection(cmd.Context(), args[0], in)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(rec)
			}
			a.printf("recorded inspection %s of %s: %s, %s (%s, %s)\n", rec.ID, args[0], rec.Method, rec.Result, rec.Actor, rec.At.Format(time.RFC3339))
			return nil
		},
	}
	f := c.Flags()
	f.StringVar(&in.Method, "method", "", "inspection method (e.g. visual, ultrasonic, shearography)")
	f.StringVar(&in.Findings, "findings", "", "what was found")
	f.StringVar(&in.Result, "result", "", "pass or fail")
	actorFlag(f, &in.Actor)
	f.StringVar(&at, "at", "", "when it was done (RFC 3339; default now)")
	must(c.MarkFlagRequired("method"))
	must(c.MarkFlagRequired("result"))
	must(c.RegisterFlagCompletionFunc("result", fixedValues("pass", "fail")))
	return c
}

func (a *app) prooftestCmd() *cobra.Command {
	var p ledger.ProofTest
	var at, samples, ae, start, lat string
	c := &cobra.Command{
		Use:   "prooftest SERIAL --pressure MPA --result pass|fail [--samples FILE.csv [--ae HITS.csv]] [--at TIME]",
		Short: "Record a proof test; its samples file (optional) is logged as a dive and sets the strain baseline and Felicity reference",
		Example: `  hulltally prooftest EX-C4000-01 --pressure 50 --result pass
  hulltally prooftest EX-C4000-01 --pressure 50 --result pass --samples proof.csv --ae proof-hits.csv`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			var err error
			if p.At, err = parseAt(at); err != nil {
				return err
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			req := ledger.LogRequest{Hull: args[0], Samples: samples, AE: ae, Site: "proof test", Operator: l.Identity().Name}
			if samples != "" {
				if err := a.fillLog(&req, lat, start); err != nil {
					return err
				}
			}
			rec, err := l.ProofTestWithSamples(cmd.Context(), args[0], p, req)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(rec)
			}
			a.printf("recorded proof test %s of %s at %.3f MPa: %s (%s)\n", rec.ID, args[0], rec.PressureMPa, rec.Result, rec.Actor)
			if rec.DiveID != nil {
				a.printf("its samples were logged as dive %s; strain baseline: %v\n", rec.DiveID, rec.Baseline)
			}
			return nil
		},
	}
	f := c.Flags()
	f.Float64Var(&p.PressureMPa, "pressure", 0, "test pressure, MPa gauge")
	f.StringVar(&p.Result, "result", "", "pass or fail")
	f.StringVar(&p.Notes, "notes", "", "notes")
	actorFlag(f, &p.Actor)
	f.StringVar(&at, "at", "", "when (RFC 3339; default now, or the samples' start)")
	f.StringVar(&samples, "samples", "", "the test's data-logger file")
	f.StringVar(&ae, "ae", "", "the test's acoustic-emission hits")
	f.StringVar(&start, "start", "", "start time for files with t_s columns")
	f.StringVar(&lat, "lat", "", "latitude for depth columns")
	must(c.MarkFlagRequired("pressure"))
	must(c.MarkFlagRequired("result"))
	must(c.RegisterFlagCompletionFunc("result", fixedValues("pass", "fail")))
	must(c.MarkFlagFilename("samples", "csv"))
	must(c.MarkFlagFilename("ae", "csv"))
	return c
}

func (a *app) decideCmd() *cobra.Command {
	var d ledger.Decision
	var at string
	var ret, withdraw bool
	c := &cobra.Command{
		Use:   "decide SERIAL (--return-to-service | --withdraw) --reason TEXT [--at TIME]",
		Short: "Record a decision to return a hull to service or to withdraw it",
		Example: `  hulltally decide EX-C4000-01 --return-to-service --reason "inspection passed"
  hulltally decide EX-C4000-01 --withdraw --reason "end of season lay-up"`,
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			if strings.TrimSpace(d.Reason) == "" {
				return usageError{fmt.Errorf("--reason TEXT is required")}
			}
			switch {
			case ret == withdraw:
				return usageError{fmt.Errorf("give exactly one of --return-to-service and --withdraw")}
			case ret:
				d.Kind = ledger.DecisionReturn
			default:
				d.Kind = ledger.DecisionWithdraw
			}
			var err error
			if d.At, err = parseAt(at); err != nil {
				return err
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			rec, err := l.RecordDecision(cmd.Context(), args[0], d)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(rec)
			}
			a.printf("recorded decision %s on %s: %s by %s — %s\n", rec.ID, args[0], rec.Kind, rec.Actor, rec.Reason)
			return nil
		},
	}
	f := c.Flags()
	f.BoolVar(&ret, "return-to-service", false, "return the hull to service")
	f.BoolVar(&withdraw, "withdraw", false, "withdraw the hull from service")
	f.StringVar(&d.Reason, "reason", "", "why (required)")
	actorFlag(f, &d.Actor)
	f.StringVar(&at, "at", "", "when (RFC 3339; default now)")
	must(c.MarkFlagRequired("reason"))
	c.MarkFlagsMutuallyExclusive("return-to-service", "withdraw")
	c.MarkFlagsOneRequired("return-to-service", "withdraw")
	return c
}
