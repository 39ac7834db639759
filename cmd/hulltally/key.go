package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/ledger/files"
	"hulltally/reports/sign"
)

// keyDir is the default folder of the operator's report-signing key,
// outside the database: <home>/keys.
func (a *app) keyDir() string { return filepath.Join(a.cfg.Home, "keys") }

// keyPath is the key file: --key FILE when given, else the default.
func (a *app) keyPath(flag string) string {
	if flag != "" {
		return flag
	}
	return filepath.Join(a.keyDir(), sign.KeyFile)
}

// keyInfo is what 'key show' and 'key init' print.
type keyInfo struct {
	Path        string    `json:"path"`
	Algorithm   string    `json:"algorithm"`
	Fingerprint string    `json:"fingerprint"`
	Subject     string    `json:"subject"`
	Org         string    `json:"org"`
	NotBefore   time.Time `json:"not_before"`
	NotAfter    time.Time `json:"not_after"`
}

func infoOf(s *sign.Signer) keyInfo {
	return keyInfo{Path: s.Path, Algorithm: "ECDSA P-256", Fingerprint: s.Fingerprint(), Subject: s.Cert.Subject.String(), Org: s.Org(),
		NotBefore: s.Cert.NotBefore.UTC(), NotAfter: s.Cert.NotAfter.UTC()}
}

func (a *app) printKey(k keyInfo) error {
	if a.asJSON {
		return a.printJSON(k)
	}
	a.printf("key          %s (%s)\nfingerprint  %s (SHA-256 of the public key: give it to inspectors)\nsubject      %s\nvalid        %s to %s\n",
		k.Path, k.Algorithm, k.Fingerprint, k.Subject, k.NotBefore.Format(time.DateOnly), k.NotAfter.Format(time.DateOnly))
	return nil
}

func (a *app) keyCmd() *cobra.Command {
	key := &cobra.Command{Use: "key", Short: "The operator's report-signing key (ECDSA P-256, kept outside the database): make it, show its fingerprint, export it for inspectors",
		Example: "  hulltally key init --org \"Deep Ocean Works\"\n  hulltally key show\n  hulltally key export -o deep-ocean-works.pem"}
	var keyFile string
	keyFlag := func(c *cobra.Command) {
		c.Flags().StringVar(&keyFile, "key", "", "the key file (default <home>/keys/"+sign.KeyFile+")")
		must(c.MarkFlagFilename("key", "pem"))
	}
	var org string
	var years int
	initC := &cobra.Command{
		Use:     "init --org NAME",
		Short:   "Make the report-signing key and its self-signed certificate (never overwrites a key)",
		Example: "  hulltally key init --org \"Deep Ocean Works\"\n  hulltally key init --org \"Deep Ocean Works\" --years 5 --key /secure/hulltally-signing.pem",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			var err error
			if keyFile != "" {
				err = sign.InitFile(keyFile, org, years)
			} else {
				if err = os.MkdirAll(a.cfg.Home, 0o700); err != nil {
					return err
				}
				err = sign.Init(a.keyDir(), org, years)
			}
			if err != nil {
				return &ledger.InputError{Err: err}
			}
			s, err := sign.LoadFile(a.keyPath(keyFile))
			if err != nil {
				return err
			}
			if !a.asJSON {
				a.printf("made the report-signing key; keep the key file secret and backed up, hand inspectors 'hulltally key export'\n")
			}
			return a.printKey(infoOf(s))
		},
	}
	initC.Flags().StringVar(&org, "org", "", "the organisation the certificate names (required)")
	initC.Flags().IntVar(&years, "years", sign.DefaultYears, "the certificate's validity in years")
	must(initC.MarkFlagRequired("org"))
	keyFlag(initC)
	show := &cobra.Command{
		Use:     "show",
		Short:   "Print the key's fingerprint (SHA-256 of the public key), the certificate's subject and validity",
		Example: "  hulltally key show\n  hulltally key show --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			s, err := sign.LoadFile(a.keyPath(keyFile))
			if err != nil {
				return &ledger.InputError{Err: err}
			}
			return a.printKey(infoOf(s))
		},
	}
	keyFlag(show)
	var out string
	export := &cobra.Command{
		Use:     "export -o FILE.pem",
		Short:   "Write the certificate (with the public key) as PEM, to hand to inspectors for 'report verify --key'",
		Example: "  hulltally key export -o deep-ocean-works.pem",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			s, err := sign.LoadFile(a.keyPath(keyFile))
			if err != nil {
				return &ledger.InputError{Err: err}
			}
			if err := files.WriteAtomic(out, func(w io.Writer) error { _, err := w.Write(s.ExportPEM()); return err }, 0o644); err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]string{"path": out, "fingerprint": s.Fingerprint()})
			}
			a.printf("wrote %s: the certificate of %s, key fingerprint %s\n", out, s.Org(), s.Fingerprint())
			return nil
		},
	}
	export.Flags().StringVarP(&out, "output", "o", "", "the PEM file to write (required)")
	must(export.MarkFlagRequired("output"))
	keyFlag(export)
	key.AddCommand(initC, show, export)
	return key
}

// loadSigner reads the report-signing key for 'report': nil (no error)
// when there is none at the default place and a signature is not
// required. A key named with --key must exist; a key that exists but
// cannot be used (its mode, a broken file, an expired certificate) is an
// error, never a silent unsigned report.
func (a *app) loadSigner(keyFile string, require bool) (*sign.Signer, error) {
	s, err := sign.LoadFile(a.keyPath(keyFile))
	if errors.Is(err, sign.ErrNoKey) && keyFile == "" && !require {
		return nil, nil
	}
	if err != nil {
		if errors.Is(err, sign.ErrNoKey) && require {
			err = fmt.Errorf("--require-signature: %w", err)
		}
		return nil, &ledger.InputError{Err: err}
	}
	return s, nil
}
