package view

import (
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
	// Ratio is the governing damage ratio, for the order and the text
	// (Percent); not in the JSON, which carries DamagePercent.
	Ratio float64 `json:"-"`
}

// Row is the hull's fleet row.
func (h *Hull) Row() FleetRow {
	r := FleetRow{Serial: h.Record.Serial, Name: h.Record.Spec.Name, Status: h.Fitness.Status, Ratio: h.Ratio(),
		LastDive: h.Fitness.LastDive, OpenFlags: OpenFlags(h.Fitness.Reasons), Reasons: h.Fitness.Reasons}
	r.DamagePercent, r.DamageOverload = PercentJSON(r.Ratio)
	if h.Damage != nil {
		r.Governing = h.Damage.Governing
	}
	r.RemainingDives, r.RemainingMoreThan, r.RemainingStatus, r.RemainingReason = h.Life.Dives, h.Life.MoreThan, h.Life.Status, h.Life.Reason
	r.Remaining = h.Life.Short()
	return r
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
	out := []HullRow{}
	for _, s := range f.Summaries {
		r := HullRow{HullSummary: s, LastDive: s.LastDive}
		if h := f.Hulls[s.Serial]; h != nil {
			fr := h.Row()
			r.Status, r.Governing, r.Ratio = fr.Status, fr.Governing, fr.Ratio
			r.DamagePercent, r.DamageOverload = fr.DamagePercent, fr.DamageOverload
			r.RemainingDives, r.RemainingMoreThan, r.RemainingStatus, r.RemainingReason, r.Remaining = fr.RemainingDives, fr.RemainingMoreThan, fr.RemainingStatus, fr.RemainingReason, fr.Remaining
		}
		out = append(out, r)
	}
	return out
}
