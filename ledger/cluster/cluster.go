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
//
// The server asks every connection for a password (SCRAM-SHA-256): the
// bootstrap role's is a secret generated into <home>/database.secret
// (mode 0600), so another process running as the server's system account,
// or a person's login role, is not let in as the owner by default. A
// cluster made before this by trust is moved to passwords the next time it
// is started.
package cluster

import (
	"bytes"
	"context"
	"crypto/rand"
	"encoding/base64"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net/url"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/jackc/pgx/v5"

	"hulltally/internal/scram"
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
	return c.urlWith(db, c.secret())
}

func (c *Cluster) urlWith(db, password string) string {
	q := url.Values{}
	q.Set("host", c.Dir)
	q.Set("port", strconv.Itoa(Port))
	q.Set("user", Superuser)
	q.Set("sslmode", "disable")
	if password != "" {
		q.Set("password", password)
	}
	return "postgres:///" + db + "?" + q.Encode()
}

// SecretFile holds the bootstrap role's password: <home>/database.secret.
func (c *Cluster) SecretFile() string { return filepath.Join(filepath.Dir(c.Dir), "database.secret") }

// secret is the bootstrap role's password, or "" when there is none yet.
func (c *Cluster) secret() string {
	b, err := os.ReadFile(c.SecretFile())
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(b))
}

// ensureSecret returns the secret, generating it (mode 0600, never over
// an existing file, never through a symbolic link) when there is none.
func (c *Cluster) ensureSecret() (string, error) {
	if s := c.secret(); s != "" {
		return s, nil
	}
	b := make([]byte, 24)
	if _, err := rand.Read(b); err != nil {
		return "", err
	}
	s := base64.RawURLEncoding.EncodeToString(b)
	// Written whole to a temporary name, then linked to its own name, which
	// fails if that exists: a crash leaves no empty or partial secret.
	tmp := c.SecretFile() + ".new-" + base64.RawURLEncoding.EncodeToString(b[:6])
	f, err := os.OpenFile(tmp, os.O_CREATE|os.O_EXCL|os.O_WRONLY|syscall.O_NOFOLLOW, 0o600)
	if err != nil {
		return "", fmt.Errorf("writing the managed cluster's secret %s: %w", c.SecretFile(), err)
	}
	defer os.Remove(tmp)
	_, err = f.WriteString(s + "\n")
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Link(tmp, c.SecretFile())
	}
	if err != nil {
		return "", fmt.Errorf("writing the managed cluster's secret %s: %w", c.SecretFile(), err)
	}
	return s, nil
}

// hbaPasswords is the managed cluster's client authentication: the Unix
// socket only (TCP is off), a password for everyone.
const hbaPasswords = `# hulltally managed cluster: the Unix socket only, SCRAM-SHA-256 passwords for everyone.
local all all scram-sha-256
`

// trusts says whether a pg_hba.conf lets anyone in without a password.
func trusts(hba []byte) bool {
	for _, line := range strings.Split(string(hba), "\n") {
		f := strings.Fields(line)
		if len(f) > 0 && !strings.HasPrefix(f[0], "#") && slices.Contains(f, "trust") {
			return true
		}
	}
	return false
}

