package sign

import (
	"bytes"
	"crypto"
	"crypto/ecdsa"
	"crypto/x509"
	"encoding/asn1"
	"encoding/hex"
	"errors"
	"fmt"
	"regexp"
	"strconv"
	"time"

	"github.com/digitorus/pdf"
	"github.com/digitorus/pdfsign/sign"
	"github.com/digitorus/pkcs7"
)

// Meta is what the signature dictionary of a report carries besides the
// signature; it is inside the signed bytes.
type Meta struct {
	// Fingerprint is the report's fingerprint (64 hex digits), the same as
	// in the PDF's keywords.
	Fingerprint string
	// Checkpoint is the ledger's checkpoint the report was made at;
	// empty when none. Letters, digits and ":._/+=-" only, at most 200.
	Checkpoint string
	// Time is the signing time written in the signature dictionary.
	Time time.Time
}

var (
	fingerprintRE = regexp.MustCompile(`^[0-9a-f]{64}$`)
	checkpointRE  = regexp.MustCompile(`^[A-Za-z0-9:._/+=-]{0,200}$`)
	reasonRE      = regexp.MustCompile(`/Reason \(hulltally report fingerprint=([0-9a-f]{64}) checkpoint=([A-Za-z0-9:._/+=-]{0,200})\)`)
	byteRangeRE   = regexp.MustCompile(`/ByteRange\s*\[\s*(\d+)\s+(\d+)\s+(\d+)\s+(\d+)\s*\]`)
)

// SignPDF signs a PDF with s as a PDF certification signature (CMS,
// adbe.pkcs7.detached, SHA-256, no changes permitted after signing),
// appended as an incremental update. The signed bytes are the whole file
// but the signature itself, so they include the report's metadata (its
// fingerprint in the keywords) and the signature dictionary, whose
// reason carries meta's fingerprint and checkpoint.
func SignPDF(in []byte, s *Signer, meta Meta) ([]byte, error) {
	if !fingerprintRE.MatchString(meta.Fingerprint) {
		return nil, fmt.Errorf("signing: the fingerprint %q is not 64 hex digits", meta.Fingerprint)
	}
	if !checkpointRE.MatchString(meta.Checkpoint) {
		return nil, fmt.Errorf("signing: the checkpoint %q has characters other than letters, digits and :._/+=- or is too long", meta.Checkpoint)
	}
	rdr, err := pdf.NewReader(bytes.NewReader(in), int64(len(in)))
	if err != nil {
		return nil, fmt.Errorf("signing: reading the PDF: %w", err)
	}
	at := meta.Time
	if at.IsZero() {
		at = time.Now()
	}
	var out bytes.Buffer
	err = sign.Sign(bytes.NewReader(in), &out, rdr, int64(len(in)), sign.SignData{
		Signature: sign.SignDataSignature{
			Info: sign.SignDataSignatureInfo{
				Name:   s.Org(),
				Reason: "hulltally report fingerprint=" + meta.Fingerprint + " checkpoint=" + meta.Checkpoint,
				Date:   at,
			},
			CertType:   sign.CertificationSignature,
			DocMDPPerm: sign.DoNotAllowAnyChangesPerms,
		},
		Signer:          s.Key,
		DigestAlgorithm: crypto.SHA256,
		Certificate:     s.Cert,
	})
	if err != nil {
		return nil, fmt.Errorf("signing the PDF: %w", err)
	}
	return out.Bytes(), nil
}

// Errors of VerifyPDF and Check.
var (
	// ErrUnsigned: the file carries no signature.
	ErrUnsigned = errors.New("the file carries no signature")
	// ErrAltered: the signature does not cover the whole file or does not
	// verify: the file was changed after signing.
	ErrAltered = errors.New("the file was altered after signing")
	// ErrOtherKey: a valid signature, but by another key than the one
	// given.
	ErrOtherKey = errors.New("signed by another key")
)

// Signature is a verified PDF signature.
type Signature struct {
	// Cert is the signer's certificate, as embedded in the signature.
	Cert *x509.Certificate
	// Public is the signer's public key.
	Public *ecdsa.PublicKey
	// KeyFingerprint is Fingerprint(Public).
	KeyFingerprint string
	// Org is the organisation the certificate names.
	Org string
	// Fingerprint and Checkpoint are the report's, from the signed
	// signature dictionary; empty when the signature is not a hulltally
	// report's.
	Fingerprint string
	Checkpoint  string
}

