// Package sign holds the operator's report-signing key and signs and
// checks hulltally's PDF reports with it.
//
// The key is an ECDSA P-256 key with a self-signed X.509 certificate
// naming the organisation, kept outside the database in one PEM file
// (mode 0600) holding the private key and the certificate. ECDSA P-256
// rather than Ed25519: the PDF verifier of Debian's poppler-utils
// (pdfsig 22.12, NSS) reports an Ed25519 CMS signature as "Document isn't
// signed or corrupted data", so an Ed25519-signed report would look
// unsigned to inspectors; P-256 is verified by it and by PDF readers.
package sign

import (
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/sha256"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/hex"
	"encoding/pem"
	"errors"
	"fmt"
	"io/fs"
	"math/big"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// KeyFile is the name of the key file inside the keys folder
// (<home>/keys/report-signing.pem by default).
const KeyFile = "report-signing.pem"

// DefaultYears is the default validity of a new certificate, in years.
const DefaultYears = 10

// MaxYears bounds the validity asked for: a longer one is a typing error.
const MaxYears = 50

// ErrNoKey is returned by Load and LoadFile when there is no key file; it
// wraps fs.ErrNotExist.
var ErrNoKey = fmt.Errorf("no report-signing key (run 'hulltally key init --org NAME'): %w", fs.ErrNotExist)

// Signer is the operator's report-signing key and its certificate.
type Signer struct {
	// Key is the private key (ECDSA P-256).
	Key *ecdsa.PrivateKey
	// Cert is the self-signed certificate of Key's public key, naming
	// the organisation.
	Cert *x509.Certificate
	// Path is the file they were read from.
	Path string
}

// Public is the signer's public key.
func (s *Signer) Public() *ecdsa.PublicKey { return &s.Key.PublicKey }

// Fingerprint is the SHA-256 fingerprint of the signer's public key
// (see Fingerprint).
func (s *Signer) Fingerprint() string { return Fingerprint(&s.Key.PublicKey) }

// Org is the organisation the certificate names.
func (s *Signer) Org() string { return org(s.Cert) }

func org(c *x509.Certificate) string {
	if len(c.Subject.Organization) > 0 {
		return c.Subject.Organization[0]
	}
	return c.Subject.CommonName
}

// Fingerprint is the SHA-256 of the public key's DER SubjectPublicKeyInfo,
// in lower-case hex grouped by four characters ("3f2a 9c01 ..."): what
// inspectors keep to recognise the operator's key.
func Fingerprint(pub *ecdsa.PublicKey) string {
	der, err := x509.MarshalPKIXPublicKey(pub)
	if err != nil {
		return "(not a P-256 public key)"
	}
	sum := sha256.Sum256(der)
	h := hex.EncodeToString(sum[:])
	var b strings.Builder
	for i := 0; i < len(h); i += 4 {
		if i > 0 {
			b.WriteByte(' ')
		}
		b.WriteString(h[i : i+4])
	}
	return b.String()
}

// Init makes a new key in dir (the keys folder, <home>/keys by default):
// the folder is made with mode 0700 and the key file (KeyFile) with 0600.
// It refuses an existing key file, and a folder — or the folder above it,
// the home — that others can write.
func Init(dir, org string, years int) error {
	parent := filepath.Dir(filepath.Clean(dir))
	if err := notWritableByOthers(parent); err != nil {
		return err
	}
	if err := os.Mkdir(dir, 0o700); err != nil && !errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("making the keys folder: %w", err)
	}
	return InitFile(filepath.Join(dir, KeyFile), org, years)
}

