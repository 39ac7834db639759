// Package view builds what hulltally shows of a hull, a dive and the
// fleet from the ledger, with the presentation rules in one place: the
// urgency order of the fleet, the rounding of damage percentages, the
// remaining-life text, the collapsing of reasons and terminal-safe text.
// The command line and the PDF reports both use it; it reads the ledger
// through its exported API only and imports neither of them.
package view

import (
	"context"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"hulltally/ledger"
)

// Status values of a hull as the ledger states them.
const (
	StatusFit       = "fit"
	StatusWatch     = "watch"
	StatusHold      = "hold"
	StatusWithdrawn = "withdrawn"
)

// LifeVoidStatus is the ledger's remaining-life status of a void life
// (damage.LifeVoid).
const LifeVoidStatus = "void_evidence_open"

// Urgency ranks a status for the fleet view, most urgent lowest:
// withdrawn 0, hold 1, watch 2, fit 3. A status the view does not know is
// ranked with hold (doubtful data leans to hold, never to fit).
func Urgency(status string) int {
	switch status {
	case StatusWithdrawn:
		return 0
	case StatusHold:
		return 1
	case StatusWatch:
		return 2
	case StatusFit:
		return 3
	}
	return 1
}

// Rank is what the fleet order looks at: the status, the governing
// damage ratio (damage over allowable) and the serial.
type Rank struct {
	Status string
	Ratio  float64
	Serial string
}

// sortRatio is a ratio for ordering: not a number counts as infinite
// (the safe side: an unknown damage sorts with the worst).
func sortRatio(r float64) float64 {
	if math.IsNaN(r) {
		return math.Inf(1)
	}
	return r
}

// MoreUrgent reports whether a comes before b in the fleet: by status
// (withdrawn, hold, watch, fit), then by governing damage ratio (highest
// first), then by serial.
func MoreUrgent(a, b Rank) bool {
	if ua, ub := Urgency(a.Status), Urgency(b.Status); ua != ub {
		return ua < ub
	}
	if ra, rb := sortRatio(a.Ratio), sortRatio(b.Ratio); ra != rb {
		return ra > rb
	}
	return a.Serial < b.Serial
}

// SortByUrgency orders rows most urgent first (MoreUrgent); rank reads a
// row's rank.
func SortByUrgency[T any](rows []T, rank func(*T) Rank) {
	sort.SliceStable(rows, func(i, j int) bool { return MoreUrgent(rank(&rows[i]), rank(&rows[j])) })
}

// Percent prints a damage ratio as a percentage of the allowable with
// two decimals, rounded up (never in the hull's favour): "OVERLOAD" for
// an infinite ratio or one that is not a number, "0 %" only for no
// damage at all, "< 0.01 %" for a damage too small for two decimals.
func Percent(r float64) string {
	switch {
	case math.IsInf(r, 1) || math.IsNaN(r):
		return "OVERLOAD"
	case r == 0:
		return "0 %"
	case r > 0 && r < 1e-4:
		return "< 0.01 %"
	}
	return fmt.Sprintf("%.2f %%", math.Ceil(r*1e4)/100)
}

// PercentJSON is a damage ratio as a number of percent for JSON: never
// the string "inf". An infinite ratio (a static overload) is nil with
// overload true; a ratio that is not a number is nil too and counts as an
// overload, the safe side.
func PercentJSON(r float64) (percent *float64, overload bool) {
	if math.IsInf(r, 0) || math.IsNaN(r) {
		return nil, true
	}
	p := 100 * r
	return &p, false
}

// Life is a hull's remaining life as it may be shown.
type Life struct {
	// Void: no figure may be shown (the ledger voided the projection, or
	// the hull is on hold or withdrawn). Dives is then nil.
	Void bool
	// Dives is the figure, nil when none can be told; MoreThan when it is
	// the horizon ("more than N").
	Dives    *int64
	MoreThan bool
	// Status and Reason are the ledger's remaining-life status and
	// reason; Basis what governs the figure (recent_mean, design_dive,
	// ...).
	Status string
	Reason string
	Basis  string
}

