package ledger

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// RecomputeChainForTest does what an attacker with the database can do
// after rewriting records: it recomputes every hash of hull's chain from
// the records as they now stand, so that Verify finds every link holding.
// The caller has disabled the append-only triggers in tx.
func RecomputeChainForTest(ctx context.Context, tx pgx.Tx, hull uuid.UUID) error {
	type link struct {
		seq       int64
		kind, key string
	}
	rows, err := tx.Query(ctx, "SELECT seq, kind, record_key FROM audit_chain WHERE hull_id = $1 ORDER BY seq", hull)
	if err != nil {
		return err
	}
	var links []link
	for rows.Next() {
		var k link
		if err := rows.Scan(&k.seq, &k.kind, &k.key); err != nil {
			rows.Close()
			return err
		}
		links = append(links, k)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	prev := make([]byte, 32)
	for _, k := range links {
		canon, _, why, err := recordCanon(ctx, tx, k.kind, k.key)
		if err != nil {
			return err
		}
		if why != "" {
			return fmt.Errorf("record %d (%s %s): %s", k.seq, k.kind, k.key, why)
		}
		h := chainHash(prev, canon)
		if _, err := tx.Exec(ctx, "UPDATE audit_chain SET prev_hash = $1, hash = $2 WHERE hull_id = $3 AND seq = $4", prev, h, hull, k.seq); err != nil {
			return err
		}
		prev = h
	}
	return nil
}