// InitFile makes a new key at path (mode 0600): an ECDSA P-256 key and a
// self-signed certificate naming org, valid from now for years years. It
// refuses an existing file at path (never overwrites a key), a folder
// others can write, an empty organisation and a validity outside
// 1..MaxYears.
func InitFile(path, orgName string, years int) error {
	orgName = strings.TrimSpace(orgName)
	if orgName == "" {
		return errors.New("the organisation's name is required (--org NAME)")
	}
	if years < 1 || years > MaxYears {
		return fmt.Errorf("the certificate's validity must be 1 to %d years, not %d", MaxYears, years)
	}
	if err := notWritableByOthers(filepath.Dir(path)); err != nil {
		return err
	}
	if _, err := os.Lstat(path); err == nil {
		return fmt.Errorf("%s already exists: a signing key is never overwritten (move it away first if you mean to replace it; reports signed with it then verify only against its exported certificate)", path)
	}
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		return fmt.Errorf("making the key: %w", err)
	}
	serial, err := rand.Int(rand.Reader, new(big.Int).Lsh(big.NewInt(1), 127))
	if err != nil {
		return fmt.Errorf("making the certificate's serial number: %w", err)
	}
	now := time.Now().UTC().Truncate(time.Second)
	tpl := &x509.Certificate{
		SerialNumber:          serial,
		Subject:               pkix.Name{Organization: []string{orgName}, CommonName: orgName + " hulltally report signing"},
		NotBefore:             now.Add(-time.Minute),
		NotAfter:              now.AddDate(years, 0, 0),
		KeyUsage:              x509.KeyUsageDigitalSignature | x509.KeyUsageContentCommitment,
		BasicConstraintsValid: true,
	}
	der, err := x509.CreateCertificate(rand.Reader, tpl, tpl, &key.PublicKey, key)
	if err != nil {
		return fmt.Errorf("making the certificate: %w", err)
	}
	p8, err := x509.MarshalPKCS8PrivateKey(key)
	if err != nil {
		return fmt.Errorf("encoding the key: %w", err)
	}
	body := append(pem.EncodeToMemory(&pem.Block{Type: "PRIVATE KEY", Bytes: p8}), pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})...)
	// O_EXCL: never over an existing file, nor through a symbolic link.
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
	if err != nil {
		return fmt.Errorf("writing the key: %w", err)
	}
	if _, err := f.Write(body); err != nil {
		f.Close()
		os.Remove(path)
		return fmt.Errorf("writing the key: %w", err)
	}
	if err := f.Sync(); err != nil {
		f.Close()
		os.Remove(path)
		return fmt.Errorf("writing the key: %w", err)
	}
	if err := f.Close(); err != nil {
		os.Remove(path)
		return fmt.Errorf("writing the key: %w", err)
	}
	return nil
}

// notWritableByOthers refuses a folder that group or others can write:
// whoever can write it can replace the key.
func notWritableByOthers(dir string) error {
	fi, err := os.Stat(dir)
	if err != nil {
		return fmt.Errorf("the key's folder: %w", err)
	}
	if !fi.IsDir() {
		return fmt.Errorf("%s is not a folder", dir)
	}
	if fi.Mode().Perm()&0o022 != 0 {
		return fmt.Errorf("%s can be written by other users (mode %04o): they could replace the signing key; use a folder only you can write (chmod go-w)", dir, fi.Mode().Perm())
	}
	return nil
}

// Load reads the key in the keys folder dir (see LoadFile); ErrNoKey
// when there is none.
func Load(dir string) (*Signer, error) { return LoadFile(filepath.Join(dir, KeyFile)) }

