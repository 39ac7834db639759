package sign

import (
	"bytes"
	"errors"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/jung-kurt/gofpdf"
)

const testFP = "0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef"

func newKey(t *testing.T, org string) *Signer {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "keys")
	if err := Init(dir, org, 2); err != nil {
		t.Fatal(err)
	}
	s, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func testPDF(t *testing.T) []byte {
	t.Helper()
	p := gofpdf.New("P", "mm", "A4", "")
	p.SetCompression(true)
	p.SetKeywords("hulltally-report kind=hull subject=X generated=2026-01-01T00:00:00Z records=3 fingerprint="+testFP, false)
	p.AddPage()
	p.SetFont("Helvetica", "", 12)
	p.Cell(40, 10, "STATUS: HOLD")
	var b bytes.Buffer
	if err := p.Output(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestInitModesAndRefusals(t *testing.T) {
	home := t.TempDir()
	if err := os.Chmod(home, 0o700); err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(home, "keys")
	if err := Init(dir, "Deep Ocean Works", 10); err != nil {
		t.Fatal(err)
	}
	fi, err := os.Stat(dir)
	if err != nil || fi.Mode().Perm() != 0o700 {
		t.Fatalf("keys folder mode %v, %v; want 0700", fi.Mode().Perm(), err)
	}
	fi, err = os.Stat(filepath.Join(dir, KeyFile))
	if err != nil || fi.Mode().Perm() != 0o600 {
		t.Fatalf("key file mode %v, %v; want 0600", fi.Mode().Perm(), err)
	}
	before, _ := os.ReadFile(filepath.Join(dir, KeyFile))
	// Never overwritten.
	if err := Init(dir, "Other", 10); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Fatalf("second Init: %v, want refusal", err)
	}
	after, _ := os.ReadFile(filepath.Join(dir, KeyFile))
	if !bytes.Equal(before, after) {
		t.Fatal("the key was overwritten")
	}
	s, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	if s.Org() != "Deep Ocean Works" {
		t.Errorf("org %q", s.Org())
	}
	if y := s.Cert.NotAfter.Sub(s.Cert.NotBefore).Hours() / 24 / 365.25; y < 9.9 || y > 10.1 {
		t.Errorf("validity %.2f years, want 10", y)
	}
	if !regexp.MustCompile(`^([0-9a-f]{4} ){15}[0-9a-f]{4}$`).MatchString(s.Fingerprint()) {
		t.Errorf("fingerprint %q not 16 groups of 4 hex", s.Fingerprint())
	}

	tests := []struct {
		name string
		run  func(t *testing.T) error
		want string
	}{
		{"home writable by others", func(t *testing.T) error {
			h := t.TempDir()
			os.Chmod(h, 0o777)
			return Init(filepath.Join(h, "keys"), "Org", 10)
		}, "can be written by other users"},
		{"no organisation", func(t *testing.T) error { return Init(filepath.Join(t.TempDir(), "keys"), "  ", 10) }, "organisation"},
		{"zero years", func(t *testing.T) error { return Init(filepath.Join(t.TempDir(), "keys"), "Org", 0) }, "validity"},
		{"key readable by others", func(t *testing.T) error {
			d := filepath.Join(t.TempDir(), "keys")
			if err := Init(d, "Org", 1); err != nil {
				return err
			}
			os.Chmod(filepath.Join(d, KeyFile), 0o644)
			_, err := Load(d)
			return err
		}, "read or written by other users"},
		{"symbolic link", func(t *testing.T) error {
			d := filepath.Join(t.TempDir(), "keys")
			if err := Init(d, "Org", 1); err != nil {
				return err
			}
			l := filepath.Join(d, "link.pem")
			os.Symlink(filepath.Join(d, KeyFile), l)
			_, err := LoadFile(l)
			return err
		}, "not a regular file"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.run(t)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("err %v, want %q", err, tc.want)
			}
		})
	}
	if _, err := Load(t.TempDir()); !errors.Is(err, ErrNoKey) || !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("missing key: %v, want ErrNoKey", err)
	}
}

func TestExportAndLoadPublic(t *testing.T) {
	s := newKey(t, "Org")
	p := filepath.Join(t.TempDir(), "pub.pem")
	os.WriteFile(p, s.ExportPEM(), 0o644)
	pub, cert, err := LoadPublic(p)
	if err != nil {
		t.Fatal(err)
	}
	if !pub.Equal(s.Public()) || cert == nil || cert.Subject.Organization[0] != "Org" {
		t.Fatal("exported key differs")
	}
	if Fingerprint(pub) != s.Fingerprint() {
		t.Fatal("fingerprint differs")
	}
	// The private key file is refused as a public key.
	if _, _, err := LoadPublic(s.Path); err == nil || !strings.Contains(err.Error(), "private key") {
		t.Fatalf("LoadPublic(key file): %v, want refusal", err)
	}
}

