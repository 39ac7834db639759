package main

import (
	"errors"
	"fmt"
	"hulltally/ledger/files"
	"time"

	"hulltally/reports/sign"

	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports"
)

func (a *app) reportCmd() *cobra.Command {
	rep := &cobra.Command{Use: "report", Short: "PDF reports: a hull's fitness-for-service summary, a dive sheet, the fleet summary; verify a report",
		Example: "  hulltally report hull EX-C4000-01 -o hull.pdf\n  hulltally report fleet -o fleet.pdf\n  hulltally report verify hull.pdf"}
	var out, keyFile string
	var requireSig bool
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
				// The key first: a key that cannot be used stops the report
				// before anything is written or registered.
				signer, err := a.loadSigner(keyFile, requireSig)
				if err != nil {
					return err
				}
				l, err := a.open(cmd.Context())
				if err != nil {
					return err
				}
				defer l.Close()
				cp, err := l.LatestCheckpoint(cmd.Context())
				if err != nil {
					return err
				}
				w, err := reports.WriteWith(cmd.Context(), l, kind, subject, out, time.Now(), reports.WriteOptions{Signer: signer, Checkpoint: cp})
				if err != nil {
					return err
				}
				if !w.Signed {
					fmt.Fprintf(a.errOut, "hulltally: warning: %s is NOT SIGNED: there is no report-signing key at %s; inspectors cannot check it without the ledger. Make one with 'hulltally key init --org NAME' (or refuse unsigned reports with --require-signature)\n", w.Path, a.keyPath(""))
				}
				// The warning goes to standard error in either mode (the
				// JSON carries it too): a report with characters that could
				// not be printed must not pass unnoticed.
				a.reportWarning(w)
				if a.asJSON {
					return a.printJSON(w)
				}
				a.printf("wrote %s (%d pages), fingerprint %s\n", w.Path, w.Pages, w.Fingerprint)
				if w.Signed {
					a.printf("signed by %s, key %s\n", w.SignedBy, w.SignerFingerprint)
				} else {
					a.printf("NOT SIGNED\n")
				}
				return nil
			},
		}
		c.Flags().StringVarP(&out, "output", "o", "", "the PDF file to write (required)")
		c.Flags().StringVar(&keyFile, "key", "", "the report-signing key file (default <home>/keys/"+sign.KeyFile+")")
		c.Flags().BoolVar(&requireSig, "require-signature", false, "refuse to write an unsigned report when there is no key")
		must(c.MarkFlagRequired("output"))
		must(c.MarkFlagFilename("output", "pdf"))
		return c
	}
	var pubFile, bundleFile string
	var offline bool
	verify := &cobra.Command{
		Use:     "verify FILE.pdf [--key PUBKEY.pem [--offline | --bundle HULL.bundle]]",
		Short:   "Check a report: its signature by the operator's key, and against the ledger (exit 0 when every check passes, 1 with the reason when not)",
		Example: "  hulltally report verify hull.pdf\n  hulltally report verify hull.pdf --key operator.pem\n  hulltally report verify hull.pdf --key operator.pem --offline --json\n  hulltally report verify hull.pdf --key operator.pem --bundle hull.bundle",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			var o reports.VerifyOptions
			if offline && pubFile == "" {
				return usageError{reports.ErrOfflineNeedsKey}
			}
			if pubFile != "" && !offline && bundleFile == "" && a.cfg.Server.URL != "" {
				return usageError{fmt.Errorf("against the service (server.url), the service checks the signature with its own key: drop --key, or add --offline to check the signature here without the ledger")}
			}
			if pubFile != "" {
				pub, _, err := sign.LoadPublic(pubFile)
				if err != nil {
					return &ledger.InputError{Err: err}
				}
				o = reports.VerifyOptions{Key: pub, Offline: offline}
			}
			if bundleFile != "" {
				// Offline against the hull's bundle: no database.
				if o.Key == nil {
					return usageError{errors.New("--bundle needs --key")}
				}
				f, err := files.OpenRegular(cmd.Context(), bundleFile)
				if err != nil {
					return &ledger.InputError{Err: err}
				}
				defer f.Close()
				v, _, err := reports.VerifyWithBundle(cmd.Context(), args[0], o.Key, f)
				if err != nil {
					return err
				}
				if !v.OK {
					a.exit = exitFailed
				}
				if a.asJSON {
					return a.printJSON(v)
				}
				verdict := "report verified against the bundle"
				switch {
				case v.Signature == reports.SigUnsigned || v.Signature == reports.SigAltered || v.Signature == reports.SigOtherKey:
					verdict = "REPORT NOT AUTHENTIC"
				case v.Outdated:
					verdict = "REPORT OUTDATED"
				case !v.OK:
					verdict = "REPORT DOES NOT MATCH THE BUNDLE"
				}
				a.printf("%s: %s %s generated %s: %s\n", verdict, v.Kind, v.Subject, v.GeneratedAt.Format(time.RFC3339), v.Reason)
				return nil
			}
			var v *reports.Verification
			var err error
			rc, rerr := a.remote()
			if rerr != nil {
				return rerr
			}
			switch {
			case offline:
				// No database is opened, nor started, nor the service asked.
				v, err = reports.VerifyWith(cmd.Context(), nil, args[0], o)
			case rc != nil:
				var raw []byte
				if v, raw, err = rc.VerifyReport(cmd.Context(), args[0]); err != nil {
					return err
				}
				if !v.OK {
					a.exit = exitFailed
				}
				if a.asJSON {
					return a.printRaw(raw)
				}
			default:
				l, oerr := a.open(cmd.Context())
				if oerr != nil {
					return oerr
				}
				defer l.Close()
				v, err = reports.VerifyWith(cmd.Context(), l, args[0], o)
			}
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
			switch {
			case v.OK && v.Offline:
				verdict = "report verified offline (signature only)"
			case v.OK:
				verdict = "report verified"
			case v.Signature == reports.SigUnsigned || v.Signature == reports.SigAltered || v.Signature == reports.SigOtherKey:
				verdict = "REPORT NOT AUTHENTIC"
			case v.Outdated:
				verdict = "REPORT OUTDATED"
			}
			a.printf("%s: %s %s generated %s: %s\n", verdict, v.Kind, v.Subject, v.GeneratedAt.Format(time.RFC3339), v.Reason)
			return nil
		},
	}
	verify.Flags().StringVar(&pubFile, "key", "", "the operator's public key or certificate (PEM, from 'hulltally key export'): the report must be signed by it")
	verify.Flags().BoolVar(&offline, "offline", false, "check the signature and the signed fingerprint only, without the ledger (needs --key)")
	verify.Flags().StringVar(&bundleFile, "bundle", "", "check the report, without the ledger, against a hull's bundle from 'hulltally export' (needs --key)")
	verify.MarkFlagsMutuallyExclusive("offline", "bundle")
	must(verify.MarkFlagFilename("key", "pem"))
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
