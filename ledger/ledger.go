package ledger

import (
	"context"
	"errors"
	"fmt"
	"net/url"
	"regexp"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/jackc/tern/v2/migrate"

	"hulltally/configs"
	"hulltally/fatigue/fitness"
	"hulltally/ledger/cluster"
	"hulltally/migrations"
)

// Ledger is an open hulltally ledger.
type Ledger struct {
	pool *pgxpool.Pool
	// db is where reads go: the pool, or inside Snapshot the one
	// read-only repeatable-read transaction.
	db querier
	// snapshot is true for the Ledger a Snapshot hands to its function;
	// writes refuse it.
	snapshot bool
	cfg      *configs.Config
	info     Info
	fat      *fatigueEnv
	// rulesSet is the fitness rule set, parsed once at Open.
	rulesSet *fitness.Rules
	rulesSrc string
	// rulesSHA is the SHA-256 of the rule set's bytes as parsed.
	rulesSHA [32]byte
	// basis is the fleet summary's basis, computed once (summaryBasis).
	basis *basisCache
	// identity is who the connection is, read at Open.
	identity Identity
}

// Info says where the ledger is.
type Info struct {
	// URL with any password removed.
	URL string `json:"url"`
	// Managed is true for hulltally's own cluster.
	Managed bool `json:"managed"`
	// ClusterDir is the managed cluster's folder.
	ClusterDir string `json:"cluster_dir,omitempty"`
	// Created is true when this run created the managed cluster.
	Created bool `json:"created,omitempty"`
	// Started is true when this run started the managed cluster.
	Started bool `json:"started,omitempty"`
	// Owner is the system user the managed server runs as, when not us.
	Owner string `json:"owner,omitempty"`
}

// Open connects to the configured database, or creates and starts the
// managed cluster, and applies pending migrations.
func Open(ctx context.Context, cfg *configs.Config) (*Ledger, error) {
	l := &Ledger{cfg: cfg, basis: &basisCache{}}
	if err := l.loadFatigue(); err != nil {
		return nil, err
	}
	if err := l.loadRules(); err != nil {
		return nil, err
	}
	dbURL := cfg.Database.URL
	if dbURL == "" {
		c, err := cluster.New(cfg.Home, nil)
		if err != nil {
			return nil, err
		}
		ev, err := c.Ensure(ctx)
		if err != nil {
			return nil, err
		}
		if err := createDatabase(ctx, c.MaintenanceURL(), cluster.Database); err != nil {
			return nil, err
		}
		dbURL = c.URL()
		l.info = Info{Managed: true, ClusterDir: c.Dir, Created: ev.Created, Started: ev.Started, Owner: ev.Owner}
	}
	l.info.URL = redact(dbURL)
	pc, err := pgxpool.ParseConfig(dbURL)
	if err != nil {
		return nil, fmt.Errorf("database.url %s: %w", l.info.URL, err)
	}
	pc.MaxConns = cfg.Database.MaxConns
	pool, err := pgxpool.NewWithConfig(ctx, pc)
	if err != nil {
		return nil, fmt.Errorf("connecting to %s: %w", l.info.URL, err)
	}
	l.pool, l.db = pool, pool
	// Open applies pending migrations but does not restore append-only
	// guards found down: that is Migrate's, asked for by name, so that a
	// guard switched off is first seen by verify rather than silently put
	// back by the next command.
	if err := l.applyMigrations(ctx); err != nil {
		pool.Close()
		return nil, err
	}
	if l.identity, err = readIdentity(ctx, pool); err != nil {
		pool.Close()
		return nil, err
	}
	return l, nil
}

// Close releases the connections (the managed server keeps running).
func (l *Ledger) Close() { l.pool.Close() }

// Info says where the ledger is.
func (l *Ledger) Info() Info { return l.info }

// Pool exposes the connection pool to the other ledger packages and tests.
func (l *Ledger) Pool() *pgxpool.Pool { return l.pool }

// MigrateResult says what Migrate did besides applying migrations.
type MigrateResult struct {
	// Restored lists the append-only guards Migrate found missing,
	// disabled or altered and put back as the migrations define them;
	// Problem says what each was (GuardMissing, GuardDisabled,
	// GuardAltered). Empty when every guard was in place.
	Restored []GuardFinding `json:"restored"`
	// Profiles says what packing the dive profiles stored before
	// migration 020 did (ProfilesPacked).
	Profiles ProfilesPacked `json:"profiles"`
}