func TestSignVerify(t *testing.T) {
	s := newKey(t, "Deep Ocean Works")
	other := newKey(t, "Deep Ocean Works") // same name, another key: a forgery
	in := testPDF(t)
	signed, err := SignPDF(in, s, Meta{Fingerprint: testFP, Checkpoint: "cp-7:abc", Time: time.Now()})
	if err != nil {
		t.Fatal(err)
	}
	sig, err := Check(signed, s.Public())
	if err != nil {
		t.Fatal(err)
	}
	if sig.Fingerprint != testFP || sig.Checkpoint != "cp-7:abc" || sig.Org != "Deep Ocean Works" || sig.KeyFingerprint != s.Fingerprint() {
		t.Fatalf("signature %+v", sig)
	}
	if !bytes.HasPrefix(signed, in) {
		t.Fatal("the signature is not an incremental update of the report")
	}

	forged, err := SignPDF(in, other, Meta{Fingerprint: testFP})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Check(forged, s.Public()); !errors.Is(err, ErrOtherKey) {
		t.Fatalf("forged: %v, want ErrOtherKey", err)
	}
	if _, err := Check(in, s.Public()); !errors.Is(err, ErrUnsigned) {
		t.Fatalf("unsigned: %v, want ErrUnsigned", err)
	}

	flip := func(b []byte, i int) []byte {
		c := bytes.Clone(b)
		c[i] ^= 0x01
		return c
	}
	kw := bytes.Index(signed, []byte("fingerprint=0123"))
	sigv := bytes.Index(signed, []byte("/Contents<")) + 20
	appended := append(bytes.Clone(signed), []byte("\n1 0 obj\n<< /Keywords (x) >>\nendobj\n%%EOF\n")...)
	cases := []struct {
		name string
		b    []byte
	}{
		{"a byte of the fingerprint in the keywords", flip(signed, kw+len("fingerprint="))},
		{"a byte of the page content", flip(signed, len(in)/2)},
		{"a byte of the signature value", flip(signed, sigv)},
		{"the last byte", flip(signed, len(signed)-2)},
		{"an update appended", appended},
		{"truncated", signed[:len(signed)-1]},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Check(tc.b, s.Public()); !errors.Is(err, ErrAltered) {
				t.Fatalf("err %v, want ErrAltered", err)
			}
		})
	}
	if _, err := SignPDF(in, s, Meta{Fingerprint: "nothex"}); err == nil {
		t.Fatal("a bad fingerprint was signed")
	}
	if _, err := SignPDF(in, s, Meta{Fingerprint: testFP, Checkpoint: "a) /Reason (x"}); err == nil {
		t.Fatal("a checkpoint that breaks the PDF string was signed")
	}
}

// TestPdfsig cross-checks with poppler's pdfsig: the signature verifies
// and covers the whole document. The self-signed certificate is reported
// as of an unknown issuer; that is expected (inspectors trust the key by
// its fingerprint, not through a certificate authority).
func TestPdfsig(t *testing.T) {
	if _, err := exec.LookPath("pdfsig"); err != nil {
		t.Skip("SKIPPED: pdfsig (Debian poppler-utils) is not installed; the cross-check with an independent verifier did not run")
	}
	s := newKey(t, "Deep Ocean Works")
	signed, err := SignPDF(testPDF(t), s, Meta{Fingerprint: testFP})
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "r.pdf")
	os.WriteFile(p, signed, 0o644)
	out, _ := exec.Command("pdfsig", p).CombinedOutput()
	t.Logf("pdfsig:\n%s", out)
	for _, want := range []string{"Signature Validation: Signature is Valid.", "Total document signed", "O=Deep Ocean Works"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("pdfsig output lacks %q", want)
		}
	}
	bad := bytes.Clone(signed)
	i := bytes.Index(bad, []byte("fingerprint=0123")) + len("fingerprint=")
	bad[i] = 'f'
	os.WriteFile(p, bad, 0o644)
	out, _ = exec.Command("pdfsig", p).CombinedOutput()
	if strings.Contains(string(out), "Signature is Valid") {
		t.Errorf("pdfsig calls an altered report valid:\n%s", out)
	}
}
