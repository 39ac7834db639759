// Package cluster runs hulltally's own PostgreSQL cluster from the
// installed server binaries, for when no database URL is configured.
//
// The cluster lives in <home>/postgres: data in <home>/postgres/data, the
// server log in <home>/postgres/server.log, and the server listens only on a
// Unix socket in <home>/postgres (no TCP). PostgreSQL refuses to run as
// root, so when hulltally runs as root the cluster's folder is given to the
// unprivileged "postgres" system user and the server runs as that user;
// every folder above <home> must then be enterable by that user (the
// default home for root, /var/lib/hulltally, is).
package cluster

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"net/url"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// ErrNoServer means no PostgreSQL server binaries were found.
var ErrNoServer = errors.New("no PostgreSQL server binaries found (initdb, pg_ctl, postgres): install PostgreSQL 13 or newer (Debian: apt-get install postgresql), put its bin folder on PATH, or set database.url / HULLTALLY_DATABASE_URL to a running server")

// Port is the port number in the socket's name; with TCP off it only names
// the socket file.
const Port = 5432

// Database is the name of the database hulltally uses in its cluster.
const Database = "hulltally"

// Superuser is the cluster's bootstrap role.
const Superuser = "hulltally"

// Cluster is a managed local PostgreSQL cluster.
type Cluster struct {
	// Dir is <home>/postgres.
	Dir string
	// BinDir holds initdb, pg_ctl and postgres.
	BinDir string
	// runAs is the system user the server runs as when we are root.
	runAs *syscall.Credential
	owner string
}

// New finds the server binaries and prepares (but does not create) the
// cluster under home.
func New(home string, lookPath func(string) (string, error)) (*Cluster, error) {
	if lookPath == nil {
		lookPath = exec.LookPath
	}
	bin, err := findBinDir(lookPath)
	if err != nil {
		return nil, err
	}
	c := &Cluster{Dir: filepath.Join(home, "postgres"), BinDir: bin}
	if sock := filepath.Join(c.Dir, ".s.PGSQL."+strconv.Itoa(Port)); len(sock) > 100 {
		return nil, fmt.Errorf("hulltally home %q is too deep: the server's socket path %q would exceed the 100-byte limit of Unix sockets; choose a shorter HULLTALLY_HOME", home, sock)
	}
	if os.Geteuid() == 0 {
		u, err := user.Lookup("postgres")
		if err != nil {
			return nil, fmt.Errorf("running as root: PostgreSQL must run as an unprivileged user and the 'postgres' system user was not found (%w); run hulltally as an ordinary user or create that user (Debian's postgresql package does)", err)
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		c.runAs = &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}
		c.owner = "postgres"
	}
	return c, nil
}

func findBinDir(lookPath func(string) (string, error)) (string, error) {
	has := func(dir string) bool {
		for _, n := range []string{"initdb", "pg_ctl", "postgres"} {
			if st, err := os.Stat(filepath.Join(dir, n)); err != nil || st.IsDir() {
				return false
			}
		}
		return true
	}
	if p, err := lookPath("initdb"); err == nil {
		if real, err := filepath.EvalSymlinks(p); err == nil && has(filepath.Dir(real)) {
			return filepath.Dir(real), nil
		}
		if has(filepath.Dir(p)) {
			return filepath.Dir(p), nil
		}
	}
	if p, err := lookPath("pg_config"); err == nil {
		out, err := exec.Command(p, "--bindir").Output()
		if err == nil {
			if d := strings.TrimSpace(string(out)); has(d) {
				return d, nil
			}
		}
	}
	dirs, _ := filepath.Glob("/usr/lib/postgresql/*/bin")
	sort.Slice(dirs, func(i, j int) bool { return version(dirs[i]) > version(dirs[j]) })
	for _, d := range dirs {
		if has(d) {
			return d, nil
		}
	}
	return "", ErrNoServer
}

func version(binDir string) float64 {
	v, _ := strconv.ParseFloat(filepath.Base(filepath.Dir(binDir)), 64)
	return v
}

// DataDir is the cluster's data folder.
func (c *Cluster) DataDir() string { return filepath.Join(c.Dir, "data") }

// LogFile is the server's log.
func (c *Cluster) LogFile() string { return filepath.Join(c.Dir, "server.log") }

// URL is the connection string for the cluster's hulltally database.
func (c *Cluster) URL() string { return c.urlFor(Database) }

// MaintenanceURL is the connection string for the postgres database.
func (c *Cluster) MaintenanceURL() string { return c.urlFor("postgres") }

func (c *Cluster) urlFor(db string) string {
	q := url.Values{}
	q.Set("host", c.Dir)
	q.Set("port", strconv.Itoa(Port))
	q.Set("user", Superuser)
	q.Set("sslmode", "disable")
	return "postgres:///" + db + "?" + q.Encode()
}

// Initialised reports whether the data folder holds a cluster.
func (c *Cluster) Initialised() bool {
	_, err := os.Stat(filepath.Join(c.DataDir(), "PG_VERSION"))
	return err == nil
}

// Running reports whether the server is up (pg_ctl status).
func (c *Cluster) Running(ctx context.Context) bool {
	if !c.Initialised() {
		return false
	}
	return c.run(ctx, io.Discard, "pg_ctl", "status", "-D", c.DataDir()) == nil
}

