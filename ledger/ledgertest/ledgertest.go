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
	mrand "math/rand/v2"
	"net/url"
	"os"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/cluster"
	"hulltally/ledger/spec"
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

// CopyFleet adds hulls hulls of the spec base named PREFIX-NNN and, with
// COPY, dives(h) dives of stored cycles and holds for hull h (no readings
// nor evidence: a fleet for re-assessment and for the benchmarks of reads
// over many dives, far faster than logging them). The cycles are random
// but seeded. The dives are recorded by the ledger's identity.
func CopyFleet(tb testing.TB, l *ledger.Ledger, base *spec.Hull, prefix string, hulls int, dives func(h int) int) {
	tb.Helper()
	ctx := context.Background()
	rng := mrand.New(mrand.NewPCG(1, 2))
	for h := 0; h < hulls; h++ {
		sp := *base
		sp.Serial = fmt.Sprintf("%s-%03d", prefix, h)
		rec, err := l.AddHull(ctx, &sp, ledger.AddHullOptions{})
		if err != nil {
			tb.Fatal(err)
		}
		var diveRows, cycleRows, holdRows [][]any
		t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
		for d := 0; d < dives(h); d++ {
			id := uuid.New()
			peak := 20 + 20*rng.Float64()
			st := t0.Add(time.Duration(d) * 30 * time.Hour)
			sha := make([]byte, 32)
			copy(sha, id[:])
			diveRows = append(diveRows, []any{id, rec.ID, int32(1), "bench.csv", sha, int64(1), st, st.Add(5 * time.Hour), 45.0, false, "", "", "pressure_mpa",
				[]string{"t_s", "pressure_mpa"}, []string{}, int64(1000), int32(1), 18000.0, peak * 99, peak, false, int32(0), st, l.Identity().Name})
			r, m, n := []float64{peak, peak}, []float64{peak / 2, peak / 2}, []float64{0.5, 0.5}
			for k := 0; k < 10; k++ {
				r, m, n = append(r, 0.1+0.3*rng.Float64()), append(m, peak-0.2), append(n, 1)
			}
			cycleRows = append(cycleRows, []any{id, rec.ID, "pressure", "MPa", 0.05, r, m, n})
			var lv, sec []float64
			for k := 1; k <= 24; k++ {
				lv, sec = append(lv, peak*float64(k)/24), append(sec, 60+rng.Float64()*600)
			}
			holdRows = append(holdRows, []any{id, rec.ID, 0.05, lv, sec})
		}
		err = pgx.BeginFunc(ctx, l.Pool(), func(tx pgx.Tx) error {
			cols := []string{"id", "hull_id", "hull_revision", "source_name", "source_sha256", "source_bytes", "start_time", "end_time", "latitude", "latitude_assumed",
				"site", "operator", "load_column", "columns", "gauges", "sample_count", "block_count", "duration_s", "max_depth_m", "max_pressure_mpa", "beyond_rated", "ae_hit_count", "recorded_at", "recorded_by"}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dives"}, cols, pgx.CopyFromRows(diveRows)); err != nil {
				return err
			}
			if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_cycles"}, []string{"dive_id", "hull_id", "series", "unit", "gate", "ranges", "means", "counts"}, pgx.CopyFromRows(cycleRows)); err != nil {
				return err
			}
			_, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_holds"}, []string{"dive_id", "hull_id", "bin_mpa", "levels", "seconds"}, pgx.CopyFromRows(holdRows))
			return err
		})
		if err != nil {
			tb.Fatal(err)
		}
	}
}