// LoadFile reads a key file made by InitFile. It returns ErrNoKey when
// the file does not exist, and refuses a symbolic link, a file others
// can read or write (mode must be 0600 or stricter), a folder others can
// write, a key that is not ECDSA P-256, a certificate not of that key, and
// a certificate not valid now (expired or not yet valid: a report signed
// with it would not verify).
func LoadFile(path string) (*Signer, error) {
	fi, err := os.Lstat(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("%s: %w", path, ErrNoKey)
	}
	if err != nil {
		return nil, fmt.Errorf("the signing key: %w", err)
	}
	if !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("the signing key %s is not a regular file (a symbolic link or other): refused", path)
	}
	if fi.Mode().Perm()&0o077 != 0 {
		return nil, fmt.Errorf("the signing key %s can be read or written by other users (mode %04o): refused; chmod 600 it, and consider the key exposed", path, fi.Mode().Perm())
	}
	if err := notWritableByOthers(filepath.Dir(path)); err != nil {
		return nil, err
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("the signing key: %w", err)
	}
	var key *ecdsa.PrivateKey
	var cert *x509.Certificate
	for {
		var blk *pem.Block
		blk, b = pem.Decode(b)
		if blk == nil {
			break
		}
		switch blk.Type {
		case "PRIVATE KEY":
			if key != nil {
				return nil, fmt.Errorf("%s holds more than one private key", path)
			}
			k, err := x509.ParsePKCS8PrivateKey(blk.Bytes)
			if err != nil {
				return nil, fmt.Errorf("%s: the private key: %w", path, err)
			}
			ek, ok := k.(*ecdsa.PrivateKey)
			if !ok || ek.Curve != elliptic.P256() {
				return nil, fmt.Errorf("%s: the private key is not ECDSA P-256", path)
			}
			key = ek
		case "CERTIFICATE":
			if cert != nil {
				return nil, fmt.Errorf("%s holds more than one certificate", path)
			}
			c, err := x509.ParseCertificate(blk.Bytes)
			if err != nil {
				return nil, fmt.Errorf("%s: the certificate: %w", path, err)
			}
			cert = c
		}
	}
	if key == nil || cert == nil {
		return nil, fmt.Errorf("%s does not hold a private key and its certificate", path)
	}
	if pub, ok := cert.PublicKey.(*ecdsa.PublicKey); !ok || !pub.Equal(&key.PublicKey) {
		return nil, fmt.Errorf("%s: the certificate is not of the private key", path)
	}
	if now := time.Now(); now.Before(cert.NotBefore) || now.After(cert.NotAfter) {
		return nil, fmt.Errorf("%s: the certificate is valid from %s to %s, not now: make a new key (reports signed with this one still verify)", path, cert.NotBefore.Format(time.DateOnly), cert.NotAfter.Format(time.DateOnly))
	}
	return &Signer{Key: key, Cert: cert, Path: path}, nil
}

// ExportPEM is the certificate (with the public key) as PEM, to hand to
// inspectors.
func (s *Signer) ExportPEM() []byte {
	return pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: s.Cert.Raw})
}

// LoadPublic reads the operator's public key from an exported PEM file:
// a CERTIFICATE (as ExportPEM writes), or a bare PUBLIC KEY (then the
// certificate returned is nil). A file holding a private key is refused:
// inspectors are handed the export, never the key.
func LoadPublic(pemFile string) (*ecdsa.PublicKey, *x509.Certificate, error) {
	b, err := os.ReadFile(pemFile)
	if err != nil {
		return nil, nil, fmt.Errorf("the public key: %w", err)
	}
	return ParsePublic(b)
}

// ParsePublic is LoadPublic on the file's bytes.
func ParsePublic(b []byte) (*ecdsa.PublicKey, *x509.Certificate, error) {
	var pub *ecdsa.PublicKey
	var cert *x509.Certificate
	for {
		var blk *pem.Block
		blk, b = pem.Decode(b)
		if blk == nil {
			break
		}
		if strings.Contains(blk.Type, "PRIVATE KEY") {
			return nil, nil, errors.New("the file holds a private key: refused (use the certificate from 'hulltally key export', and keep the key file secret)")
		}
		var k any
		switch blk.Type {
		case "CERTIFICATE":
			c, err := x509.ParseCertificate(blk.Bytes)
			if err != nil {
				return nil, nil, fmt.Errorf("the certificate: %w", err)
			}
			cert, k = c, c.PublicKey
		case "PUBLIC KEY":
			p, err := x509.ParsePKIXPublicKey(blk.Bytes)
			if err != nil {
				return nil, nil, fmt.Errorf("the public key: %w", err)
			}
			k = p
		default:
			continue
		}
		if pub != nil {
			return nil, nil, errors.New("the file holds more than one key: give the operator's only")
		}
		ek, ok := k.(*ecdsa.PublicKey)
		if !ok || ek.Curve != elliptic.P256() {
			return nil, nil, errors.New("the public key is not ECDSA P-256: not a hulltally report-signing key")
		}
		pub = ek
	}
	if pub == nil {
		return nil, nil, errors.New("no certificate or public key in the file (PEM expected)")
	}
	return pub, cert, nil
}