// Migrate applies pending migrations under tern's advisory lock, then
// restores the append-only and identity guards: for the append-only
// ones, it recreates the trigger function
// ledger_append_only if it is missing or was replaced, creates any
// missing <table>_append_only or <table>_no_truncate trigger with the SQL
// of ledger_protect, recreates any altered one, and enables any disabled
// one (ALTER TABLE … ENABLE TRIGGER). It returns what it restored. A
// ledger table that no longer exists cannot be restored: the other guards
// are restored and committed, and the error names the table.
//
// Restoring a guard repairs no record: run verify, which finds any record
// changed while the guard was down.
//
// Last, with the guards in place, it packs the dive profiles stored
// before migration 020 (packProfiles): their values, and so the chain,
// stay as they are.
func (l *Ledger) Migrate(ctx context.Context) (*MigrateResult, error) {
	if err := l.writable("Migrate"); err != nil {
		return nil, err
	}
	if err := l.applyMigrations(ctx); err != nil {
		return nil, err
	}
	res := &MigrateResult{Restored: []GuardFinding{}}
	var lost []string
	err := pgx.BeginFunc(ctx, l.pool, func(tx pgx.Tx) error {
		// One restorer at a time; the guards are read after the lock.
		if _, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock(hashtext('hulltally append-only guards'))"); err != nil {
			return err
		}
		found, err := checkGuards(ctx, tx)
		if err != nil {
			return err
		}
		bodies, err := identityBodies()
		if err != nil {
			return err
		}
		for _, g := range found {
			if stmts, ok := identityRepair(g, bodies); ok {
				// An identity guard (its function listed before its
				// triggers).
				for _, stmt := range stmts {
					if _, err := tx.Exec(ctx, stmt); err != nil {
						return fmt.Errorf("restoring identity guard %s: %w", g.Trigger, err)
					}
				}
				res.Restored = append(res.Restored, g)
				continue
			}
			if g.Table == "" {
				// The function, listed first: the triggers need it.
				if _, err := tx.Exec(ctx, "CREATE OR REPLACE FUNCTION ledger_append_only() RETURNS trigger LANGUAGE plpgsql AS $hulltally$"+appendOnlyBody+"$hulltally$"); err != nil {
					return fmt.Errorf("restoring ledger_append_only: %w", err)
				}
				res.Restored = append(res.Restored, g)
				continue
			}
			if g.Problem == GuardTableMissing {
				lost = append(lost, g.Table)
				continue
			}
			for _, stmt := range guardRepair(g) {
				if _, err := tx.Exec(ctx, stmt); err != nil {
					return fmt.Errorf("restoring append-only trigger %s on table %s: %w", g.Trigger, g.Table, err)
				}
			}
			res.Restored = append(res.Restored, g)
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("migrations: restoring append-only guards: %w", err)
	}
	if len(lost) > 0 {
		return res, fmt.Errorf("migrations: ledger tables %s are missing: their records and append-only guards cannot be restored", strings.Join(lost, ", "))
	}
	if res.Profiles, err = l.packProfiles(ctx); err != nil {
		return res, fmt.Errorf("migrations: %w", err)
	}
	return res, nil
}

// guardRepair returns the statements that put a guard back as
// ledger_protect (001_ledger.sql) makes it.
func guardRepair(g GuardFinding) []string {
	table, trig := pgx.Identifier{g.Table}.Sanitize(), pgx.Identifier{g.Trigger}.Sanitize()
	create := "CREATE TRIGGER " + trig + " BEFORE UPDATE OR DELETE ON " + table + " FOR EACH ROW EXECUTE FUNCTION ledger_append_only()"
	if strings.HasSuffix(g.Trigger, "_no_truncate") {
		create = "CREATE TRIGGER " + trig + " BEFORE TRUNCATE ON " + table + " FOR EACH STATEMENT EXECUTE FUNCTION ledger_append_only()"
	}
	switch g.Problem {
	case GuardMissing:
		return []string{create}
	case GuardAltered:
		return []string{"DROP TRIGGER " + trig + " ON " + table, create}
	default: // GuardDisabled
		return []string{"ALTER TABLE " + table + " ENABLE TRIGGER " + trig}
	}
}

// applyMigrations applies pending migrations under tern's advisory lock.
func (l *Ledger) applyMigrations(ctx context.Context) error {
	conn, err := l.pool.Acquire(ctx)
	if err != nil {
		return fmt.Errorf("migrations: connecting to %s: %w", l.info.URL, err)
	}
	defer conn.Release()
	return MigrateConn(ctx, conn.Conn())
}

// MigrateConn applies pending migrations on one connection.
func MigrateConn(ctx context.Context, conn *pgx.Conn) error {
	m, err := migrate.NewMigrator(ctx, conn, "public.hulltally_schema_version")
	if err != nil {
		return fmt.Errorf("migrations: %w", err)
	}
	if err := m.LoadMigrations(migrations.FS); err != nil {
		return fmt.Errorf("migrations: loading: %w", err)
	}
	if err := m.Migrate(ctx); err != nil {
		return fmt.Errorf("migrations: applying: %w", err)
	}
	return nil
}

// SchemaVersion returns the applied migration version and the newest one.
func (l *Ledger) SchemaVersion(ctx context.Context) (current, latest int32, err error) {
	conn, err := l.pool.Acquire(ctx)
	if err != nil {
		return 0, 0, err
	}
	defer conn.Release()
	m, err := migrate.NewMigrator(ctx, conn.Conn(), "public.hulltally_schema_version")
	if err != nil {
		return 0, 0, err
	}
	if err := m.LoadMigrations(migrations.FS); err != nil {
		return 0, 0, err
	}
	current, err = m.GetCurrentVersion(ctx)
	return current, int32(len(m.Migrations)), err
}

func createDatabase(ctx context.Context, maintURL, name string) error {
	ctx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, maintURL)
	if err != nil {
		return fmt.Errorf("connecting to the managed cluster: %w", err)
	}
	defer conn.Close(ctx)
	var exists bool
	if err := conn.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM pg_database WHERE datname = $1)", name).Scan(&exists); err != nil {
		return fmt.Errorf("managed cluster: %w", err)
	}
	if exists {
		return nil
	}
	_, err = conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{name}.Sanitize())
	var pe *pgconn.PgError
	if errors.As(err, &pe) && (pe.Code == "42P04" || pe.Code == "23505") {
		return nil // created by a process that started at the same time
	}
	if err != nil {
		return fmt.Errorf("creating database %s: %w", name, err)
	}
	return nil
}

