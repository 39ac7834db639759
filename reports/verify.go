package reports

import (
	"context"
	"crypto/ecdsa"
	"crypto/sha256"
	"errors"
	"fmt"
	"io"
	"regexp"
	"strings"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/files"
	"hulltally/reports/sign"
)

// Build gathers a report's content by kind and subject, reading the
// ledger at one moment (one read-only REPEATABLE READ snapshot): the
// chain heads the fingerprint names and the figures come from the same
// state, even while dives are being logged.
func Build(ctx context.Context, l *ledger.Ledger, kind, subject string, at time.Time) (*Model, error) {
	var m *Model
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		var err error
		switch kind {
		case KindHull:
			m, err = BuildHull(ctx, s, subject, at)
		case KindDive:
			m, err = BuildDive(ctx, s, subject, at)
		case KindFleet:
			m, err = BuildFleet(ctx, s, at)
		default:
			err = fmt.Errorf("unknown report kind %q", kind)
		}
		return err
	})
	if err != nil {
		return nil, err
	}
	return m, nil
}

// Written is a report written to a file.
type Written struct {
	Path        string    `json:"path"`
	Kind        string    `json:"kind"`
	Subject     string    `json:"subject"`
	Fingerprint string    `json:"fingerprint"`
	GeneratedAt time.Time `json:"generated_at"`
	Pages       int       `json:"pages"`
	Bytes       int       `json:"bytes"`
	// Unprintable lists, as "U+E000", the characters no available font
	// could print; each is printed as its code point in brackets and
	// listed on the report's first page. Empty when all printed.
	Unprintable []string `json:"unprintable,omitempty"`
	// Warning says the same in a sentence for the CLI to print; empty when
	// every character printed.
	Warning string `json:"warning,omitempty"`
	// Signed: the file carries the operator's PDF signature (false: an
	// unsigned report, no key was given).
	Signed bool `json:"signed"`
	// SignedBy is the organisation the signing certificate names, and
	// SignerFingerprint the signing key's SHA-256 fingerprint
	// (sign.Fingerprint); empty when unsigned.
	SignedBy          string `json:"signed_by,omitempty"`
	SignerFingerprint string `json:"signer_fingerprint,omitempty"`
	// Checkpoint is the ledger checkpoint carried in the signed content;
	// empty when none.
	Checkpoint string `json:"checkpoint,omitempty"`
}

// WriteOptions are the optional parts of WriteWith.
type WriteOptions struct {
	// Signer is the operator's report-signing key; nil writes an unsigned
	// report (the caller says so to the user).
	Signer *sign.Signer
	// Checkpoint is the ledger's checkpoint the report is made at, carried
	// in the signed content (the signature dictionary's reason); empty for
	// none. Letters, digits and ":._/+=-" only.
	Checkpoint string
}

// Write builds and renders a report and writes it to path, atomically (see
// files.WriteAtomic): path must not be a symbolic link (files.ErrSymlink)
// or anything but a regular file, and on any error the old file at path is
// left byte-identical.
func Write(ctx context.Context, l *ledger.Ledger, kind, subject, path string, at time.Time) (*Written, error) {
	return WriteWith(ctx, l, kind, subject, path, at, WriteOptions{})
}

// WriteWith is Write, signing the PDF with o.Signer when it is set: a PDF
// certification signature over the whole file (its metadata with the
// fingerprint included) and a signature dictionary whose reason carries
// the fingerprint and o.Checkpoint (see sign.SignPDF). The register of
// issued reports holds the SHA-256 of the signed file.
func WriteWith(ctx context.Context, l *ledger.Ledger, kind, subject, path string, at time.Time, o WriteOptions) (*Written, error) {
	// Microseconds, the ledger's precision: cut to the second, a report
	// made within the second of a record (an inspection just entered)
	// would be built as if that record did not exist yet. The metadata
	// carries the time to the nanosecond, so verification rebuilds the
	// same moment.
	at = at.UTC().Truncate(time.Microsecond)
	m, err := Build(ctx, l, kind, subject, at)
	if err != nil {
		return nil, err
	}
	r, err := RenderReport(m)
	if err != nil {
		return nil, err
	}
	b := r.PDF
	fp, _ := m.Fingerprint()
	// Pages are counted before signing: the signature's update rewrites
	// the first page's object.
	np := pages(b)
	if o.Signer != nil {
		if b, err = sign.SignPDF(b, o.Signer, sign.Meta{Fingerprint: fp, Checkpoint: o.Checkpoint, Time: at}); err != nil {
			return nil, err
		}
	}
	sum := sha256.Sum256(b)
	// Atomically: a temporary file in the same folder, synced and renamed
	// into place. Never through a symbolic link at path; on any error (a
	// full disk) the old file at path is left as it was.
	if err := files.WriteAtomic(path, func(w io.Writer) error { _, err := w.Write(b); return err }, 0o644); err != nil {
		return nil, err
	}
	w := &Written{Path: path, Kind: kind, Subject: m.Subject, Fingerprint: fp, GeneratedAt: at, Pages: np, Bytes: len(b), Warning: r.Warning()}
	if o.Signer != nil {
		w.Signed, w.SignedBy, w.SignerFingerprint, w.Checkpoint = true, o.Signer.Org(), o.Signer.Fingerprint(), o.Checkpoint
	}
	for _, c := range r.Unprintable {
		w.Unprintable = append(w.Unprintable, fmt.Sprintf("U+%04X", c))
	}
	if err := l.RegisterReport(ctx, ledger.IssuedReport{FileSHA256: sum[:], Kind: kind, Subject: m.Subject, Fingerprint: fp, GeneratedAt: at, Pages: w.Pages}); err != nil {
		return nil, err
	}
	return w, nil
}

