package reports

import (
	"context"
	"crypto/sha256"
	"fmt"
	"io"
	"regexp"
	"time"

	"hulltally/ledger"
	"hulltally/ledger/files"
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
}

// Write builds and renders a report and writes it to path, atomically (see
// files.WriteAtomic): path must not be a symbolic link (files.ErrSymlink)
// or anything but a regular file, and on any error the old file at path is
// left byte-identical.
func Write(ctx context.Context, l *ledger.Ledger, kind, subject, path string, at time.Time) (*Written, error) {
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
	sum := sha256.Sum256(b)
	// Atomically: a temporary file in the same folder, synced and renamed
	// into place. Never through a symbolic link at path; on any error (a
	// full disk) the old file at path is left as it was.
	if err := files.WriteAtomic(path, func(w io.Writer) error { _, err := w.Write(b); return err }, 0o644); err != nil {
		return nil, err
	}
	w := &Written{Path: path, Kind: kind, Subject: m.Subject, Fingerprint: fp, GeneratedAt: at, Pages: pages(b), Bytes: len(b), Warning: r.Warning()}
	for _, c := range r.Unprintable {
		w.Unprintable = append(w.Unprintable, fmt.Sprintf("U+%04X", c))
	}
	if err := l.RegisterReport(ctx, ledger.IssuedReport{FileSHA256: sum[:], Kind: kind, Subject: m.Subject, Fingerprint: fp, GeneratedAt: at, Pages: w.Pages}); err != nil {
		return nil, err
	}
	return w, nil
}

var (
	keywordsRE = regexp.MustCompile(`/Keywords \(hulltally-report kind=(\w+) subject=([^ ]+) generated=([^ ]+) records=(\d+) fingerprint=([0-9a-f]{64})\)`)
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
}

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
	b, err := files.ReadAllLimited(ctx, path, MaxVerifyBytes)
	if err != nil {
		return nil, err
	}
	mm := keywordsRE.FindSubmatch(b)
	if mm == nil {
		return &Verification{Reason: "the file carries no hulltally fingerprint: not a hulltally report, or its metadata was altered"}, nil
	}
	v := &Verification{Kind: string(mm[1]), Subject: string(mm[2]), Fingerprint: string(mm[5])}
	var then int64
	fmt.Sscan(string(mm[4]), &then)
	at, err := time.Parse(time.RFC3339Nano, string(mm[3]))
	if err != nil {
		v.Reason = "the generation time in the metadata is unreadable: the file was altered"
		return v, nil
	}
	v.GeneratedAt = at
	m, err := Build(ctx, l, v.Kind, v.Subject, at)
	if err != nil {
		v.Reason = fmt.Sprintf("the report's subject is no longer in the ledger: %v", err)
		return v, nil
	}
	fp, err := m.Fingerprint()
	if err != nil {
		return nil, err
	}
	sum := sha256.Sum256(b)
	issued, err := l.IssuedReportOf(ctx, sum[:])
	if err != nil {
		return nil, err
	}
	if issued == nil {
		v.Reason = "the file is not one this ledger issued (its SHA-256 is not in the register of issued reports): the file was altered"
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
		v.Reason = "the ledger no longer matches the report: " + what(m, then)
		return v, nil
	}
	v.OK, v.Reason = true, "the report is as issued and matches the ledger"
	return v, nil
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