// Event is something Ensure did, for the first-start message.
type Event struct {
	Created bool
	Started bool
	Dir     string
	Owner   string
}

// Ensure creates the cluster if it does not exist and starts it if it is
// not running. It holds a file lock so that two processes do not race.
func (c *Cluster) Ensure(ctx context.Context) (Event, error) {
	ev := Event{Dir: c.Dir, Owner: c.owner}
	if err := c.mkdirs(); err != nil {
		return ev, err
	}
	unlock, err := lockFile(filepath.Join(c.Dir, ".hulltally.lock"))
	if err != nil {
		return ev, err
	}
	defer unlock()
	if !c.Initialised() {
		if err := c.initdb(ctx); err != nil {
			return ev, err
		}
		ev.Created = true
	}
	if !c.Running(ctx) {
		var out bytes.Buffer
		err := c.run(ctx, &out, "pg_ctl", "start", "-w", "-t", "60", "-D", c.DataDir(), "-l", c.LogFile())
		if err != nil {
			return ev, fmt.Errorf("starting the managed PostgreSQL cluster in %s: %w\n%s\n(see the server log %s)", c.Dir, err, strings.TrimSpace(out.String()), c.LogFile())
		}
		ev.Started = true
	}
	return ev, nil
}

// Stop stops the server if it runs (fast shutdown: open transactions are
// rolled back, committed work is safe).
func (c *Cluster) Stop(ctx context.Context) (bool, error) {
	if !c.Running(ctx) {
		return false, nil
	}
	var out bytes.Buffer
	if err := c.run(ctx, &out, "pg_ctl", "stop", "-w", "-m", "fast", "-D", c.DataDir()); err != nil {
		return false, fmt.Errorf("stopping the managed cluster in %s: %w: %s", c.Dir, err, strings.TrimSpace(out.String()))
	}
	return true, nil
}

func (c *Cluster) mkdirs() error {
	home := filepath.Dir(c.Dir)
	if err := os.MkdirAll(home, 0o755); err != nil {
		return fmt.Errorf("creating hulltally home %s: %w", home, err)
	}
	if err := os.MkdirAll(c.Dir, 0o700); err != nil {
		return fmt.Errorf("creating %s: %w", c.Dir, err)
	}
	if c.runAs == nil {
		return nil
	}
	// The server runs as postgres: it must own its folder and be able to
	// enter every folder above it.
	if err := os.Chown(c.Dir, int(c.runAs.Uid), int(c.runAs.Gid)); err != nil {
		return fmt.Errorf("giving %s to the postgres user: %w", c.Dir, err)
	}
	for d := home; ; d = filepath.Dir(d) {
		st, err := os.Stat(d)
		if err != nil {
			return fmt.Errorf("checking %s: %w", d, err)
		}
		sys, _ := st.Sys().(*syscall.Stat_t)
		mode := st.Mode().Perm()
		ok := mode&0o001 != 0 || (sys != nil && sys.Uid == c.runAs.Uid && mode&0o100 != 0) || (sys != nil && sys.Gid == c.runAs.Gid && mode&0o010 != 0)
		if !ok {
			return fmt.Errorf("running as root, the managed PostgreSQL server runs as the postgres user, who cannot enter %s (mode %v): choose a HULLTALLY_HOME outside it (the default for root is /var/lib/hulltally) or run hulltally as an ordinary user", d, mode)
		}
		if d == "/" || d == filepath.Dir(d) {
			break
		}
	}
	return nil
}

func (c *Cluster) initdb(ctx context.Context) error {
	var out bytes.Buffer
	err := c.run(ctx, &out, "initdb", "-D", c.DataDir(), "-U", Superuser, "--auth=trust", "-E", "UTF8", "--locale=C")
	if err != nil {
		return fmt.Errorf("initdb in %s: %w\n%s", c.DataDir(), err, strings.TrimSpace(out.String()))
	}
	conf := fmt.Sprintf(`
# --- hulltally managed cluster ---
listen_addresses = ''
unix_socket_directories = '%s'
unix_socket_permissions = 0700
port = %d
max_connections = 100
shared_buffers = 128MB
max_wal_size = 2GB
logging_collector = off
`, strings.ReplaceAll(c.Dir, "'", "''"), Port)
	f, err := os.OpenFile(filepath.Join(c.DataDir(), "postgresql.conf"), os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		return fmt.Errorf("configuring the cluster: %w", err)
	}
	if _, err := f.WriteString(conf); err != nil {
		f.Close()
		return fmt.Errorf("configuring the cluster: %w", err)
	}
	return f.Close()
}

func (c *Cluster) run(ctx context.Context, out io.Writer, name string, args ...string) error {
	ctx, cancel := context.WithTimeout(ctx, 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, filepath.Join(c.BinDir, name), args...)
	cmd.Stdout = out
	cmd.Stderr = out
	cmd.Dir = c.Dir
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	if c.runAs != nil {
		cmd.SysProcAttr.Credential = c.runAs
		cmd.Env = append(os.Environ(), "HOME="+c.Dir)
	}
	return cmd.Run()
}

func lockFile(path string) (func(), error) {
	f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR, 0o600)
	if err != nil {
		return nil, fmt.Errorf("lock file %s: %w", path, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX); err != nil {
		f.Close()
		return nil, fmt.Errorf("locking %s: %w", path, err)
	}
	return func() {
		_ = syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}, nil
}