// kvPassword matches the password of a key=value connection string.
var kvPassword = regexp.MustCompile(`(?i)(\bpassword\s*=\s*)('(?:[^'\\]|\\.)*'|[^\s]*)`)

func redact(s string) string {
	if !strings.Contains(s, "://") {
		// key=value form: hide the value of password=…, quoted or not.
		return kvPassword.ReplaceAllString(s, "${1}xxxxx")
	}
	u, err := url.Parse(s)
	if err != nil {
		return "(unparsable database URL)"
	}
	if q := u.Query(); q.Has("password") {
		q.Set("password", "xxxxx")
		u.RawQuery = q.Encode()
	}
	if u.User != nil {
		if _, has := u.User.Password(); has {
			u.User = url.UserPassword(u.User.Username(), "xxxxx")
		}
	}
	return u.String()
}

// Status reports on the configured database without creating anything.
type Status struct {
	URL     string `json:"url"`
	Managed bool   `json:"managed"`
	Running bool   `json:"running"`
	Dir     string `json:"cluster_dir,omitempty"`
	Detail  string `json:"detail,omitempty"`
}

// DBStatus says whether the database is reachable; for the managed
// cluster, whether it runs.
func DBStatus(ctx context.Context, cfg *configs.Config) Status {
	if cfg.Database.URL != "" {
		st := Status{URL: redact(cfg.Database.URL)}
		ctx, cancel := context.WithTimeout(ctx, 5*time.Second)
		defer cancel()
		conn, err := pgx.Connect(ctx, cfg.Database.URL)
		if err != nil {
			st.Detail = err.Error()
			return st
		}
		conn.Close(ctx)
		st.Running = true
		return st
	}
	c, err := cluster.New(cfg.Home, nil)
	if err != nil {
		return Status{Managed: true, Detail: err.Error()}
	}
	st := Status{URL: c.URL(), Managed: true, Dir: c.Dir, Running: c.Running(ctx)}
	if !c.Initialised() {
		st.Detail = "not created yet: the first command that needs the ledger creates it"
	}
	return st
}

// StopManaged stops the managed cluster's server.
func StopManaged(ctx context.Context, cfg *configs.Config) (bool, error) {
	if cfg.Database.URL != "" {
		return false, errors.New("database.url is set: hulltally does not manage that server")
	}
	c, err := cluster.New(cfg.Home, nil)
	if err != nil {
		return false, err
	}
	return c.Stop(ctx)
}
