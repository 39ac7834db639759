package cluster

import (
	"context"
	"io"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
)

// TestClusterAsksForPasswords: a new managed cluster lets no one in
// without the password in the secret file (mode 0600), nor with a wrong
// one; a cluster left on trust (as made before passwords) is moved to
// passwords when it is next ensured. The adversarial cases are the
// connections that must fail.
func TestClusterAsksForPasswords(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a PostgreSQL cluster")
	}
	ctx := context.Background()
	home := tempDir(t)
	c, err := New(home, nil)
	if err != nil {
		t.Skipf("no PostgreSQL server binaries: %v", err)
	}
	if _, err := c.Ensure(ctx); err != nil {
		t.Fatal(err)
	}
	defer c.Stop(context.Background())
	st, err := os.Stat(c.SecretFile())
	if err != nil || st.Mode().Perm() != 0o600 {
		t.Fatalf("secret file %s: %v, mode %v, want 0600", c.SecretFile(), err, st.Mode().Perm())
	}
	refused := func(what, u string) {
		t.Helper()
		conn, err := pgx.Connect(ctx, u)
		if err == nil {
			conn.Close(ctx)
			t.Fatalf("%s: connected", what)
		}
		if !strings.Contains(err.Error(), "password") {
			t.Fatalf("%s: %v, want a password refusal", what, err)
		}
	}
	admitted := func() {
		t.Helper()
		conn, err := pgx.Connect(ctx, c.MaintenanceURL())
		if err != nil {
			t.Fatalf("with the secret: %v", err)
		}
		conn.Close(ctx)
	}
	check := func() {
		t.Helper()
		admitted()
		refused("without a password", c.urlWith("postgres", ""))
		refused("with a wrong password", c.urlWith("postgres", "not-the-secret"))
		u, _ := url.Parse(c.MaintenanceURL())
		q := u.Query()
		q.Set("user", "postgres")
		u.RawQuery = q.Encode()
		refused("as another role with the secret", u.String())
	}
	check()

	// A cluster made by trust, as before passwords: the next Ensure moves
	// it to passwords with a new secret.
	if err := writeConf(filepath.Join(c.DataDir(), "pg_hba.conf"), "local all all trust\n"); err != nil {
		t.Fatal(err)
	}
	if err := c.run(ctx, io.Discard, "pg_ctl", "reload", "-D", c.DataDir()); err != nil {
		t.Fatal(err)
	}
	old := c.secret()
	if err := os.Remove(c.SecretFile()); err != nil {
		t.Fatal(err)
	}
	if _, err := c.Ensure(ctx); err != nil {
		t.Fatal(err)
	}
	if c.secret() == "" || c.secret() == old {
		t.Fatalf("no new secret after moving a trust cluster to passwords")
	}
	check()

	// A password cluster whose secret is gone is reported, not opened up.
	if err := os.Remove(c.SecretFile()); err != nil {
		t.Fatal(err)
	}
	if _, err := c.Ensure(ctx); err == nil || !strings.Contains(err.Error(), "secret") {
		t.Fatalf("ensure with the secret gone: %v", err)
	}
}