var (
	keywordsRE = regexp.MustCompile(`/Keywords \(hulltally-report kind=(\w+) subject=([^ ]+) generated=([^ ]+) records=(\d+)(?: chains=([A-Za-z0-9._:,-]*))? fingerprint=([0-9a-f]{64})\)`)
	pagesRE    = regexp.MustCompile(`/Type /Page\b`)
)

func pages(b []byte) int { return len(pagesRE.FindAll(b, -1)) }

// Verification is the outcome of checking a report against the ledger.
type Verification struct {
	OK          bool      `json:"ok"`
	Kind        string    `json:"kind"`
	Subject     string    `json:"subject"`
	GeneratedAt time.Time `json:"generated_at"`
	Fingerprint string    `json:"fingerprint"`
	Reason      string    `json:"reason"`
	// Signature is the outcome of the signature check: SigValid,
	// SigUnsigned, SigAltered, SigOtherKey, or SigNotChecked when no key
	// was given.
	Signature string `json:"signature"`
	// SignedBy and SignerFingerprint name the signing certificate's
	// organisation and the key's fingerprint, when the signature verified
	// (by the given key or by another).
	SignedBy          string `json:"signed_by,omitempty"`
	SignerFingerprint string `json:"signer_fingerprint,omitempty"`
	// Checkpoint is the ledger checkpoint in the signed content.
	Checkpoint string `json:"checkpoint,omitempty"`
	// Chains are the audit-chain lengths and heads the report states it
	// draws on (in its signed metadata), by serial.
	Chains map[string]Chain `json:"chains,omitempty"`
	// Offline: the ledger was not consulted.
	Offline bool `json:"offline"`
	// Outdated: an authentic report (as issued, and signed by the key
	// when one was given) whose fingerprint no longer matches the ledger:
	// records were added or changed since. OK is false.
	Outdated bool `json:"outdated,omitempty"`
}

// Outcomes of the signature check (Verification.Signature).
const (
	SigValid      = "valid"       // signed by the given key, unaltered since
	SigUnsigned   = "unsigned"    // the file carries no signature
	SigAltered    = "altered"     // the signature does not cover the file or does not verify
	SigOtherKey   = "another key" // a valid signature by another key: forged, or another operator's
	SigNotChecked = "not checked" // no key was given
)

// VerifyOptions are the optional parts of VerifyWith.
type VerifyOptions struct {
	// Key is the operator's public key (sign.LoadPublic); when set, the
	// file must carry a valid PDF signature by it.
	Key *ecdsa.PublicKey
	// Offline checks the signature and the signed fingerprint only,
	// without the ledger (Key is then required, the ledger may be nil).
	Offline bool
}

// ErrOfflineNeedsKey: an offline check without a key would check nothing.
var ErrOfflineNeedsKey = errors.New("an offline check needs the operator's public key (--key PUBKEY.pem): without the ledger, only the signature can show the report authentic")

// MaxVerifyBytes is the largest report file Verify reads (256 MiB): a
// hulltally report is far smaller; a larger file is not one of ours.
const MaxVerifyBytes = 256 << 20

// Verify checks a report file against the ledger: the file must be in the
// register of issued reports (by the SHA-256 of its bytes: any change to
// the file is found), and the fingerprint of the ledger content recomputed
// at the report's generation time must equal the one it was issued with.
// Only a regular file of at most MaxVerifyBytes is read (files.ErrNotRegular,
// files.ErrTooLarge otherwise).
func Verify(ctx context.Context, l *ledger.Ledger, path string) (*Verification, error) {
	return VerifyWith(ctx, l, path, VerifyOptions{})
}

