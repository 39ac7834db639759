package ledger

import (
	"context"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
)

// IssuedReport is an entry of the register of issued reports.
type IssuedReport struct {
	FileSHA256  []byte
	Kind        string
	Subject     string
	Fingerprint string
	GeneratedAt time.Time
	Pages       int
}

// RegisterReport records an issued report (idempotent for the same file).
func (l *Ledger) RegisterReport(ctx context.Context, r IssuedReport) error {
	if err := l.writable("RegisterReport"); err != nil {
		return err
	}
	_, err := l.pool.Exec(ctx, `INSERT INTO issued_reports (file_sha256, kind, subject, fingerprint, generated_at, pages, recorded_at)
		VALUES ($1,$2,$3,$4,$5,$6,$7) ON CONFLICT (file_sha256) DO NOTHING`, r.FileSHA256, r.Kind, r.Subject, r.Fingerprint, r.GeneratedAt, r.Pages, now())
	if err != nil {
		return fmt.Errorf("registering the report: %w", err)
	}
	return nil
}

// IssuedReportOf looks a file up in the register by its SHA-256; nil when
// it was not issued by this ledger.
func (l *Ledger) IssuedReportOf(ctx context.Context, sha []byte) (*IssuedReport, error) {
	r := &IssuedReport{FileSHA256: sha}
	err := l.db.QueryRow(ctx, "SELECT kind, subject, fingerprint, generated_at, pages FROM issued_reports WHERE file_sha256 = $1", sha).
		Scan(&r.Kind, &r.Subject, &r.Fingerprint, &r.GeneratedAt, &r.Pages)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	return r, nil
}
