package view

import (
	"context"
	"fmt"
	"time"

	"hulltally/ledger"
)

// Dive is the view of one dive: its record and load, and (WithHull) its
// hull's status at a moment with the flags this dive raised.
type Dive struct {
	Record *ledger.Dive
	Load   *ledger.DiveLoad
	// Hull and Flags are set by WithHull: the hull's view and the flags
	// of its status raised by this dive.
	Hull  *Hull
	Flags []ledger.Flag
}

// DiveOf reads a dive (its ID or the first characters of it) and its
// load.
func DiveOf(ctx context.Context, l *ledger.Ledger, id string) (*Dive, error) {
	var out *Dive
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		d, err := s.Dive(ctx, id)
		if err != nil {
			return err
		}
		load, err := s.LoadOf(ctx, d.ID)
		if err != nil {
			return fmt.Errorf("load of dive %s: %w", d.ID, err)
		}
		out = &Dive{Record: d, Load: load}
		return nil
	})
	return out, err
}

// WithHull evaluates the dive's hull at a moment (a read: nothing is
// recorded) and keeps the flags of its status that this dive raised.
func (d *Dive) WithHull(ctx context.Context, l *ledger.Ledger, at time.Time) error {
	h, err := HullOf(ctx, l, d.Record.Hull, at)
	if err != nil {
		return err
	}
	d.Hull, d.Flags = h, []ledger.Flag{}
	for _, fl := range h.Fitness.Flags {
		if fl.Dive == d.Record.ID.String() {
			d.Flags = append(d.Flags, fl)
		}
	}
	return nil
}