// secure moves a running cluster made by trust to passwords: it gives
// the bootstrap role the secret's password (as a SCRAM verifier), writes
// the password-only pg_hba.conf and reloads the server. A cluster already
// on passwords is left alone.
func (c *Cluster) secure(ctx context.Context) error {
	hbaPath := filepath.Join(c.DataDir(), "pg_hba.conf")
	hba, err := os.ReadFile(hbaPath)
	if err != nil {
		return fmt.Errorf("reading the managed cluster's pg_hba.conf: %w", err)
	}
	if !trusts(hba) {
		if c.secret() == "" {
			return fmt.Errorf("the managed cluster in %s asks for a password and its secret %s is missing: restore the file, or set database.url to connect another way", c.Dir, c.SecretFile())
		}
		return nil
	}
	secret, err := c.ensureSecret()
	if err != nil {
		return err
	}
	verifier, err := scram.Verifier(secret)
	if err != nil {
		return err
	}
	conn, err := pgx.Connect(ctx, c.urlWith("postgres", ""))
	if err != nil {
		return fmt.Errorf("moving the managed cluster to passwords: %w", err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, "ALTER ROLE "+pgx.Identifier{Superuser}.Sanitize()+" PASSWORD '"+verifier+"'"); err != nil {
		return fmt.Errorf("moving the managed cluster to passwords: %w", err)
	}
	if err := writeConf(hbaPath, hbaPasswords); err != nil {
		return fmt.Errorf("moving the managed cluster to passwords: %w", err)
	}
	var out bytes.Buffer
	if err := c.run(ctx, &out, "pg_ctl", "reload", "-D", c.DataDir()); err != nil {
		return fmt.Errorf("reloading the managed cluster: %w: %s", err, strings.TrimSpace(out.String()))
	}
	return nil
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
	if err := c.secure(ctx); err != nil {
		return ev, err
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
	euid := uint32(os.Geteuid())
	if err := checkHome(home, euid); err != nil {
		return err
	}
	if err := os.Mkdir(c.Dir, 0o700); err != nil && !errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("creating %s: %w", c.Dir, err)
	}
	owners := []uint32{euid}
	if c.runAs != nil {
		owners = append(owners, c.runAs.Uid)
	}
	if err := checkOwnDir(c.Dir, owners...); err != nil {
		return err
	}
	if c.runAs == nil {
		return nil
	}
	// The server runs as postgres: it must own its folder and be able to
	// enter every folder above it. Lchown never follows a symbolic link,
	// and checkOwnDir has just seen a real folder there.
	if err := os.Lchown(c.Dir, int(c.runAs.Uid), int(c.runAs.Gid)); err != nil {
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

// checkHome refuses a hulltally home that another user could tamper with:
// the home (a symbolic link is followed) must be a folder owned by us
// (euid) or by root and not writable by others; and no folder above it,
// on the path as given or as resolved, may be writable by others without
// the sticky bit (/tmp, world-writable but sticky, is accepted: others
// cannot rename or remove what they do not own there).
func checkHome(home string, euid uint32) error {
	abs, err := filepath.Abs(home)
	if err != nil {
		return fmt.Errorf("hulltally home %s: %w", home, err)
	}
	st, err := os.Stat(abs)
	if err != nil {
		return fmt.Errorf("hulltally home %s: %w", home, err)
	}
	if !st.IsDir() {
		return fmt.Errorf("hulltally home %s is not a folder", home)
	}
	if st.Mode().Perm()&0o002 != 0 {
		return fmt.Errorf("hulltally home %s is writable by others (mode %v): another user could replace the ledger's cluster; remove that permission (chmod o-w %s) or choose another HULLTALLY_HOME", home, st.Mode().Perm(), home)
	}
	if sys, ok := st.Sys().(*syscall.Stat_t); ok && sys.Uid != euid && sys.Uid != 0 {
		return fmt.Errorf("hulltally home %s belongs to another user (uid %d): choose a HULLTALLY_HOME of your own", home, sys.Uid)
	}
	real, err := filepath.EvalSymlinks(abs)
	if err != nil {
		return fmt.Errorf("hulltally home %s: %w", home, err)
	}
	seen := map[string]bool{}
	for _, p := range []string{abs, real} {
		for d := filepath.Dir(p); !seen[d]; d = filepath.Dir(d) {
			seen[d] = true
			st, err := os.Stat(d)
			if err != nil {
				return fmt.Errorf("checking %s above the hulltally home: %w", d, err)
			}
			if st.Mode().Perm()&0o002 != 0 && st.Mode()&fs.ModeSticky == 0 {
				return fmt.Errorf("%s, above the hulltally home %s, is writable by others without the sticky bit (mode %v): another user could replace the home; choose a HULLTALLY_HOME elsewhere", d, home, st.Mode())
			}
		}
	}
	return nil
}

// checkOwnDir refuses, for a folder hulltally made or uses as its own, a
// symbolic link (never followed: as root that would give the link's
// target to the postgres user), anything not a folder, a folder writable
// by others and one owned by anyone but the given owners.
func checkOwnDir(dir string, owners ...uint32) error {
	st, err := os.Lstat(dir)
	if err != nil {
		return fmt.Errorf("checking %s: %w", dir, err)
	}
	if st.Mode()&fs.ModeSymlink != 0 {
		return fmt.Errorf("%s is a symbolic link: hulltally keeps its cluster in a real folder and does not follow links there; remove the link", dir)
	}
	if !st.IsDir() {
		return fmt.Errorf("%s is not a folder", dir)
	}
	if st.Mode().Perm()&0o002 != 0 {
		return fmt.Errorf("%s is writable by others (mode %v): remove that permission (chmod o-w %s)", dir, st.Mode().Perm(), dir)
	}
	if sys, ok := st.Sys().(*syscall.Stat_t); ok {
		for _, o := range owners {
			if sys.Uid == o {
				return nil
			}
		}
		return fmt.Errorf("%s belongs to another user (uid %d): hulltally uses only a cluster folder of its own", dir, sys.Uid)
	}
	return nil
}

func (c *Cluster) initdb(ctx context.Context) error {
	secret, err := c.ensureSecret()
	if err != nil {
		return err
	}
	// initdb reads the password from a file (as the server's user when we
	// are root), removed at once.
	pw := filepath.Join(c.Dir, ".initdb-password")
	os.Remove(pw)
	f, err := os.OpenFile(pw, os.O_CREATE|os.O_EXCL|os.O_WRONLY|syscall.O_NOFOLLOW, 0o600)
	if err != nil {
		return fmt.Errorf("initdb: %w", err)
	}
	defer os.Remove(pw)
	_, err = f.WriteString(secret + "\n")
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil && c.runAs != nil {
		err = os.Lchown(pw, int(c.runAs.Uid), int(c.runAs.Gid))
	}
	if err != nil {
		return fmt.Errorf("initdb: %w", err)
	}
	var out bytes.Buffer
	err = c.run(ctx, &out, "initdb", "-D", c.DataDir(), "-U", Superuser, "--auth-local=scram-sha-256", "--auth-host=scram-sha-256", "--pwfile="+pw, "-E", "UTF8", "--locale=C")
	if err != nil {
		return fmt.Errorf("initdb in %s: %w\n%s", c.DataDir(), err, strings.TrimSpace(out.String()))
	}
	if err := writeConf(filepath.Join(c.DataDir(), "pg_hba.conf"), hbaPasswords); err != nil {
		return fmt.Errorf("configuring the cluster's client authentication: %w", err)
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
	if err := appendConf(filepath.Join(c.DataDir(), "postgresql.conf"), conf); err != nil {
		return fmt.Errorf("configuring the cluster: %w", err)
	}
	return nil
}

// appendConf appends to the server's configuration file, which initdb
// made (as the postgres user when we are root). It never follows a
// symbolic link and refuses anything but a regular file with one link:
// as root, a link planted there would otherwise have root append to any
// file on the system.
func appendConf(path, text string) error {
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY|syscall.O_NOFOLLOW|syscall.O_NONBLOCK|syscall.O_NOCTTY, 0)
	if err != nil {
		if errors.Is(err, syscall.ELOOP) {
			return fmt.Errorf("%s is a symbolic link: refused", path)
		}
		return err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return err
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("%s is not a regular file (mode %v): refused", path, st.Mode())
	}
	if sys, ok := st.Sys().(*syscall.Stat_t); ok && sys.Nlink != 1 {
		return fmt.Errorf("%s has %d hard links: refused", path, sys.Nlink)
	}
	if _, err := f.WriteString(text); err != nil {
		return err
	}
	return f.Close()
}

// writeConf replaces a configuration file initdb made, with the care of
// appendConf (never through a symbolic link, only a regular file with one
// link), atomically: the new text is written to a temporary file in the
// same folder, given the old file's owner and mode, and renamed over it,
// so that a crash leaves the old file or the new, never an empty one.
func writeConf(path, text string) error {
	st, err := os.Lstat(path)
	if err != nil {
		return err
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("%s is not a regular file (mode %v): refused", path, st.Mode())
	}
	sys, ok := st.Sys().(*syscall.Stat_t)
	if ok && sys.Nlink != 1 {
		return fmt.Errorf("%s has %d hard links: refused", path, sys.Nlink)
	}
	f, err := os.CreateTemp(filepath.Dir(path), ".hulltally-conf-*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer os.Remove(tmp)
	_, err = f.WriteString(text)
	if err == nil {
		err = f.Chmod(st.Mode().Perm())
	}
	if err == nil && ok {
		err = f.Chown(int(sys.Uid), int(sys.Gid))
	}
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return err
	}
	return os.Rename(tmp, path)
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
	f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR|syscall.O_NOFOLLOW|syscall.O_NONBLOCK|syscall.O_NOCTTY, 0o600)
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
