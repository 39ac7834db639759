package ledger

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"
)

// ErrSnapshotWrite is returned by a write method called on the Ledger a
// Snapshot hands to its function: a snapshot only reads.
var ErrSnapshotWrite = errors.New("a ledger snapshot only reads: writes are refused inside Snapshot")

// Snapshot runs fn with a Ledger whose reads all go through one
// read-only REPEATABLE READ transaction, so every read inside fn sees the
// ledger as it stood at the transaction's first query: a dive, assessment
// or decision committed meanwhile is seen by none of them, and figures
// read by separate calls (the chain head, the damage, the dives) agree.
//
// The Ledger given to fn is valid only during fn, and it is not safe for
// concurrent use (one transaction is one connection): call its methods
// from one goroutine. Write methods called on it return
// ErrSnapshotWrite. A Snapshot inside a Snapshot reuses the outer one.
func (l *Ledger) Snapshot(ctx context.Context, fn func(s *Ledger) error) error {
	if l.snapshot {
		return fn(l)
	}
	var fnErr error
	err := pgx.BeginTxFunc(ctx, l.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
		s := *l
		s.db, s.snapshot = tx, true
		fnErr = fn(&s)
		return fnErr
	})
	if fnErr != nil {
		return fnErr
	}
	if err != nil {
		return fmt.Errorf("ledger snapshot: %w", err)
	}
	return nil
}

// writable refuses a write on a snapshot's Ledger.
func (l *Ledger) writable(what string) error {
	if l.snapshot {
		return fmt.Errorf("%s: %w", what, ErrSnapshotWrite)
	}
	return nil
}
