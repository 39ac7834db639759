package view

import (
	"math"
	"strings"
	"testing"

	"hulltally/ledger"
)

func i64(v int64) *int64 { return &v }

// TestMoreUrgent: the adversarial cases first. A hull on hold with a
// small damage sorts above a fit hull with a large one; a withdrawn hull
// above all; a damage that is not a number sorts as the worst; an unknown
// status is ranked with hold, never below fit.
func TestMoreUrgent(t *testing.T) {
	for _, tc := range []struct {
		name string
		a, b Rank
		want bool // a before b
	}{
		{"hold small before fit large", Rank{"hold", 0.001, "Z"}, Rank{"fit", 0.95, "A"}, true},
		{"fit large after hold small", Rank{"fit", 0.95, "A"}, Rank{"hold", 0.001, "Z"}, false},
		{"watch small before fit overload", Rank{"watch", 0, "Z"}, Rank{"fit", math.Inf(1), "A"}, true},
		{"withdrawn before hold", Rank{"withdrawn", 0, "Z"}, Rank{"hold", 0.9, "A"}, true},
		{"unknown status not below fit", Rank{"", 0, "Z"}, Rank{"fit", 0.9, "A"}, true},
		{"unknown status with hold: by damage", Rank{"bogus", 0.1, "A"}, Rank{"hold", 0.2, "Z"}, false},
		{"same status: higher damage first", Rank{"watch", 0.5, "Z"}, Rank{"watch", 0.4, "A"}, true},
		{"same status: NaN damage as the worst", Rank{"fit", math.NaN(), "Z"}, Rank{"fit", 0.99, "A"}, true},
		{"same status: overload first", Rank{"hold", math.Inf(1), "Z"}, Rank{"hold", 5, "A"}, true},
		{"tie: by serial", Rank{"fit", 0.2, "A"}, Rank{"fit", 0.2, "B"}, true},
		{"tie: by serial, reversed", Rank{"fit", 0.2, "B"}, Rank{"fit", 0.2, "A"}, false},
	} {
		if got := MoreUrgent(tc.a, tc.b); got != tc.want {
			t.Errorf("%s: MoreUrgent(%+v, %+v) = %v, want %v", tc.name, tc.a, tc.b, got, tc.want)
		}
	}
	rows := []Rank{{"fit", 0.9, "F1"}, {"watch", 0.1, "W1"}, {"fit", 0.9, "F0"}, {"withdrawn", 0, "X1"}, {"hold", 0.00001, "H1"}, {"hold", 0.5, "H0"}}
	SortByUrgency(rows, func(r *Rank) Rank { return *r })
	var got []string
	for _, r := range rows {
		got = append(got, r.Serial)
	}
	if want := "X1 H0 H1 W1 F0 F1"; strings.Join(got, " ") != want {
		t.Errorf("fleet order %v, want %s", got, want)
	}
}

// TestPercent: rounding is upward, never in the hull's favour; a tiny
// damage is never 0 %; an infinite or NaN ratio is OVERLOAD.
func TestPercent(t *testing.T) {
	for _, tc := range []struct {
		r    float64
		want string
	}{
		{0.00001, "< 0.01 %"},
		{1e-300, "< 0.01 %"},
		{0.0001, "0.01 %"},
		{0.00010001, "0.02 %"},
		{0.99991, "100.00 %"},
		{0.123401, "12.35 %"},
		{0.5, "50.00 %"},
		{1, "100.00 %"},
		{math.Inf(1), "OVERLOAD"},
		{math.NaN(), "OVERLOAD"},
		{0, "0 %"},
	} {
		if got := Percent(tc.r); got != tc.want {
			t.Errorf("Percent(%g) = %q, want %q", tc.r, got, tc.want)
		}
	}
	for _, r := range []float64{math.Inf(1), math.NaN()} {
		if p, over := PercentJSON(r); p != nil || !over {
			t.Errorf("PercentJSON(%v) = %v, %v; want nil and overload", r, p, over)
		}
	}
	if p, over := PercentJSON(0.25); p == nil || *p != 25 || over {
		t.Errorf("PercentJSON(0.25) = %v, %v", p, over)
	}
}