// VerifyOffline checks a report's signature by the operator's key pub and
// the fingerprint in its signed content, without any database: OK when
// the file is unaltered since the operator signed it. It cannot say
// whether the ledger has moved on since.
func VerifyOffline(ctx context.Context, path string, pub *ecdsa.PublicKey) (*Verification, error) {
	return VerifyWith(ctx, nil, path, VerifyOptions{Key: pub, Offline: true})
}

// VerifyWith is Verify with a signature check when o.Key is set (the file
// must carry a valid PDF signature by that key over the whole file, and
// the fingerprint in the signed signature dictionary must equal the one
// in the metadata), and without the ledger when o.Offline. OK only when
// every check passes; Reason tells an altered file (the signature does
// not cover the file or does not verify), a forged one (signed by another
// key), an unsigned one, and an authentic but outdated one (Outdated:
// records added to the ledger since) apart.
func VerifyWith(ctx context.Context, l *ledger.Ledger, path string, o VerifyOptions) (*Verification, error) {
	if o.Offline && o.Key == nil {
		return nil, ErrOfflineNeedsKey
	}
	if !o.Offline && l == nil {
		return nil, errors.New("verifying against the ledger needs the ledger")
	}
	b, err := files.ReadAllLimited(ctx, path, MaxVerifyBytes)
	if err != nil {
		return nil, err
	}
	mm := keywordsRE.FindSubmatch(b)
	if mm == nil {
		return &Verification{Reason: "the file carries no hulltally fingerprint: not a hulltally report, or its metadata was altered", Signature: SigNotChecked, Offline: o.Offline}, nil
	}
	v := &Verification{Kind: string(mm[1]), Subject: string(mm[2]), Fingerprint: string(mm[6]), Signature: SigNotChecked, Offline: o.Offline,
		Chains: parseChains(string(mm[5]))}
	var then int64
	fmt.Sscan(string(mm[4]), &then)
	at, err := time.Parse(time.RFC3339Nano, string(mm[3]))
	if err != nil {
		v.Reason = "the generation time in the metadata is unreadable: the file was altered"
		return v, nil
	}
	v.GeneratedAt = at
	signed := ""
	if o.Key != nil {
		if !checkSignature(v, b, o.Key) {
			return v, nil
		}
		signed = "signed by the operator (" + v.SignedBy + ") and unaltered since, "
		if o.Offline {
			v.OK = true
			v.Reason = "the report is signed by the operator (" + v.SignedBy + ", key " + v.SignerFingerprint + ") and unaltered since signing; its fingerprint is the signed one. The ledger was not consulted (offline): records added since are not known"
			return v, nil
		}
	}
	m, err := Build(ctx, l, v.Kind, v.Subject, at)
	if err != nil {
		v.Reason = fmt.Sprintf("the report's subject is no longer in the ledger: %v", err)
		return v, nil
	}
	fp, earlier, err := m.Fingerprints()
	if err != nil {
		return nil, err
	}
	// A report issued before the records carried recorded_by has the
	// fingerprint of their earlier shape (Fingerprints).
	if earlier != "" && earlier == v.Fingerprint {
		fp = earlier
	}
	sum := sha256.Sum256(b)
	issued, err := l.IssuedReportOf(ctx, sum[:])
	if errors.Is(err, ledger.ErrRegisterBroken) {
		// The register itself does not verify: no entry in it can vouch
		// for the file.
		v.Reason = err.Error()
		return v, nil
	}
	if err != nil {
		return nil, err
	}
	if issued == nil {
		if signed != "" {
			// Signed by the operator, yet not in this ledger's register:
			// another database, or a register that lost the entry.
			v.Reason = signed + "but this ledger did not issue it (its SHA-256 is not in the register of issued reports): verify it against the database that issued it"
		} else {
			v.Reason = "the file is not one this ledger issued (its SHA-256 is not in the register of issued reports): the file was altered"
		}
		if fp != v.Fingerprint {
			v.Reason += "; also, " + what(m, then)
		}
		return v, nil
	}
	if issued.Fingerprint != v.Fingerprint {
		v.Reason = "the file's fingerprint differs from the one it was issued with: the file was altered"
		return v, nil
	}
	if fp != v.Fingerprint {
		v.Outdated = true
		if signed != "" {
			v.Reason = "authentic but outdated: " + signed + "but its fingerprint no longer matches the ledger: " + what(m, then)
		} else {
			v.Reason = "the ledger no longer matches the report: " + what(m, then)
		}
		return v, nil
	}
	v.OK, v.Reason = true, "the report is as issued and matches the ledger"
	if signed != "" {
		v.Reason = "the report is " + signed + "as issued, and matches the ledger"
	}
	if !issued.Chained && issued.Note != "" {
		v.Reason += "; note: " + issued.Note
	}
	return v, nil
}

