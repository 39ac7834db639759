package main

import (
	"crypto"
	"errors"
	"os"
	"runtime/debug"
	"strings"

	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports/view"
)

func (a *app) verifyCmd() *cobra.Command {
	var cpFile, keyFile, bundleFile, sinceFile string
	var chainOnly bool
	c := &cobra.Command{
		Use:   "verify",
		Short: "Recompute every hull's audit chain; exit 1 at the first broken link",
		Long: "Recomputes every hull's audit chain from the stored records. With --checkpoint, also checks every signed checkpoint " +
			"in the file (a checkpoint log, or one written by 'hulltally checkpoint -o') against --key, the operator's certificate or public key " +
			"(PEM, from 'hulltally key export'): every checkpointed hull must still exist and its chain must still hold the checkpointed head at the " +
			"checkpointed length. This finds a chain cut short, a hull removed, and records rewritten with every later hash recomputed, " +
			"which the recomputation alone cannot see, as long as the rewritten records are older than the checkpoint; records appended " +
			"after the newest checkpoint are beyond its reach. With --bundle FILE --key CERT.pem, checks one hull's bundle (from " +
			"'hulltally export') instead, without opening any database: its signature, its chain, every reading block's data and its checkpoint. " +
			"With --since FILE, verifies only the records added since the newest checkpoint in FILE (and every hull added since), " +
			"after checking that each chain still holds that checkpoint's head; with --key, the checkpoint's signature is checked first. " +
			"Records before the checkpoint are not re-read: run the full verify as well, less often.",
		Example: "  hulltally verify\n  hulltally verify --json\n  hulltally verify --checkpoint ~/.local/share/hulltally/checkpoints.log --key operator.pub.pem\n  hulltally verify --bundle ex-c4000-01.bundle --key operator.pem\n  hulltally verify --since ~/.local/share/hulltally/checkpoints.log --key operator.pem",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			// verify allocates and drops each record's bytes at once: a
			// collection every 400 % of growth instead of 100 % took 9 %
			// off verify --chain-only of 500 hulls × 100 dives (median of
			// three alternated runs, 13.2 s against 14.5 s) for 15 MB more
			// (52 MB peak); the live heap is still one hull's batch. A
			// GOGC the user set is left as it is.
			if os.Getenv("GOGC") == "" {
				defer debug.SetGCPercent(debug.SetGCPercent(400))
			}
			if bundleFile != "" {
				if cpFile != "" || sinceFile != "" || keyFile == "" {
					return usageError{errors.New("--bundle takes --key (the operator's certificate) and not --checkpoint or --since")}
				}
				return a.verifyBundle(bundleFile, keyFile)
			}
			if sinceFile != "" {
				if cpFile != "" {
					return usageError{errors.New("--since and --checkpoint do not go together")}
				}
				return a.verifySince(cmd, sinceFile, keyFile)
			}
			if (cpFile == "") != (keyFile == "") {
				return usageError{errors.New("--checkpoint and --key go together")}
			}
			var cps []*ledger.Checkpoint
			var pub crypto.PublicKey
			if cpFile != "" {
				k, err := readPublicKey(keyFile)
				if err != nil {
					return err
				}
				pub = k
				if cps, err = readCheckpoints(cpFile); err != nil {
					return err
				}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			if cps != nil {
				return a.verifyCheckpoints(cmd, l, cps, pub)
			}
			res, err := l.VerifyWith(cmd.Context(), ledger.VerifyOptions{FleetSummary: !chainOnly})
			if err != nil {
				return err
			}
			if !res.OK {
				a.exit = exitFailed
			}
			if a.asJSON {
				return a.printJSON(res)
			}
			a.printChain(res)
			return nil
		},
	}
	c.Flags().StringVar(&cpFile, "checkpoint", "", "check the signed checkpoints in this file (JSON lines) as well")
	c.Flags().StringVar(&keyFile, "key", "", "the operator's certificate or public key (PEM, from 'hulltally key export'), with --checkpoint or --bundle")
	c.Flags().BoolVar(&chainOnly, "chain-only", false, "check the chains and guards only, not the fleet summary against the ledger (which evaluates every hull read from it); the output says it was not checked")
	c.Flags().StringVar(&sinceFile, "since", "", "verify only what was added since the newest checkpoint in this file (JSON lines); with --key its signature is checked first")
	c.Flags().StringVar(&bundleFile, "bundle", "", "check this hull bundle (from 'hulltally export') against --key instead, without opening the database")
	return c
}