// TestLife: a void life never prints a figure, whether the ledger voided
// it or the status is hold or withdrawn with a figure left in.
func TestLife(t *testing.T) {
	for _, tc := range []struct {
		name, status     string
		d                ledger.Damages
		short, text, bad string
		void             bool
	}{
		{name: "hold with a figure left in", status: "hold",
			d:     ledger.Damages{RemainingDives: i64(512), RemainingStatus: "estimated", RemainingBasis: "recent_mean"},
			short: "void", text: "VOID: fatigue projection void while the hull is hold", bad: "512", void: true},
		{name: "withdrawn with a horizon left in", status: "withdrawn",
			d:     ledger.Damages{RemainingDives: i64(10000), RemainingMoreThan: true, RemainingStatus: "beyond_horizon"},
			short: "void", text: "VOID: fatigue projection void while the hull is withdrawn", bad: "10000", void: true},
		{name: "voided by the ledger on watch", status: "watch",
			d:     ledger.Damages{RemainingStatus: LifeVoidStatus, RemainingReason: "fatigue projection void while evidence of damage is open: x"},
			short: "void", text: "VOID: fatigue projection void while evidence of damage is open: x", void: true},
		{name: "beyond the horizon", status: "fit",
			d:     ledger.Damages{RemainingDives: i64(5), RemainingMoreThan: true, RemainingStatus: "beyond_horizon", RemainingBasis: "design_dive"},
			short: "more than 5", text: "more than 5 dives (governed by the damage of the design dive)"},
		{name: "estimated", status: "watch",
			d:     ledger.Damages{RemainingDives: i64(412), RemainingStatus: "estimated", RemainingBasis: "recent_mean"},
			short: "412", text: "412 dives (governed by the mean damage per dive of the recent dives)"},
		{name: "not limited", status: "fit",
			d:     ledger.Damages{RemainingStatus: "not_limited_by_damage", RemainingReason: "no damage"},
			short: "not limited", text: "not limited by damage: no damage"},
		{name: "too few dives", status: "fit",
			d:     ledger.Damages{RemainingStatus: "too_few_dives", RemainingReason: "2 dives"},
			short: "too few dives", text: "too few dives: 2 dives"},
		{name: "other status in words", status: "fit",
			d:     ledger.Damages{RemainingStatus: "allowable_reached", RemainingReason: "r"},
			short: "allowable reached", text: "allowable reached: r"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l := LifeOf(tc.status, &tc.d)
			if l.Short() != tc.short || l.Text() != tc.text || l.Void != tc.void {
				t.Errorf("LifeOf: short %q, text %q, void %v; want %q, %q, %v", l.Short(), l.Text(), l.Void, tc.short, tc.text, tc.void)
			}
			if tc.void {
				sd := ShownDamage(tc.status, &tc.d)
				if l.Dives != nil || sd.RemainingDives != nil || sd.RemainingMoreThan || sd.RemainingStatus != LifeVoidStatus {
					t.Errorf("void life carries a figure: %v, shown damage %+v", l.Dives, sd)
				}
				if tc.d.RemainingStatus != LifeVoidStatus && tc.d.RemainingDives == nil {
					t.Error("ShownDamage changed the ledger's damage")
				}
			}
			if tc.bad != "" && (strings.Contains(l.Short(), tc.bad) || strings.Contains(l.Text(), tc.bad)) {
				t.Errorf("void life prints the figure %s: %q / %q", tc.bad, l.Short(), l.Text())
			}
		})
	}
	if l := LifeOf("fit", nil); l.Dives != nil || l.Short() == "" {
		t.Errorf("no damage: %+v", l)
	}
}

// TestCollapseReasons: the same rule at the same level raised by many
// dives is one line with the count; a different level of the same rule
// is its own line (a hold is never hidden behind a watch); reasons that
// are not flags are kept apart when their texts differ; closed flags are
// left out unless asked for.
func TestCollapseReasons(t *testing.T) {
	rs := []ledger.Reason{
		{Kind: "flag", Code: "felicity", State: "watch", Text: "Felicity 0.97 on dive a [rule felicity, source x]"},
		{Kind: "flag", Code: "felicity", State: "hold", NoGo: true, Text: "Felicity 0.8 on dive b"},
		{Kind: "flag", Code: "felicity", State: "watch", Text: "Felicity 0.96 on dive c"},
		{Kind: "flag", Code: "felicity", State: "watch", Text: "Felicity 0.95 on dive d"},
		{Kind: "maintenance", Code: "inspection", State: "hold", Text: "no inspection"},
		{Kind: "maintenance", Code: "inspection", State: "hold", Text: "inspection failed\x1b[2J"},
		{Kind: "flag", Code: "depth", State: "fit", Text: "closed"},
	}
	got := CollapseReasons(rs, false)
	want := []struct {
		state, text string
		n           int
	}{
		{"watch", "Felicity 0.97 on dive a (raised by 3 dives)", 3},
		{"hold", "Felicity 0.8 on dive b", 1},
		{"maintenance", "", 0},
	}
	if len(got) != 4 {
		t.Fatalf("%d lines, want 4: %+v", len(got), got)
	}
	for i, w := range want[:2] {
		if got[i].First.State != w.state || got[i].Text() != w.text || got[i].Count != w.n {
			t.Errorf("line %d: %s %q ×%d; want %s %q ×%d", i, got[i].First.State, got[i].Text(), got[i].Count, w.state, w.text, w.n)
		}
	}
	if got[2].Text() != "no inspection" || got[3].Text() != "inspection failed\uFFFD[2J" {
		t.Errorf("non-flag reasons: %q, %q", got[2].Text(), got[3].Text())
	}
	if all := CollapseReasons(rs, true); len(all) != 5 || all[4].First.State != "fit" {
		t.Errorf("with closed: %+v", all)
	}
	if n := len(OpenFlags(rs)); n != 4 {
		t.Errorf("%d open flags, want 4", n)
	}
}

// TestTerminalSafe: escapes, new lines and C1 controls are replaced;
// other text is kept.
func TestTerminalSafe(t *testing.T) {
	if got := TerminalSafe("a\x1b[31mb\nc\u0085d\x7fé µε"); got != "a\uFFFD[31mb\uFFFDc\uFFFDd\uFFFDé µε" {
		t.Errorf("TerminalSafe = %q", got)
	}
	if got := ShortReason("depth 4100 m [rule beyond-rated, source s]"); got != "depth 4100 m" {
		t.Errorf("ShortReason = %q", got)
	}
}
