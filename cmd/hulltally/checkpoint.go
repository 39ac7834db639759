package main

import (
	"bufio"
	"bytes"
	"crypto"
	"crypto/ed25519"
	"crypto/x509"
	"encoding/json"
	"encoding/pem"
	"errors"
	"fmt"
	"hulltally/reports/sign"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"hulltally/ledger"
)

// checkpointLogName is the checkpoint log in the home folder.
const checkpointLogName = "checkpoints.log"

func (a *app) checkpointCmd() *cobra.Command {
	var keyFile, outFile, logFile string
	c := &cobra.Command{
		Use:   "checkpoint",
		Short: "Sign a statement of every hull's chain head and keep it outside the database",
		Long: "Reads every hull's chain head and length at one snapshot (after verifying the whole ledger: a broken chain is not signed), " +
			"signs the statement with the operator's key (the report-signing key 'hulltally key init' makes, or an Ed25519 PKCS#8 key), records it in the ledger's checkpoints table, and appends it as one JSON line " +
			"to the checkpoint log (<home>/" + checkpointLogName + ", mode 0600). Keep copies of the log away from the database: " +
			"'hulltally verify --checkpoint FILE --key PUBKEY.pem' then finds a chain cut short, a hull removed, or records rewritten with their hashes recomputed before the checkpoint.\n\n" +
			"Without --key the operator's key from 'hulltally key init' (<home>/keys) is used; --key names that key file elsewhere, or a PKCS#8 PEM Ed25519 private key. " +
			"Inspectors check with the certificate from 'hulltally key export' (or the PEM public key).",
		Example: "  hulltally checkpoint\n  hulltally checkpoint --key operator.pem -o today.checkpoint --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			key, err := a.checkpointKey(keyFile)
			if err != nil {
				return err
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			cp, err := l.Checkpoint(cmd.Context(), key)
			if err != nil {
				return err
			}
			line, err := json.Marshal(cp)
			if err != nil {
				return err
			}
			line = append(line, '\n')
			if logFile == "" {
				logFile = filepath.Join(a.cfg.Home, checkpointLogName)
			}
			if err := appendLine(logFile, line); err != nil {
				return fmt.Errorf("checkpoint %d is recorded in the ledger but not in the log %s: %w (its line: %s)", cp.Seq, logFile, err, bytes.TrimSpace(line))
			}
			if outFile != "" {
				if err := os.WriteFile(outFile, line, 0o600); err != nil {
					return fmt.Errorf("checkpoint %d is recorded and logged in %s, but writing %s failed: %w", cp.Seq, logFile, outFile, err)
				}
			}
			if a.asJSON {
				return a.printJSON(cp)
			}
			a.printf("checkpoint %d signed: %d hull chains, Merkle root %s; appended to %s\n", cp.Seq, len(cp.Hulls), cp.Root, logFile)
			if outFile != "" {
				a.printf("written to %s\n", outFile)
			}
			return nil
		},
	}
	c.Flags().StringVar(&keyFile, "key", "", "the operator's key file (default: the one 'hulltally key init' made), or an Ed25519 PKCS#8 PEM private key (mode 0600)")
	c.Flags().StringVarP(&outFile, "output", "o", "", "also write the checkpoint (one JSON line) to this file")
	c.Flags().StringVar(&logFile, "log", "", "the checkpoint log to append to (default <home>/"+checkpointLogName+")")
	return c
}

// checkpointKey is the key checkpoints are signed with: the operator's
// report-signing key (sign.LoadFile refuses a key others can read), else
// an Ed25519 PKCS#8 key at --key.
func (a *app) checkpointKey(keyFile string) (crypto.Signer, error) {
	s, err := sign.LoadFile(a.keyPath(keyFile))
	if err == nil {
		return s.Key, nil
	}
	if keyFile == "" {
		return nil, &ledger.InputError{Err: fmt.Errorf("no signing key: %w (make one with 'hulltally key init --org NAME', or give --key)", err)}
	}
	return readPrivateKey(keyFile)
}

// appendLine appends line to the log with one write (O_APPEND), creating
// it with mode 0600, and syncs it.
func appendLine(path string, line []byte) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND|os.O_CREATE, 0o600)
	if err != nil {
		return err
	}
	if _, err := f.Write(line); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// readPrivateKey reads a PKCS#8 PEM Ed25519 private key. A key file that
// others may read is refused: whoever reads it can sign checkpoints.
func readPrivateKey(path string) (ed25519.PrivateKey, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key: %w", err)}
	}
	if st.Mode().Perm()&0o077 != 0 {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key %s has mode %04o: others may read it; make it 0600", path, st.Mode().Perm())}
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key: %w", err)}
	}
	blk, _ := pem.Decode(data)
	if blk == nil || blk.Type != "PRIVATE KEY" {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key %s: not a PEM \"PRIVATE KEY\" (PKCS#8) block", path)}
	}
	k, err := x509.ParsePKCS8PrivateKey(blk.Bytes)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key %s: %w", path, err)}
	}
	ek, ok := k.(ed25519.PrivateKey)
	if !ok {
		return nil, &ledger.InputError{Err: fmt.Errorf("signing key %s is a %T, not an Ed25519 key", path, k)}
	}
	return ek, nil
}

// readPublicKey reads the operator's public key: a certificate or a PEM
// "PUBLIC KEY" of the report-signing key (ECDSA P-256, as 'hulltally key
// export' writes it), or an Ed25519 "PUBLIC KEY".
func readPublicKey(path string) (crypto.PublicKey, error) {
	if pub, _, err := sign.LoadPublic(path); err == nil {
		return pub, nil
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("public key: %w", err)}
	}
	blk, _ := pem.Decode(data)
	if blk == nil || blk.Type != "PUBLIC KEY" {
		return nil, &ledger.InputError{Err: fmt.Errorf("public key %s: not a certificate or a PEM \"PUBLIC KEY\" block", path)}
	}
	k, err := x509.ParsePKIXPublicKey(blk.Bytes)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("public key %s: %w", path, err)}
	}
	ek, ok := k.(ed25519.PublicKey)
	if !ok {
		return nil, &ledger.InputError{Err: fmt.Errorf("public key %s is a %T, not an Ed25519 or ECDSA P-256 key", path, k)}
	}
	return ek, nil
}

// readCheckpoints reads a checkpoint file: one JSON checkpoint a line
// (the checkpoint log, or a file written with -o). Blank lines are
// skipped; any other line that is not a checkpoint is refused.
func readCheckpoints(path string) ([]*ledger.Checkpoint, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("checkpoint file: %w", err)}
	}
	defer f.Close()
	var out []*ledger.Checkpoint
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 0, 1<<16), 1<<30)
	for n := 1; sc.Scan(); n++ {
		b := bytes.TrimSpace(sc.Bytes())
		if len(b) == 0 {
			continue
		}
		var cp ledger.Checkpoint
		dec := json.NewDecoder(bytes.NewReader(b))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&cp); err != nil {
			return nil, &ledger.InputError{Err: fmt.Errorf("checkpoint file %s line %d: %w", path, n, err)}
		}
		out = append(out, &cp)
	}
	if err := sc.Err(); err != nil {
		return nil, &ledger.InputError{Err: fmt.Errorf("checkpoint file %s: %w", path, err)}
	}
	if len(out) == 0 {
		return nil, &ledger.InputError{Err: errors.New("checkpoint file " + path + " holds no checkpoint")}
	}
	return out, nil
}
