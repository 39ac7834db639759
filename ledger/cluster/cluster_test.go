package cluster

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// nobody is an unprivileged uid/gid for the root-only tests (the usual
// "nobody"; any uid other than ours and root's serves).
const nobody = 65534

func uidOf(t *testing.T, p string) uint32 {
	t.Helper()
	st, err := os.Lstat(p)
	if err != nil {
		t.Fatal(err)
	}
	return st.Sys().(*syscall.Stat_t).Uid
}

// tempDir is a t.TempDir that others may enter (0755 up to /tmp), as the
// postgres user must when we are root.
func tempDir(t *testing.T) string {
	t.Helper()
	d := t.TempDir()
	for p := d; p != os.TempDir() && p != "/"; p = filepath.Dir(p) {
		if err := os.Chmod(p, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return d
}

func TestHomeRefusedWhenOthersCanWrite(t *testing.T) {
	euid := uint32(os.Geteuid())
	cases := []struct {
		name  string
		setup func(t *testing.T) string // returns the home
		want  string                    // substring of the error; "" for accepted
	}{
		{"home writable by others", func(t *testing.T) string {
			h := filepath.Join(tempDir(t), "home")
			os.Mkdir(h, 0o755)
			os.Chmod(h, 0o777)
			return h
		}, "writable by others"},
		{"home writable by others even with the sticky bit", func(t *testing.T) string {
			h := filepath.Join(tempDir(t), "home")
			os.Mkdir(h, 0o755)
			os.Chmod(h, 0o777|os.ModeSticky)
			return h
		}, "writable by others"},
		{"folder above writable by others, no sticky bit", func(t *testing.T) string {
			up := filepath.Join(tempDir(t), "shared")
			os.Mkdir(up, 0o755)
			os.Chmod(up, 0o777)
			h := filepath.Join(up, "home")
			os.Mkdir(h, 0o755)
			return h
		}, "without the sticky bit"},
		{"home a link into a folder writable by others", func(t *testing.T) string {
			d := tempDir(t)
			up := filepath.Join(d, "shared")
			os.Mkdir(up, 0o755)
			os.Chmod(up, 0o777)
			real := filepath.Join(up, "home")
			os.Mkdir(real, 0o755)
			link := filepath.Join(d, "home")
			os.Symlink(real, link)
			return link
		}, "without the sticky bit"},
		{"home not a folder", func(t *testing.T) string {
			h := filepath.Join(tempDir(t), "file")
			os.WriteFile(h, nil, 0o600)
			return h
		}, "not a folder"},
		{"folder above writable by others with the sticky bit (like /tmp)", func(t *testing.T) string {
			up := filepath.Join(tempDir(t), "tmp")
			os.Mkdir(up, 0o755)
			os.Chmod(up, 0o777|os.ModeSticky)
			h := filepath.Join(up, "home")
			os.Mkdir(h, 0o700)
			return h
		}, ""},
		{"private home", func(t *testing.T) string {
			h := filepath.Join(tempDir(t), "home")
			os.Mkdir(h, 0o700)
			return h
		}, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := checkHome(c.setup(t), euid)
			if c.want == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("err = %v, want %q", err, c.want)
			}
		})
	}
}

func TestOwnDirRefused(t *testing.T) {
	euid := uint32(os.Geteuid())
	d := tempDir(t)
	target := filepath.Join(d, "target")
	os.Mkdir(target, 0o700)
	link := filepath.Join(d, "link")
	os.Symlink(target, link)
	wide := filepath.Join(d, "wide")
	os.Mkdir(wide, 0o700)
	os.Chmod(wide, 0o777)
	file := filepath.Join(d, "file")
	os.WriteFile(file, nil, 0o600)
	own := filepath.Join(d, "own")
	os.Mkdir(own, 0o700)
	cases := []struct{ name, dir, want string }{
		{"symbolic link", link, "symbolic link"},
		{"writable by others", wide, "writable by others"},
		{"a file", file, "not a folder"},
		{"our own", own, ""},
	}
	for _, c := range cases {
		err := checkOwnDir(c.dir, euid)
		if c.want == "" && err != nil || c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)) {
			t.Errorf("%s: err = %v, want %q", c.name, err, c.want)
		}
	}
}