// LifeOf is the remaining life of a hull with a status: void when the
// ledger voided it or the status is hold or withdrawn (checked here too,
// so that no figure can slip through), else the ledger's figure.
func LifeOf(status string, d *ledger.Damages) Life {
	if d == nil {
		return Life{Status: "not_evaluated", Reason: "no damage on record"}
	}
	l := Life{Dives: d.RemainingDives, MoreThan: d.RemainingMoreThan, Status: d.RemainingStatus, Reason: d.RemainingReason, Basis: d.RemainingBasis}
	if d.RemainingStatus == LifeVoidStatus || status == StatusHold || status == StatusWithdrawn {
		l.Void, l.Dives, l.MoreThan = true, nil, false
		if d.RemainingStatus != LifeVoidStatus || l.Reason == "" {
			l.Reason = "fatigue projection void while the hull is " + status
		}
		l.Status = LifeVoidStatus
	}
	return l
}

// Short is the remaining life for a table cell: the figure, "more than
// N", "void", "not limited", "too few dives", else the status in words.
func (l Life) Short() string {
	switch {
	case l.Void:
		return "void"
	case l.Dives != nil && l.MoreThan:
		return fmt.Sprintf("more than %d", *l.Dives)
	case l.Dives != nil:
		return fmt.Sprint(*l.Dives)
	case l.Status == "not_limited_by_damage":
		return "not limited"
	case l.Status == "too_few_dives":
		return "too few dives"
	}
	return words(l.Status)
}

// Text is the remaining life in one line: "VOID: reason" (never a
// figure), "N dives (governed by ...)" or "more than N dives (...)", else
// the status in words with its reason.
func (l Life) Text() string {
	if l.Void {
		return "VOID: " + l.Reason
	}
	if l.Dives != nil {
		return fmt.Sprintf("%s (governed by %s)", DivesText(*l.Dives, l.MoreThan), BasisWords(l.Basis))
	}
	return fmt.Sprintf("%s: %s", words(l.Status), l.Reason)
}

// DivesText states a number of dives, "more than N dives" at the horizon.
func DivesText(n int64, moreThan bool) string {
	if moreThan {
		return fmt.Sprintf("more than %d dives", n)
	}
	return fmt.Sprintf("%d dives", n)
}

// BasisWords names what governs the remaining life.
func BasisWords(b string) string {
	switch b {
	case "recent_mean":
		return "the mean damage per dive of the recent dives"
	case "design_dive":
		return "the damage of the design dive"
	case "qualified_cycles":
		return "the pressure cycles the design was qualified for"
	case "current_damage":
		return "the damage already done"
	case "":
		return "not stated"
	}
	return words(b)
}

func words(s string) string { return strings.ReplaceAll(s, "_", " ") }

// ShortReason cuts a reason's text before its rule, basis and source,
// which the JSON output and the reports' basis section carry in full.
func ShortReason(text string) string {
	if i := strings.Index(text, " [rule "); i > 0 {
		return text[:i]
	}
	return text
}

// TerminalSafe replaces control characters (terminal escapes, new lines,
// C1 controls) in text from the ledger with U+FFFD before it is printed.
func TerminalSafe(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f || (r >= 0x80 && r < 0xa0) {
			return '\uFFFD'
		}
		return r
	}, s)
}

// ReasonLine is one line of a collapsed list of reasons: a rule at a
// level, with the number of dives (or records) that raised it.
type ReasonLine struct {
	// First is the first reason of the group, as the ledger gave it.
	First ledger.Reason
	// Count is how many reasons the line stands for (1 or more).
	Count int
}

// Text is the line's reason, cut before its rule (ShortReason) and
// terminal-safe, with "(raised by N dives)" when more than one raised it.
func (r ReasonLine) Text() string {
	t := TerminalSafe(ShortReason(r.First.Text))
	if r.Count > 1 {
		t += fmt.Sprintf(" (raised by %d dives)", r.Count)
	}
	return t
}

// CollapseReasons lists reasons with the same rule raised by many dives
// shown once: one line per kind, rule, level and go/no-go, in the order
// first met, with the count. Reasons that are not flags are collapsed
// only when their text is the same too (nothing different is hidden).
// Reasons at fit (closed flags) are left out unless withClosed.
func CollapseReasons(rs []ledger.Reason, withClosed bool) []ReasonLine {
	idx := map[string]int{}
	var out []ReasonLine
	for _, r := range rs {
		if r.State == StatusFit && !withClosed {
			continue
		}
		key := fmt.Sprintf("%s|%s|%s|%t", r.Kind, r.Code, r.State, r.NoGo)
		if r.Kind != "flag" {
			key += "|" + r.Text
		}
		if i, ok := idx[key]; ok {
			out[i].Count++
			continue
		}
		idx[key] = len(out)
		out = append(out, ReasonLine{First: r, Count: 1})
	}
	return out
}

