// Package scram makes the SCRAM-SHA-256 verifier PostgreSQL stores for a
// password (RFC 5802 and RFC 7677, in the text form of PostgreSQL's
// pg_authid.rolpassword), so that a password is set without ever being
// sent to the server, or written to its log, in clear.
package scram

import (
	"crypto/hmac"
	"crypto/pbkdf2"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"fmt"
)

// Iterations is PostgreSQL's default iteration count (scram_iterations,
// 4096; from memory of PostgreSQL's documentation). A verifier carries its
// own count, so a server with another default still accepts it: the login
// tests check this against the server the suite runs.
const Iterations = 4096

// ErrNotASCII is returned for a password with characters outside
// printable ASCII: PostgreSQL normalises other passwords with SASLprep
// before hashing, which this package does not do, so the two could
// disagree.
var ErrNotASCII = errors.New("a password is printable ASCII (letters, digits, punctuation, space)")

// Verifier returns SCRAM-SHA-256$<iterations>:<salt>$<StoredKey>:<ServerKey>
// for password, with a random 16-byte salt.
func Verifier(password string) (string, error) {
	salt := make([]byte, 16)
	if _, err := rand.Read(salt); err != nil {
		return "", err
	}
	return VerifierWith(password, salt, Iterations)
}

// VerifierWith is Verifier with the salt and iteration count given.
func VerifierWith(password string, salt []byte, iterations int) (string, error) {
	for _, r := range password {
		if r < 0x20 || r > 0x7e {
			return "", ErrNotASCII
		}
	}
	salted, err := pbkdf2.Key(sha256.New, password, salt, iterations, sha256.Size)
	if err != nil {
		return "", err
	}
	mac := func(key []byte, msg string) []byte {
		h := hmac.New(sha256.New, key)
		h.Write([]byte(msg))
		return h.Sum(nil)
	}
	stored := sha256.Sum256(mac(salted, "Client Key"))
	server := mac(salted, "Server Key")
	b64 := base64.StdEncoding.EncodeToString
	return fmt.Sprintf("SCRAM-SHA-256$%d:%s$%s:%s", iterations, b64(salt), b64(stored[:]), b64(server)), nil
}
