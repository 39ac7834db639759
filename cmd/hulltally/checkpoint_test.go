package main

import (
	"bytes"
	"context"
	"crypto/ed25519"
	"crypto/rand"
	"crypto/x509"
	"encoding/json"
	"encoding/pem"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
)

// writeKeys writes an Ed25519 key pair as PKCS#8 and PKIX PEM files.
func writeKeys(t *testing.T, dir, name string) (priv, pub string) {
	t.Helper()
	pk, sk, err := ed25519.GenerateKey(rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	skb, err := x509.MarshalPKCS8PrivateKey(sk)
	if err != nil {
		t.Fatal(err)
	}
	pkb, err := x509.MarshalPKIXPublicKey(pk)
	if err != nil {
		t.Fatal(err)
	}
	priv, pub = filepath.Join(dir, name+".pem"), filepath.Join(dir, name+".pub.pem")
	if err := os.WriteFile(priv, pem.EncodeToMemory(&pem.Block{Type: "PRIVATE KEY", Bytes: skb}), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(pub, pem.EncodeToMemory(&pem.Block{Type: "PUBLIC KEY", Bytes: pkb}), 0o644); err != nil {
		t.Fatal(err)
	}
	return priv, pub
}

// runCheckpoint runs `hulltally checkpoint` in this process (the command
// is wired into the root command by the lead; here it is added to it).
func (e *env) runCheckpoint(args ...string) (string, int) {
	e.t.Helper()
	e.t.Setenv("HULLTALLY_DATABASE_URL", e.url)
	e.t.Setenv("HULLTALLY_HOME", e.home)
	var out bytes.Buffer
	a := &app{out: &out, errOut: &out, jsonArg: jsonRequested(args)}
	root := a.rootCmd()
	c := a.checkpointCmd()
	wireUsage(c)
	root.AddCommand(c)
	root.SetArgs(append([]string{"checkpoint"}, args...))
	cmd, err := root.ExecuteContextC(context.Background())
	if err != nil {
		a.fail(cmd, err)
	}
	return out.String(), a.exit
}

func TestCheckpointCLI(t *testing.T) {
	e := newEnv(t)
	dir := t.TempDir()
	priv, pub := writeKeys(t, dir, "operator")
	_, otherPub := writeKeys(t, dir, "other")
	logPath := filepath.Join(e.home, "checkpoints.log")

	// A key others may read is refused, and nothing is signed.
	loose := filepath.Join(dir, "loose.pem")
	data, _ := os.ReadFile(priv)
	if err := os.WriteFile(loose, data, 0o644); err != nil {
		t.Fatal(err)
	}
	if out, code := e.runCheckpoint("--key", loose); code != exitInput || !strings.Contains(out, "0644") {
		t.Fatalf("loose key: exit %d\n%s", code, out)
	}
	if out, code := e.runCheckpoint(); code != exitInput {
		t.Fatalf("no key: exit %d\n%s", code, out)
	}

	one := filepath.Join(dir, "one.checkpoint")
	out, code := e.runCheckpoint("--key", priv, "-o", one)
	if code != 0 || !strings.Contains(out, "checkpoint 1 signed: 1 hull chains") {
		t.Fatalf("checkpoint: exit %d\n%s", code, out)
	}
	out, code = e.runCheckpoint("--key", priv, "--json")
	var cp2 map[string]any
	if code != 0 || json.Unmarshal([]byte(out), &cp2) != nil || cp2["seq"] != float64(2) {
		t.Fatalf("second checkpoint: exit %d\n%s", code, out)
	}
	st, err := os.Stat(logPath)
	if err != nil || st.Mode().Perm() != 0o600 {
		t.Fatalf("checkpoint log: %v %v", st, err)
	}
	logData, _ := os.ReadFile(logPath)
	if n := strings.Count(string(logData), "\n"); n != 2 {
		t.Fatalf("checkpoint log has %d lines:\n%s", n, logData)
	}

	// Both checkpoints of the log hold; the -o file holds the first.
	out = e.ok("verify", "--checkpoint", logPath, "--key", pub)
	if !strings.Contains(out, "ledger verified") || !strings.Contains(out, "checkpoint 1 (") || !strings.Contains(out, "checkpoint 2 (") {
		t.Fatalf("verify --checkpoint:\n%s", out)
	}
	var rep struct {
		OK          bool `json:"ok"`
		Checkpoints []struct {
			Seq         int64 `json:"seq"`
			OK          bool  `json:"ok"`
			SignatureOK bool  `json:"signature_ok"`
			Hulls       []struct {
				State string `json:"state"`
			} `json:"hulls"`
		} `json:"checkpoints"`
	}
	e.jsonOK(&rep, "verify", "--checkpoint", one, "--key", pub)
	if !rep.OK || len(rep.Checkpoints) != 1 || !rep.Checkpoints[0].SignatureOK || rep.Checkpoints[0].Hulls[0].State != "extends" {
		t.Fatalf("verify --checkpoint one: %+v", rep)
	}

	// Another operator's key: refused, exit 1.
	out, _, code = e.run("verify", "--checkpoint", one, "--key", otherPub)
	if code != exitFailed || !strings.Contains(out, "CHECKPOINT 1") {
		t.Fatalf("other key: exit %d\n%s", code, out)
	}
	// --checkpoint without --key is a usage error.
	if _, _, code = e.run("verify", "--checkpoint", one); code != exitInput {
		t.Fatalf("--checkpoint alone: exit %d", code)
	}

	// --since: nothing added after checkpoint 2, then one dive's records.
	type sinceRep struct {
		OK               bool  `json:"ok"`
		Since            int64 `json:"since"`
		SignatureChecked bool  `json:"signature_checked"`
		Chain            struct {
			OK      bool  `json:"ok"`
			Records int64 `json:"records"`
		} `json:"chain"`
	}
	var sr sinceRep
	e.jsonOK(&sr, "verify", "--since", logPath, "--key", pub)
	if !sr.OK || sr.Since != 2 || !sr.SignatureChecked || sr.Chain.Records != 0 {
		t.Fatalf("verify --since before a dive: %+v", sr)
	}
	e.logDive(t, 3, 300)
	sr = sinceRep{}
	e.jsonOK(&sr, "verify", "--since", logPath, "--key", pub)
	if !sr.OK || sr.Since != 2 || sr.Chain.Records < 1 {
		t.Fatalf("verify --since after a dive: %+v", sr)
	}
	if out = e.ok("verify", "--since", logPath); !strings.Contains(out, "ledger verified since checkpoint 2") || !strings.Contains(out, "signature not checked") {
		t.Fatalf("verify --since without --key:\n%s", out)
	}
	// Another operator's key: the checkpoint is refused, exit 1.
	out, _, code = e.run("verify", "--since", logPath, "--key", otherPub)
	if code != exitFailed || !strings.Contains(out, "CHECKPOINT 2") {
		t.Fatalf("--since, other key: exit %d\n%s", code, out)
	}
	if _, _, code = e.run("verify", "--since", logPath, "--checkpoint", logPath, "--key", pub); code != exitInput {
		t.Fatalf("--since with --checkpoint: exit %d", code)
	}

	// The hull removed with its chain: plain verify passes, the
	// checkpoint does not.
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, e.url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	rows, err := conn.Query(ctx, `SELECT table_name FROM information_schema.columns WHERE table_schema = current_schema() AND column_name = 'hull_id'
		AND table_name IN (SELECT tablename FROM pg_tables WHERE schemaname = current_schema())`)
	if err != nil {
		t.Fatal(err)
	}
	var tables []string
	for rows.Next() {
		var s string
		rows.Scan(&s)
		tables = append(tables, s)
	}
	rows.Close()
	err = pgx.BeginFunc(ctx, conn, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, "SET session_replication_role = replica"); err != nil {
			return err
		}
		for _, tb := range tables {
			if _, err := tx.Exec(ctx, "DELETE FROM "+pgx.Identifier{tb}.Sanitize()); err != nil {
				return err
			}
		}
		_, err := tx.Exec(ctx, "DELETE FROM hulls")
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	e.ok("verify")
	out, _, code = e.run("verify", "--checkpoint", logPath, "--key", pub)
	if code != exitFailed || !strings.Contains(out, "missing") {
		t.Fatalf("removed hull: exit %d\n%s", code, out)
	}
}