// VerifyPDF checks the file's signature: exactly one signature, whose
// byte range covers the whole file except the signature value, whose CMS
// signature verifies over those bytes with the certificate it embeds.
// ErrUnsigned when there is none; an error wrapping ErrAltered when the
// byte range or the signature is wrong. It does not say whose key signed:
// see Check.
func VerifyPDF(b []byte) (*Signature, error) {
	ms := byteRangeRE.FindAllSubmatchIndex(b, -1)
	if len(ms) == 0 {
		return nil, ErrUnsigned
	}
	if len(ms) > 1 {
		return nil, fmt.Errorf("%w: the file carries %d signatures, a hulltally report one (something was signed onto it)", ErrAltered, len(ms))
	}
	m := ms[0]
	var r [4]int
	for i := range r {
		v, err := strconv.Atoi(string(b[m[2+2*i]:m[3+2*i]]))
		if err != nil {
			return nil, fmt.Errorf("%w: the signature's byte range is unreadable", ErrAltered)
		}
		r[i] = v
	}
	n := len(b)
	// The signed ranges must be [0, a) and [c, end of file), with exactly
	// the hex signature value "<...>" between: nothing outside the
	// signature (an appended update, a changed byte) escapes it.
	if r[0] != 0 || r[1] < 2 || r[2] <= r[1]+1 || r[3] < 0 || r[2]+r[3] != n || r[2] > n {
		return nil, fmt.Errorf("%w: the signature does not cover the whole file (signed ranges [%d %d %d %d], file %d bytes)", ErrAltered, r[0], r[1], r[2], r[3], n)
	}
	if b[r[1]] != '<' || b[r[2]-1] != '>' {
		return nil, fmt.Errorf("%w: the gap in the signed ranges is not the signature value", ErrAltered)
	}
	der, err := hex.DecodeString(string(b[r[1]+1 : r[2]-1]))
	if err != nil {
		return nil, fmt.Errorf("%w: the signature value is not hex", ErrAltered)
	}
	var raw asn1.RawValue
	rest, err := asn1.Unmarshal(der, &raw)
	if err != nil {
		return nil, fmt.Errorf("%w: the signature value is unreadable: %v", ErrAltered, err)
	}
	for _, c := range rest {
		if c != 0 {
			return nil, fmt.Errorf("%w: data after the signature value", ErrAltered)
		}
	}
	p7, err := pkcs7.Parse(raw.FullBytes)
	if err != nil {
		return nil, fmt.Errorf("%w: the signature value is unreadable: %v", ErrAltered, err)
	}
	if len(p7.Signers) != 1 {
		return nil, fmt.Errorf("%w: the signature has %d signers, not one", ErrAltered, len(p7.Signers))
	}
	content := make([]byte, 0, r[1]+r[3])
	content = append(append(content, b[:r[1]]...), b[r[2]:]...)
	p7.Content = content
	if err := p7.Verify(); err != nil {
		return nil, fmt.Errorf("%w: the signature does not verify: %v", ErrAltered, err)
	}
	cert := p7.GetOnlySigner()
	if cert == nil {
		return nil, fmt.Errorf("%w: no signer certificate", ErrAltered)
	}
	pub, ok := cert.PublicKey.(*ecdsa.PublicKey)
	if !ok {
		return nil, fmt.Errorf("%w: the signer's key is not ECDSA: not a hulltally report signature", ErrOtherKey)
	}
	s := &Signature{Cert: cert, Public: pub, KeyFingerprint: Fingerprint(pub), Org: org(cert)}
	if rm := reasonRE.FindSubmatch(content); rm != nil {
		s.Fingerprint, s.Checkpoint = string(rm[1]), string(rm[2])
	}
	return s, nil
}

// Check is VerifyPDF and, besides, that the signer's key is pub: an error
// wrapping ErrOtherKey (with the valid Signature) when it is another.
func Check(b []byte, pub *ecdsa.PublicKey) (*Signature, error) {
	s, err := VerifyPDF(b)
	if err != nil {
		return s, err
	}
	if !s.Public.Equal(pub) {
		return s, fmt.Errorf("%w: the file is signed by %q, key %s, not by the key given (%s)", ErrOtherKey, s.Org, s.KeyFingerprint, Fingerprint(pub))
	}
	return s, nil
}
