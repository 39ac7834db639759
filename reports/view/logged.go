package view

import (
	"context"
	"encoding/json"
	"time"

	"hulltally/ledger"
)

// Logged is the answer to logging a dive, the same from the command line
// and from the service: the record and, for a dive newly recorded, its
// cycles and damage and the hull's status before and after it with the
// reasons of each. A duplicate (the same samples already recorded) carries
// the record only, and its JSON is the record's.
type Logged struct {
	*ledger.Dive
	*ledger.DiveLoad
	StatusBefore  string          `json:"status_before"`
	StatusAfter   string          `json:"status_after"`
	Reasons       []ledger.Reason `json:"status_reasons"`
	ReasonsBefore []ledger.Reason `json:"status_reasons_before"`
	// Caution is the caution the caller shows (reports.Caution).
	Caution string `json:"caution"`
}

// LogDive logs a dive as the ledger's identity and returns the answer,
// with the caller's caution (reports.Caution). An unknown hull is bad
// input.
func LogDive(ctx context.Context, l *ledger.Ledger, req ledger.LogRequest, now time.Time, caution string) (*Logged, error) {
	h, err := l.Hull(ctx, req.Hull)
	if err != nil {
		return nil, &ledger.InputError{Err: err}
	}
	before, err := l.FitnessAt(ctx, h, now)
	if err != nil {
		return nil, err
	}
	d, err := l.LogDive(ctx, req)
	if err != nil {
		return nil, err
	}
	if d.Duplicate {
		return &Logged{Dive: d}, nil
	}
	after := d.StatusAfter() // evaluated and noted by LogDive
	if after == nil {
		if after, err = l.FitnessOf(ctx, h, time.Now().UTC()); err != nil {
			return nil, err
		}
	}
	load, err := l.LoadOf(ctx, d.ID)
	if err != nil {
		return nil, err
	}
	return &Logged{Dive: d, DiveLoad: load, StatusBefore: before.Status, StatusAfter: after.Status,
		Reasons: after.Reasons, ReasonsBefore: before.Reasons, Caution: caution}, nil
}

// loggedJSON is Logged without its methods, for encoding.
type loggedJSON Logged

// MarshalJSON implements json.Marshaler: a duplicate is its record.
func (g *Logged) MarshalJSON() ([]byte, error) {
	if g.DiveLoad == nil {
		return json.Marshal(g.Dive)
	}
	return json.Marshal((*loggedJSON)(g))
}

// UnmarshalJSON implements json.Unmarshaler (a client reading the
// service's answer).
func (g *Logged) UnmarshalJSON(b []byte) error {
	var v loggedJSON
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	if v.Dive != nil && v.Dive.Duplicate {
		v.DiveLoad = nil
	}
	*g = Logged(v)
	return nil
}