// checkSignature checks b's signature by pub into v; false (with v.Reason)
// when it does not pass.
func checkSignature(v *Verification, b []byte, pub *ecdsa.PublicKey) bool {
	s, err := sign.Check(b, pub)
	if s != nil {
		v.SignedBy, v.SignerFingerprint, v.Checkpoint = s.Org, s.KeyFingerprint, s.Checkpoint
	}
	switch {
	case errors.Is(err, sign.ErrUnsigned):
		v.Signature = SigUnsigned
		v.Reason = "the file carries no signature: it cannot be shown to come from the operator (an unsigned report, or its signature removed)"
		return false
	case errors.Is(err, sign.ErrOtherKey):
		v.Signature = SigOtherKey
		v.Reason = "forged, or another operator's: " + err.Error()
		return false
	case err != nil:
		v.Signature = SigAltered
		v.Reason = "altered: the signature does not cover the file or does not verify (" + err.Error() + ")"
		return false
	}
	if s.Fingerprint != v.Fingerprint {
		// Both are inside the signed bytes: only a signer could make them
		// differ. Refused all the same.
		v.Signature = SigAltered
		v.Reason = fmt.Sprintf("the fingerprint in the signed signature (%q) differs from the one in the metadata: not a report as hulltally signs them", s.Fingerprint)
		return false
	}
	v.Signature = SigValid
	return true
}

// what explains a fingerprint mismatch from the number of chain records
// the report was made from.
func what(m *Model, then int64) string {
	now := m.records()
	switch {
	case now > then:
		return fmt.Sprintf("%d records were added to the ledger since it was made (for example a dive logged or a maintenance record)", now-then)
	case now < then:
		return fmt.Sprintf("the ledger holds %d fewer records than when it was made: records were removed", then-now)
	}
	return "the same number of records, but a record, the configuration (curves, rules, settings) or the file's fingerprint changed"
}

// parseChains reads the chains= field of a report's metadata.
func parseChains(s string) map[string]Chain {
	if s == "" {
		return nil
	}
	out := map[string]Chain{}
	for _, p := range strings.Split(s, ",") {
		f := strings.Split(p, ":")
		if len(f) != 3 {
			continue
		}
		var n int64
		if _, err := fmt.Sscan(f[1], &n); err != nil {
			continue
		}
		out[f[0]] = Chain{Records: n, Head: f[2]}
	}
	return out
}

// VerifyWithBundle checks a report offline against a hull's bundle, with
// no database: the report's signature by pub (as VerifyOffline), the
// bundle's (ledger.VerifyBundle), and that the chain head the report
// states for the bundle's hull is the bundle's link at that length — the
// report is consistent with the hull's record — and whether records were
// added after it (outdated).
func VerifyWithBundle(ctx context.Context, path string, pub *ecdsa.PublicKey, bundle io.Reader) (*Verification, *ledger.BundleResult, error) {
	v, err := VerifyOffline(ctx, path, pub)
	if err != nil || !v.OK {
		return v, nil, err
	}
	br, err := ledger.VerifyBundle(bundle, pub)
	if err != nil {
		return v, nil, err
	}
	if !br.OK {
		v.OK = false
		v.Reason = "the report is signed, but the bundle does not verify: " + br.Problem
		return v, br, nil
	}
	c, ok := v.Chains[br.Serial]
	switch {
	case v.Chains == nil:
		v.OK = false
		v.Reason = "the report states no chain heads (issued before they were signed into reports): it cannot be checked against a bundle"
	case !ok:
		v.OK = false
		v.Reason = fmt.Sprintf("the report does not draw on hull %s, the bundle's hull", br.Serial)
	case br.Records < c.Records:
		v.OK = false
		v.Reason = fmt.Sprintf("the bundle of %s holds %d records, fewer than the %d the report was made from: an older bundle, or the record was cut short", br.Serial, br.Records, c.Records)
	default:
		h, _ := br.HashAt(c.Records)
		switch {
		case h != c.Head:
			v.OK = false
			v.Reason = fmt.Sprintf("INCONSISTENT: the report was made from record %d of %s with hash %s, but the bundle's record %d has hash %s: the record was rewritten, or the report is forged", c.Records, br.Serial, c.Head, c.Records, h)
		case br.Records > c.Records:
			v.OK, v.Outdated = false, true
			v.Reason = fmt.Sprintf("authentic and consistent with the hull's record, but outdated: the report was made from %d records of %s and the bundle holds %d (records added since)", c.Records, br.Serial, br.Records)
		default:
			v.Reason = fmt.Sprintf("authentic, consistent with the hull's record and current: the report was made from all %d records of %s in the bundle", c.Records, br.Serial)
		}
	}
	return v, br, nil
}
