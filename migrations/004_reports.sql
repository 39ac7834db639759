-- The register of issued reports: every PDF hulltally writes, by the
-- SHA-256 of its bytes, with its fingerprint. `report verify` finds a file
-- here (an unaltered, issued report) and then checks its fingerprint
-- against the ledger. Append-only; kept outside the hull chains so that
-- issuing a report does not change the content it fingerprints.
CREATE TABLE issued_reports (
    file_sha256  bytea PRIMARY KEY CHECK (length(file_sha256) = 32),
    kind         text NOT NULL,
    subject      text NOT NULL,
    fingerprint  text NOT NULL,
    generated_at timestamptz NOT NULL,
    pages        integer NOT NULL,
    recorded_at  timestamptz NOT NULL
);

SELECT ledger_protect(ARRAY['issued_reports']);
