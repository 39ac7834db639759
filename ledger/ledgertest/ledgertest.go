// Package ledgertest gives tests a real PostgreSQL: the server named by
// HULLTALLY_TEST_DATABASE_URL when it is set, otherwise a managed cluster
// in a temporary folder started once per test binary. Each test gets its
// own database, created from a migrated template for speed. There is no
// mock of the database anywhere in hulltally's tests.
package ledgertest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"net/url"
	"os"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/cluster"
)

// Server is the PostgreSQL the tests of one binary use.
type Server struct {
	adminURL string
	template string
	cleanup  func()
}

// Start finds or starts the server and builds the migrated template.
func Start(ctx context.Context) (*Server, error) {
	s := &Server{cleanup: func() {}}
	if u := os.Getenv("HULLTALLY_TEST_DATABASE_URL"); u != "" {
		s.adminURL = u
	} else {
		dir, err := os.MkdirTemp("", "htpg-")
		if err != nil {
			return nil, err
		}
		// The server may run as the postgres user (when tests run as root).
		if err := os.Chmod(dir, 0o755); err != nil {
			return nil, err
		}
		c, err := cluster.New(dir, nil)
		if err != nil {
			os.RemoveAll(dir)
			return nil, err
		}
		if _, err := c.Ensure(ctx); err != nil {
			os.RemoveAll(dir)
			return nil, err
		}
		s.adminURL = c.MaintenanceURL()
		s.cleanup = func() {
			_, _ = c.Stop(context.Background())
			os.RemoveAll(dir)
		}
	}
	s.template = "ht_tmpl_" + randHex(6)
	if err := s.exec(ctx, "CREATE DATABASE "+s.template); err != nil {
		s.Close()
		return nil, fmt.Errorf("creating the template database (the test server needs CREATEDB): %w", err)
	}
	conn, err := pgx.Connect(ctx, s.urlFor(s.template))
	if err != nil {
		s.Close()
		return nil, err
	}
	err = ledger.MigrateConn(ctx, conn)
	conn.Close(ctx)
	if err != nil {
		s.Close()
		return nil, err
	}
	return s, nil
}

// Close drops the template and stops a managed server.
func (s *Server) Close() {
	if s.template != "" {
		_ = s.exec(context.Background(), "DROP DATABASE IF EXISTS "+s.template+" WITH (FORCE)")
	}
	s.cleanup()
}

// Main runs a test binary's tests with a server in *srv.
func Main(m *testing.M, srv **Server) int {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	s, err := Start(ctx)
	cancel()
	if err != nil {
		fmt.Fprintln(os.Stderr, "ledgertest: no PostgreSQL for the tests:", err)
		return 1
	}
	*srv = s
	code := m.Run()
	s.Close()
	return code
}

// NewDatabase creates a database for one test, migrated (from the
// template) when migrated is true and empty otherwise, and drops it when
// the test ends. It returns the database's URL.
func (s *Server) NewDatabase(t testing.TB, migrated bool) string {
	t.Helper()
	name := "ht_" + randHex(8)
	sql := "CREATE DATABASE " + name
	if migrated {
		sql += " TEMPLATE " + s.template
	}
	ctx := context.Background()
	if err := s.exec(ctx, sql); err != nil {
		t.Fatalf("creating test database: %v", err)
	}
	t.Cleanup(func() { _ = s.exec(context.Background(), "DROP DATABASE IF EXISTS "+name+" WITH (FORCE)") })
	return s.urlFor(name)
}

// Config is a configuration that points at url.
func Config(t testing.TB, dbURL string) *configs.Config {
	t.Helper()
	cfg, err := configs.Load(configs.Options{Env: func(k string) (string, bool) {
		switch k {
		case "HULLTALLY_DATABASE_URL":
			return dbURL, true
		case "HULLTALLY_HOME":
			return t.TempDir(), true
		}
		return "", false
	}})
	if err != nil {
		t.Fatal(err)
	}
	return cfg
}

// Open opens a ledger on a fresh migrated database.
func (s *Server) Open(t testing.TB) *ledger.Ledger {
	t.Helper()
	l, err := ledger.Open(context.Background(), Config(t, s.NewDatabase(t, true)))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(l.Close)
	return l
}

func (s *Server) exec(ctx context.Context, sql string) error {
	conn, err := pgx.Connect(ctx, s.adminURL)
	if err != nil {
		return err
	}
	defer conn.Close(ctx)
	_, err = conn.Exec(ctx, sql)
	return err
}

func (s *Server) urlFor(db string) string {
	u, err := url.Parse(s.adminURL)
	if err != nil {
		panic(err)
	}
	u.Path = "/" + db
	return u.String()
}

func randHex(n int) string {
	b := make([]byte, n)
	_, _ = rand.Read(b)
	return hex.EncodeToString(b)
}
