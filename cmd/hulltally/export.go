package main

import (
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/ledger/files"
	"hulltally/reports/sign"
)

func (a *app) exportCmd() *cobra.Command {
	var out, keyFile string
	var gz bool
	c := &cobra.Command{
		Use:   "export SERIAL -o FILE",
		Short: "Write one hull's record as one signed bundle that inspectors verify without the database",
		Long: "Writes the hull's whole audit chain — every record's canonical bytes as verify rebuilds them, the raw readings' blocks, " +
			"the acoustic-emission hits, the hull's spec and the latest checkpoint signed by the key — read at one snapshot, as one file (JSON lines; gzip with --gzip " +
			"or a name ending in .gz), signed with the operator's report-signing key. A hull whose chain does not verify, or no longer " +
			"holds the checkpointed head, is not exported. Inspectors check it with 'hulltally verify --bundle FILE --key operator.pem', " +
			"which opens no database, re-checks the hits and re-computes every assessed dive's damage from the bundle's own cycles.",
		Example:           "  hulltally export EX-C4000-01 -o ex-c4000-01.bundle\n  hulltally export EX-C4000-01 -o ex-c4000-01.bundle.gz --key /secure/signing.pem",
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			// The key first: without it nothing is read or written.
			signer, err := a.loadSigner(keyFile, true)
			if err != nil {
				return err
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			var sum *ledger.BundleSummary
			zip := gz || strings.HasSuffix(out, ".gz")
			err = files.WriteAtomic(out, func(w io.Writer) error {
				var zw *gzip.Writer
				if zip {
					zw = gzip.NewWriter(w)
					w = zw
				}
				var err error
				sum, err = l.ExportBundle(cmd.Context(), args[0], w, signer.Key)
				if err != nil {
					return err
				}
				if zw != nil {
					return zw.Close()
				}
				return nil
			}, 0o644)
			if errors.Is(err, ledger.ErrUnknownHull) {
				return &ledger.InputError{Err: err}
			}
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(struct {
					Path string `json:"path"`
					*ledger.BundleSummary
					Fingerprint string `json:"key_fingerprint"`
				}{out, sum, signer.Fingerprint()})
			}
			cp := "no checkpoint signed by this key"
			if sum.Checkpoint > 0 {
				cp = fmt.Sprintf("checkpoint %d", sum.Checkpoint)
			}
			a.printf("wrote %s: hull %s, %d records (%d reading blocks, %d bytes of readings, %d acoustic-emission hits), head %s, %s\n", out, sum.Serial, sum.Records, sum.Blocks, sum.DataBytes, sum.HitRows, sum.Head, cp)
			a.printf("signed by %s, key %s\n", signer.Org(), signer.Fingerprint())
			return nil
		},
	}
	c.Flags().StringVarP(&out, "output", "o", "", "the bundle file to write (required)")
	c.Flags().StringVar(&keyFile, "key", "", "the report-signing key file (default <home>/keys/"+sign.KeyFile+")")
	c.Flags().BoolVar(&gz, "gzip", false, "compress the bundle with gzip (also when FILE ends in .gz)")
	must(c.MarkFlagRequired("output"))
	return c
}

// verifyBundle checks a bundle offline: no database is opened.
func (a *app) verifyBundle(path, keyFile string) error {
	pub, err := readPublicKey(keyFile)
	if err != nil {
		return err
	}
	f, err := os.Open(path)
	if err != nil {
		return &ledger.InputError{Err: fmt.Errorf("bundle: %w", err)}
	}
	defer f.Close()
	res, err := ledger.VerifyBundle(f, pub)
	if errors.Is(err, ledger.ErrNotBundle) {
		// Refused, like any other bundle that does not hold.
		res = &ledger.BundleResult{Problem: err.Error(), SignatureReason: "not read", Kinds: map[string]int64{}}
	} else if err != nil {
		return err
	}
	if !res.OK {
		a.exit = exitFailed
	}
	if a.asJSON {
		return a.printJSON(res)
	}
	if res.OK {
		cp := "no checkpoint in the bundle"
		switch {
		case res.Checkpoint > 0 && res.CheckpointCovers:
			cp = fmt.Sprintf("checkpoint %d holds (records 1-%d; %d after it rest on the bundle's signature alone)", res.Checkpoint, res.CheckpointLength, res.Records-res.CheckpointLength)
		case res.Checkpoint > 0:
			cp = fmt.Sprintf("checkpoint %d is signed but does not name this hull", res.Checkpoint)
		}
		a.printf("bundle verified: hull %s, %d records (%d reading blocks re-hashed, %d acoustic-emission hits re-checked), head %s; signature good; %s\n", res.Serial, res.Records, res.Blocks, res.HitRows, res.Head, cp)
		if res.HitsUnchecked > 0 {
			a.printf("  %d acoustic-emission hit records carry no hit rows (a version 1 bundle): only their digest is in the bundle\n", res.HitsUnchecked)
		}
		a.printBundleDamage(res.Damage)
		return nil
	}
	a.printf("BUNDLE REFUSED: %s\n", res.Problem)
	if !res.SignatureOK && res.SignatureReason != res.Problem {
		a.printf("  signature: %s\n", res.SignatureReason)
	}
	return nil
}

// printBundleDamage says what the damage re-computed from a verified
// bundle's own cycles found.
func (a *app) printBundleDamage(d *ledger.BundleDamageResult) {
	if d == nil {
		a.printf("damage not re-computed\n")
		return
	}
	switch {
	case d.Assessed == 0:
		a.printf("damage: the bundle holds no assessed dive\n")
	case d.AllAgree:
		a.printf("damage re-computed from the bundle's cycles: %d dives, every figure agrees\n", d.Recomputed)
	case d.FirstDisagreement != nil:
		a.printf("%s\n", d.FirstDisagreement.String())
	default:
		a.printf("damage re-computed from the bundle's cycles: %d of %d dives, every figure re-computed agrees; %d dives NOT re-computed\n", d.Recomputed, d.Assessed, len(d.NotRecomputed))
	}
	for i, n := range d.NotRecomputed {
		if i == 3 {
			a.printf("  … and %d more\n", len(d.NotRecomputed)-i)
			break
		}
		a.printf("  dive %s: %s\n", n.Dive, n.Reason)
	}
	if d.TransferUnchecked > 0 {
		a.printf("  %d component figures use a gauge-calibrated transfer factor, which the bundle cannot re-derive: re-computed with the recorded factor\n", d.TransferUnchecked)
	}
	for _, c := range d.Components {
		agree := "agrees"
		if !c.Agree {
			agree = "DISAGREES"
		}
		a.printf("  %-16s recorded %.6g, re-computed %.6g (cyclic %.6g / %.6g, sustained %.6g / %.6g): %s\n", c.Component, c.RecordedTotal, c.RecomputedTotal,
			c.RecordedCyclic, c.RecomputedCyclic, c.RecordedSustained, c.RecomputedSustained, agree)
	}
}
