package view

import (
	"context"
	"math"
	"time"

	"hulltally/ledger"
)

// FleetRow is one hull of the fleet view (fleet --json), with the same
// rules as the text.
type FleetRow struct {
	Serial string `json:"serial"`
	Name   string `json:"name"`
	Status string `json:"status"`
	// DamagePercent is the governing damage in percent of its allowable;
	// null, with DamageOverload, when the damage is infinite (a static
	// overload) or not a number: never the string "inf".
	DamagePercent  *float64 `json:"damage_percent_of_allowable"`
	DamageOverload bool     `json:"damage_overload"`
	Governing      string   `json:"governing_component"`
	// RemainingDives is null when no figure may be told (void, or none);
	// Remaining is the text the table shows (Life.Short).
	RemainingDives *int64 `json:"remaining_dives"`
	Remaining      string `json:"remaining"`
	// RemainingMoreThan: the figure is the horizon; RemainingReason says
	// how the figure was reached, or why there is none.
	RemainingMoreThan bool            `json:"remaining_more_than"`
	RemainingStatus   string          `json:"remaining_status"`
	RemainingReason   string          `json:"remaining_reason"`
	LastDive          *time.Time      `json:"last_dive"`
	OpenFlags         []ledger.Reason `json:"open_flags"`
	Reasons           []ledger.Reason `json:"reasons"`
	// EvaluatedAt is when the figures were evaluated; FromSummary is true
	// when they were read from the fleet summary the last write left
	// (ledger.Fleet), false when the hull was evaluated for this read.
	EvaluatedAt time.Time `json:"evaluated_at"`
	FromSummary bool      `json:"from_summary"`
	// Ratio is the governing damage ratio, for the order and the text
	// (Percent): null when infinite or not a number (read back as +Inf).
	Ratio ledger.Num `json:"damage_ratio"`
}

// Row is the hull's fleet row.
func (h *Hull) Row() FleetRow {
	r := rowOf(h.Record.Serial, h.Record.Spec.Name, h.Fitness.Status, h.Fitness.Reasons, h.Fitness.LastDive, h.Fitness.Damage)
	r.EvaluatedAt = h.Fitness.EvaluatedAt
	return r
}

// rowOf is a fleet row from a hull's status, reasons, last dive and the
// ledger's damage (before the view voids a life: ShownDamage, LifeOf).
func rowOf(serial, name, status string, reasons []ledger.Reason, lastDive *time.Time, dmg *ledger.Damages) FleetRow {
	shown, life := ShownDamage(status, dmg), LifeOf(status, dmg)
	r := FleetRow{Serial: serial, Name: name, Status: status, Ratio: ledger.Num(math.NaN()),
		LastDive: lastDive, OpenFlags: OpenFlags(reasons), Reasons: reasons}
	if shown != nil {
		r.Ratio, r.Governing = shown.GoverningRatio, shown.Governing
	}
	r.DamagePercent, r.DamageOverload = PercentJSON(float64(r.Ratio))
	r.RemainingDives, r.RemainingMoreThan, r.RemainingStatus, r.RemainingReason = life.Dives, life.MoreThan, life.Status, life.Reason
	r.Remaining = life.Short()
	return r
}

// FleetRowsOf are the fleet's rows at a moment, most urgent first, read
// through the ledger's fleet summary (ledger.Fleet): hulls whose summary
// no longer stands for them are evaluated from the ledger. A read: nothing
// is recorded.
func FleetRowsOf(ctx context.Context, l *ledger.Ledger, at time.Time) ([]FleetRow, error) {
	es, err := l.Fleet(ctx, at)
	if err != nil {
		return nil, err
	}
	out := make([]FleetRow, 0, len(es))
	for _, e := range es {
		r := rowOf(e.Serial, e.Name, e.Status, e.Reasons, e.LastDive, e.Damage)
		r.EvaluatedAt, r.FromSummary = e.EvaluatedAt, e.Derived
		out = append(out, r)
	}
	SortByUrgency(out, func(r *FleetRow) Rank { return Rank{Status: r.Status, Ratio: float64(r.Ratio), Serial: r.Serial} })
	return out, nil
}

// Rows are the fleet's rows, most urgent first.
func (f *Fleet) Rows() []FleetRow {
	out := []FleetRow{}
	for _, h := range f.Ordered() {
		out = append(out, h.Row())
	}
	return out
}

// HullRow is one hull of the hull list (hull list --json): the totals and
// what the text shows of its damage and life.
type HullRow struct {
	ledger.HullSummary
	Status string `json:"status"`
	// Governing is the component nearest its allowable.
	Governing string `json:"governing_component"`
	// DamagePercent is the governing damage in percent of its allowable;
	// null with DamageOverload when it is infinite (a static overload).
	DamagePercent  *float64 `json:"damage_percent_of_allowable"`
	DamageOverload bool     `json:"damage_overload"`
	// RemainingDives is null when no figure can be told (RemainingStatus
	// and RemainingReason say why); RemainingMoreThan when it is the
	// horizon. Remaining is the text the table shows.
	RemainingDives    *int64     `json:"remaining_dives"`
	RemainingMoreThan bool       `json:"remaining_more_than"`
	RemainingStatus   string     `json:"remaining_status"`
	RemainingReason   string     `json:"remaining_reason"`
	Remaining         string     `json:"remaining"`
	LastDive          *time.Time `json:"last_dive"`
	// Ratio is the governing damage ratio, for the text (Percent).
	Ratio float64 `json:"-"`
}

// HullRows are the fleet's hulls in the ledger's order (hull list).
func (f *Fleet) HullRows() []HullRow {
	rows := map[string]FleetRow{}
	for serial, h := range f.Hulls {
		rows[serial] = h.Row()
	}
	return hullRows(f.Summaries, rows)
}

// HullRowsOf are the hulls in the ledger's order (hull list) at a moment,
// their status and damage read through the fleet summary as FleetRowsOf
// does; one snapshot. A read.
func HullRowsOf(ctx context.Context, l *ledger.Ledger, at time.Time) ([]HullRow, error) {
	var out []HullRow
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		hs, err := s.Hulls(ctx)
		if err != nil {
			return err
		}
		fr, err := FleetRowsOf(ctx, s, at)
		if err != nil {
			return err
		}
		rows := map[string]FleetRow{}
		for _, r := range fr {
			rows[r.Serial] = r
		}
		out = hullRows(hs, rows)
		return nil
	})
	return out, err
}

func hullRows(hs []ledger.HullSummary, rows map[string]FleetRow) []HullRow {
	out := []HullRow{}
	for _, s := range hs {
		r := HullRow{HullSummary: s, LastDive: s.LastDive}
		if fr, ok := rows[s.Serial]; ok {
			r.Status, r.Governing, r.Ratio = fr.Status, fr.Governing, float64(fr.Ratio)
			r.DamagePercent, r.DamageOverload = fr.DamagePercent, fr.DamageOverload
			r.RemainingDives, r.RemainingMoreThan, r.RemainingStatus, r.RemainingReason, r.Remaining = fr.RemainingDives, fr.RemainingMoreThan, fr.RemainingStatus, fr.RemainingReason, fr.Remaining
		}
		out = append(out, r)
	}
	return out
}