// OpenFlags are the flags among the reasons that are not closed (not at
// fit), each as the ledger gave it.
func OpenFlags(rs []ledger.Reason) []ledger.Reason {
	out := []ledger.Reason{}
	for _, x := range rs {
		if x.Kind == "flag" && x.State != StatusFit {
			out = append(out, x)
		}
	}
	return out
}

// Hull is the view of one hull at a moment: its record, its status
// evaluated (not recorded) and what is shown of its damage and life.
type Hull struct {
	Record  *ledger.Hull    `json:"record"`
	Fitness *ledger.Fitness `json:"fitness"`
	// Damage is the hull's damage as it may be shown: the ledger's, with
	// every remaining-life figure and projection removed when the life is
	// void (Life.Void). It is a copy; Fitness.Damage is left as read.
	Damage *ledger.Damages `json:"damage"`
	// Life is the remaining life as it may be shown (LifeOf).
	Life Life `json:"life"`
}

// Status is the hull's status.
func (h *Hull) Status() string { return h.Fitness.Status }

// Ratio is the governing damage ratio (damage over allowable); infinite
// for a static overload.
func (h *Hull) Ratio() float64 {
	if h.Damage == nil {
		return math.NaN()
	}
	return float64(h.Damage.GoverningRatio)
}

// Rank is the hull's rank for the fleet order.
func (h *Hull) Rank() Rank {
	return Rank{Status: h.Fitness.Status, Ratio: h.Ratio(), Serial: h.Record.Serial}
}

// HullOf reads a hull and evaluates its status at a moment (a read:
// nothing is recorded).
func HullOf(ctx context.Context, l *ledger.Ledger, serial string, at time.Time) (*Hull, error) {
	var h *Hull
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		rec, err := s.Hull(ctx, serial)
		if err != nil {
			return err
		}
		h, err = hullAt(ctx, s, rec, at)
		return err
	})
	return h, err
}

func hullAt(ctx context.Context, l *ledger.Ledger, rec *ledger.Hull, at time.Time) (*Hull, error) {
	f, err := l.FitnessAt(ctx, rec, at)
	if err != nil {
		return nil, fmt.Errorf("status of hull %s: %w", rec.Serial, err)
	}
	return &Hull{Record: rec, Fitness: f, Life: LifeOf(f.Status, f.Damage), Damage: ShownDamage(f.Status, f.Damage)}, nil
}

// ShownDamage is a copy of a hull's damage as it may be shown: when its
// life is void (LifeOf), no remaining-life figure or projection is left
// in it and its remaining status and reason say why. Nil stays nil.
func ShownDamage(status string, d *ledger.Damages) *ledger.Damages {
	if d == nil {
		return nil
	}
	c := *d
	if life := LifeOf(status, d); life.Void {
		c.RemainingDives, c.RemainingAtRecentMean, c.RemainingAtDesignDive, c.RemainingMoreThan = nil, nil, nil, false
		c.RemainingAtRecentMeanMoreThan, c.RemainingAtDesignDiveMoreThan = false, false
		c.RemainingStatus, c.RemainingReason = life.Status, life.Reason
	}
	return &c
}

// Fleet is every hull with its summary, in the ledger's order of
// serials (Hulls) and most urgent first (Ordered).
type Fleet struct {
	Summaries []ledger.HullSummary
	// Hulls are by serial.
	Hulls map[string]*Hull
}

// FleetOf reads every hull and evaluates its status at a moment (a read:
// nothing is recorded).
func FleetOf(ctx context.Context, l *ledger.Ledger, at time.Time) (*Fleet, error) {
	var fl *Fleet
	// One snapshot for the whole fleet: every hull's figures from the same
	// moment.
	err := l.Snapshot(ctx, func(sl *ledger.Ledger) error {
		hs, err := sl.Hulls(ctx)
		if err != nil {
			return err
		}
		fl = &Fleet{Summaries: hs, Hulls: map[string]*Hull{}}
		for _, s := range hs {
			h, err := HullOf(ctx, sl, s.Serial, at)
			if err != nil {
				return err
			}
			fl.Hulls[s.Serial] = h
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return fl, nil
}

// Ordered are the fleet's hulls most urgent first (MoreUrgent).
func (f *Fleet) Ordered() []*Hull {
	out := make([]*Hull, 0, len(f.Summaries))
	for _, s := range f.Summaries {
		if h := f.Hulls[s.Serial]; h != nil {
			out = append(out, h)
		}
	}
	SortByUrgency(out, func(h **Hull) Rank { return (*h).Rank() })
	return out
}