// TestMkdirsRefusesLinkedClusterFolder: <home>/postgres planted as a
// symbolic link is refused, and (as root) the link's target is never given
// to the server's user.
func TestMkdirsRefusesLinkedClusterFolder(t *testing.T) {
	home := filepath.Join(tempDir(t), "home")
	if err := os.Mkdir(home, 0o755); err != nil {
		t.Fatal(err)
	}
	target := filepath.Join(tempDir(t), "precious")
	if err := os.Mkdir(target, 0o700); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(target, filepath.Join(home, "postgres")); err != nil {
		t.Fatal(err)
	}
	before := uidOf(t, target)
	c := &Cluster{Dir: filepath.Join(home, "postgres")}
	if os.Geteuid() == 0 {
		c.runAs = &syscall.Credential{Uid: nobody, Gid: nobody}
	}
	err := c.mkdirs()
	if err == nil || !strings.Contains(err.Error(), "symbolic link") {
		t.Fatalf("err = %v, want the link refused", err)
	}
	if uidOf(t, target) != before {
		t.Fatalf("the link's target changed owner to %d", uidOf(t, target))
	}
}

// TestMkdirsAsRoot: as root the cluster folder is given to the server's
// user, and a folder of a third user there is refused.
func TestMkdirsAsRoot(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("SKIP: needs root (changing a folder's owner)")
	}
	home := filepath.Join(tempDir(t), "home")
	c := &Cluster{Dir: filepath.Join(home, "postgres"), runAs: &syscall.Credential{Uid: nobody, Gid: nobody}}
	if err := c.mkdirs(); err != nil {
		t.Fatal(err)
	}
	if got := uidOf(t, c.Dir); got != nobody {
		t.Fatalf("cluster folder owned by %d, want %d", got, nobody)
	}
	if err := c.mkdirs(); err != nil { // the second start finds it ours
		t.Fatal(err)
	}
	if err := os.Lchown(c.Dir, 4242, 4242); err != nil {
		t.Fatal(err)
	}
	if err := c.mkdirs(); err == nil || !strings.Contains(err.Error(), "another user") {
		t.Fatalf("err = %v, want a third user's folder refused", err)
	}
	// A home of another user is refused.
	other := filepath.Join(tempDir(t), "other")
	os.Mkdir(other, 0o755)
	os.Lchown(other, 4242, 4242)
	if err := checkHome(other, 0); err == nil || !strings.Contains(err.Error(), "another user") {
		t.Fatalf("err = %v, want another user's home refused", err)
	}
}

func TestAppendConfRefuses(t *testing.T) {
	d := t.TempDir()
	target := filepath.Join(d, "shadow")
	orig := []byte("root:x:0:0\n")
	os.WriteFile(target, orig, 0o600)
	link := filepath.Join(d, "postgresql.conf")
	os.Symlink(target, link)
	hard := filepath.Join(d, "hard.conf")
	os.Link(target, hard)
	fifo := filepath.Join(d, "fifo.conf")
	syscall.Mkfifo(fifo, 0o600)
	for _, p := range []string{link, hard, fifo} {
		if err := appendConf(p, "listen_addresses = '*'\n"); err == nil {
			t.Errorf("%s: appended", p)
		}
	}
	if b, _ := os.ReadFile(target); string(b) != string(orig) {
		t.Fatalf("target changed: %q", b)
	}
	ok := filepath.Join(d, "ok.conf")
	os.WriteFile(ok, []byte("a\n"), 0o600)
	if err := appendConf(ok, "b\n"); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(ok); string(b) != "a\nb\n" {
		t.Fatalf("%q", b)
	}
}