func (a *app) printChain(res *ledger.VerifyResult) {
	defer a.printSummaryCheck(res.FleetSummary)
	if n := res.ProfilesAsSent; n > 0 {
		defer a.printf("note: %d dive profiles are still stored as before migration 020 (verified all the same, more slowly): hulltally db migrate packs those it can read\n", n)
	}
	if res.OK {
		a.printf("ledger verified: %d records on %d hull chains, every link holds\n", res.Records, res.Hulls)
		return
	}
	if b := res.FirstBroken; b != nil && b.Hull != "" && !strings.HasSuffix(b.Kind, "_guard") {
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
}

// checkpointReport is verify's JSON document with --checkpoint.
type checkpointReport struct {
	OK          bool                       `json:"ok"`
	Chain       *ledger.VerifyResult       `json:"chain"`
	Checkpoints []*ledger.CheckpointResult `json:"checkpoints"`
}

func (a *app) verifyCheckpoints(cmd *cobra.Command, l *ledger.Ledger, cps []*ledger.Checkpoint, pub crypto.PublicKey) error {
	rs, err := l.VerifyCheckpoints(cmd.Context(), cps, pub)
	if err != nil {
		return err
	}
	rep := checkpointReport{OK: true, Checkpoints: rs}
	for _, r := range rs {
		if r.Chain != nil {
			rep.Chain = r.Chain
		}
		if !r.OK {
			rep.OK = false
		}
	}
	if rep.Chain == nil {
		// No checkpoint's signature held: the chains were not read.
		rep.OK = false
	}
	if !rep.OK {
		a.exit = exitFailed
	}
	// Results do not repeat the chain; the report holds it once.
	for _, r := range rs {
		r.Chain = nil
	}
	if a.asJSON {
		return a.printJSON(rep)
	}
	if rep.Chain != nil {
		a.printChain(rep.Chain)
	}
	for _, r := range rs {
		if r.OK {
			grown := 0
			for _, h := range r.Hulls {
				if h.LengthNow > h.Length {
					grown++
				}
			}
			a.printf("checkpoint %d (%s) holds: signature good, %d hull chains extend their checkpointed heads (%d grew since), %d hulls added since\n",
				r.Seq, r.Time.Format("2006-01-02T15:04:05Z07:00"), len(r.Hulls), grown, len(r.New))
			if r.Register != nil {
				a.printf("  register of issued reports: %s (%d entries at the checkpoint, %d now)\n", r.Register.State, r.Register.Length, r.Register.LengthNow)
			}
			continue
		}
		a.printf("CHECKPOINT %d (%s) FAILS: %s\n", r.Seq, r.Time.Format("2006-01-02T15:04:05Z07:00"), r.Reason)
		if r.Register != nil && r.Register.State != ledger.CheckpointExtends {
			a.printf("  register of issued reports: %s: %s\n", r.Register.State, r.Register.Reason)
		}
		for _, h := range r.Hulls {
			if h.State != ledger.CheckpointExtends {
				a.printf("  hull %s: %s: %s\n", h.Serial, h.State, h.Reason)
			}
		}
	}
	return nil
}

// sinceReport is verify's JSON document with --since.
type sinceReport struct {
	OK bool `json:"ok"`
	// Since is the sequence number of the checkpoint whose heads were the
	// starting point.
	Since int64 `json:"since"`
	// SignatureChecked is true when --key was given.
	SignatureChecked bool                     `json:"signature_checked"`
	Chain            *ledger.VerifyResult     `json:"chain"`
	Checkpoint       *ledger.CheckpointResult `json:"checkpoint,omitempty"`
}

// verifySince verifies what was added since the newest checkpoint in
// file, checking its signature first when keyFile is given.
func (a *app) verifySince(cmd *cobra.Command, file, keyFile string) error {
	cps, err := readCheckpoints(file)
	if err != nil {
		return err
	}
	cp := cps[0]
	for _, c := range cps[1:] {
		if c.Seq > cp.Seq {
			cp = c
		}
	}
	var pub crypto.PublicKey
	if keyFile != "" {
		if pub, err = readPublicKey(keyFile); err != nil {
			return err
		}
	}
	l, err := a.open(cmd.Context())
	if err != nil {
		return err
	}
	defer l.Close()
	rep := sinceReport{Since: cp.Seq, SignatureChecked: pub != nil}
	if pub != nil {
		r, err := l.VerifyCheckpointSince(cmd.Context(), cp, pub)
		if err != nil {
			return err
		}
		rep.Chain, rep.Checkpoint, rep.OK = r.Chain, r, r.OK && r.Chain != nil && r.Chain.OK
		r.Chain = nil // the report holds it once
	} else {
		since, err := ledger.SinceCheckpoint(cp)
		if err != nil {
			return err
		}
		if rep.Chain, err = l.VerifySince(cmd.Context(), since); err != nil {
			return err
		}
		rep.OK = rep.Chain.OK
	}
	if !rep.OK {
		a.exit = exitFailed
	}
	if a.asJSON {
		return a.printJSON(rep)
	}
	if rep.Checkpoint != nil && !rep.Checkpoint.SignatureOK {
		a.printf("CHECKPOINT %d (%s) FAILS: %s; nothing else was checked\n", cp.Seq, cp.Time.Format("2006-01-02T15:04:05Z07:00"), rep.Checkpoint.Reason)
		return nil
	}
	if rep.Chain.OK {
		a.printf("ledger verified since checkpoint %d (%s): %d records added on %d hull chains, every link holds\n",
			cp.Seq, cp.Time.Format("2006-01-02T15:04:05Z07:00"), rep.Chain.Records, rep.Chain.Hulls)
	} else {
		a.printChain(rep.Chain)
	}
	if r := rep.Checkpoint; r != nil {
		if r.OK {
			a.printf("checkpoint %d holds: signature good, %d hull chains extend their checkpointed heads, %d hulls added since\n", r.Seq, len(r.Hulls), len(r.New))
		} else {
			a.printf("CHECKPOINT %d (%s) FAILS: %s\n", r.Seq, r.Time.Format("2006-01-02T15:04:05Z07:00"), r.Reason)
			for _, h := range r.Hulls {
				if h.State != ledger.CheckpointExtends {
					a.printf("  hull %s: %s: %s\n", h.Serial, h.State, h.Reason)
				}
			}
		}
	} else {
		a.printf("(checkpoint signature not checked: give --key to check it)\n")
	}
	return nil
}

// printSummaryCheck prints verify's check of the fleet summary.
func (a *app) printSummaryCheck(sc *ledger.SummaryCheck) {
	if sc == nil {
		a.printf("fleet summary: not checked\n")
		return
	}
	a.printf("fleet summary: %d of %d hulls read from it, each evaluated again from the ledger; %d not in use (evaluated from the ledger when read)\n", sc.Current, sc.Hulls, sc.NotInUse)
	for _, d := range sc.Disagree {
		a.printf("  FLEET SUMMARY DISAGREES for hull %s:\n    stored: %s\n    ledger: %s\n", view.TerminalSafe(d.Serial), view.TerminalSafe(d.Stored), view.TerminalSafe(d.Ledger))
	}
}
