package fitness

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"
)

// Flag is one rule tripped by the hull or by one dive.
type Flag struct {
	// Rule and Title are the rule's id and title.
	Rule, Title string
	// Level is watch or hold.
	Level Level
	// Value is the measured value; NaN when Missing.
	Value float64
	// Threshold is the threshold of Level, compared as When says.
	Threshold float64
	// When is the comparison of Value with Threshold.
	When Comparison
	// Unit is the unit of Value and Threshold, "" for a plain ratio.
	Unit string
	// Missing is true when the rule applied but its value was missing or
	// doubtful; the flag then carries the rule's missing-data level.
	Missing bool
	// Detail says what was measured in words: the gauge, the component,
	// what is missing.
	Detail string
	// Basis and Source are the rule's.
	Basis, Source string
	// Dive is the id of the dive that raised the flag, "" for a hull-level
	// rule.
	Dive string
	// At is when the flag's event happened: the dive's start for a dive
	// rule (the latest start of the dives a running sum covers),
	// HullFacts.Now for a hull-level rule.
	At time.Time
	// RecordedAt is when the ledger learned of the dive or fact behind the
	// flag: the dive's RecordedAt (the latest of the dives a running sum
	// covers), HullFacts.Now for a hull-level rule; zero when not known,
	// and At stands in for it. Only a passing record later than the flag
	// both in its time and in its recording can clear it.
	RecordedAt time.Time
}

// String says the flag in words.
func (f Flag) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %s", f.Level, f.Title)
	if f.Dive != "" {
		fmt.Fprintf(&b, " (dive %s)", f.Dive)
	}
	if f.Missing {
		fmt.Fprintf(&b, ": value not established, treated as %s", f.Level)
	} else {
		fmt.Fprintf(&b, ": %s %s %s", num(f.Value, f.Unit), f.When.Symbol(), num(f.Threshold, f.Unit))
	}
	if f.Detail != "" {
		fmt.Fprintf(&b, "; %s", f.Detail)
	}
	fmt.Fprintf(&b, " [rule %s; basis: %s; source: %s]", f.Rule, f.Basis, f.Source)
	return b.String()
}

func num(v float64, unit string) string {
	if unit == "" || strings.HasPrefix(unit, "of ") || unit == "relative change" {
		return fmt.Sprintf("%.4g", v)
	}
	return fmt.Sprintf("%.4g %s", v, unit)
}

// DiveFacts is what the ledger knows about one dive.
type DiveFacts struct {
	// ID is the dive's identifier in the ledger.
	ID string
	// Start is when the dive began, by the logger's clock.
	Start time.Time
	// RecordedAt is when the ledger recorded the dive (the ledger's clock,
	// not the logger's); zero means not known, and Start stands in for it.
	// A logger clock that is wrong cannot move a dive before an inspection
	// or a decision: flags and counts go by the recording order as well.
	RecordedAt time.Time
	// MaxDepthM is the dive's greatest depth, m.
	MaxDepthM float64
	// RatedDepthM is the hull's rated depth when it made the dive, m; 0
	// means HullFacts.RatedDepthM.
	RatedDepthM float64
	// FelicityRatio is the dive's Felicity ratio; nil when it was not
	// evaluated, which on a hull with acoustic-emission channels is
	// missing evidence unless FelicityLowerBound is given.
	FelicityRatio *float64
	// FelicityLowerBound is given, with FelicityRatio nil, when the dive
	// stayed below the reference (the highest pressure reached before)
	// and showed no significant emission: the dive's peak divided by the
	// reference, which the ratio is at least. The dive did not test the
	// reference, so the Felicity rule raises nothing for it; it is not a
	// pass either (nothing is stored as 1). nil otherwise.
	FelicityLowerBound *float64
	// FelicityReason says in words why FelicityRatio is nil; it goes into
	// the flag's detail.
	FelicityReason string
	// HoldDecays says whether acoustic emission during the hold at depth
	// decayed; nil when it was not evaluated.
	HoldDecays *bool
	// HoldEmissionSignificant says whether the emission during the hold
	// at depth was significant: more hits after the settling time than
	// the absolute limit, or not decaying. nil when not evaluated. Either
	// this or HoldDecays saying so raises the hold-emission rule.
	HoldEmissionSignificant *bool
	// HoldHitsAfterSettle is the number of hits, over all channels, during
	// the hold at depth after the settling time; nil when not evaluated.
	HoldHitsAfterSettle *int
	// NoHoldPeriod is true when the dive had no hold at depth, so the
	// hold-emission, hold-hits and creep rules do not apply. False (the
	// zero value) means they apply.
	NoHoldPeriod bool
	// ChannelFacts is the evidence of each acoustic-emission channel,
	// keyed by channel name; nil when the per-channel evidence was not
	// evaluated (the per-channel rules then take their values as missing).
	// When not nil, a configured channel counts as present only when it is
	// listed in ChannelsPresent and its entry here says Present: both must
	// agree.
	ChannelFacts map[string]ChannelFacts
	// ComplianceChange is, per gauge, the relative change of compliance
	// against the baseline (positive = softer, 0.05 = 5 %); nil when there
	// is no baseline, which the compliance rule takes as missing evidence
	// for every gauge that gave data.
	ComplianceChange map[string]float64
	// ResidualStrain is, per gauge, the strain at the surface after the
	// dive minus before, µε.
	ResidualStrain map[string]float64
	// ResidualNotComparable names, per gauge, why its residual strain
	// cannot be compared (the temperature before and after differs, …):
	// the residual is taken as missing for that gauge and left out of the
	// running sum.
	ResidualNotComparable map[string]string
	// Creep is, per gauge, the pressure-corrected drift of strain during
	// the hold at depth, µε.
	Creep map[string]float64
	// Hysteresis is, per gauge, the area between the descent and ascent
	// branches of strain against pressure, normalised (a fraction).
	Hysteresis map[string]float64
	// GaugeProblems names, per gauge, why its data are doubtful (constant,
	// out of range, …). Each such gauge counts as missing evidence; its
	// values still count in the strain rules, where they can only make
	// the verdict worse.
	GaugeProblems map[string]string
	// DataQuality are the findings against the dive's record
	// (record_not_at_surface_start, record_not_at_surface_end,
	// gap_at_depth, coarse_sampling, duplicate_time, …).
	DataQuality []Finding
	// DataQualityChecked is true when the record's data quality was
	// checked; false with no findings means not checked, which the
	// data-quality rule takes as missing. Findings imply a check.
	DataQualityChecked bool
	// ProofTest is true when the dive is a proof test: it is judged by
	// the proof-overshoot rule and never by the depth-ratio rule.
	ProofTest bool
	// PeakMPa is the dive's highest gauge pressure, MPa; 0 when not known.
	PeakMPa float64
	// SpecProofMPa is the spec's proof pressure when the dive was made,
	// MPa (needed for proof-test dives).
	SpecProofMPa float64
	// CollapseMPa is the spec's collapse pressure when the dive was made,
	// MPa; 0 means HullFacts.CollapsePressureMPa.
	CollapseMPa float64
	// Extra marks facts that are not a dive of their own: an earlier
	// judgement of a dive whose evidence was judged again (a re-judgement
	// may raise flags, never close one), or a record that is no dive (a
	// proof test recorded without samples). Their flags count like any
	// other; they are not counted as dives, nor summed twice.
	Extra bool
	// Gauges and Channels are the strain gauges and acoustic-emission
	// channels the hull was configured with for the dive.
	Gauges, Channels []string
	// GaugesPresent and ChannelsPresent are those with data in the dive.
	GaugesPresent, ChannelsPresent []string
}

// ChannelFacts is the evidence of one acoustic-emission channel in a dive.
type ChannelFacts struct {
	// Present is true when the channel had at least one hit or passed a
	// sensor check in the dive; a configured channel that is not present
	// is missing evidence, not a quiet hull.
	Present bool
	// Checked is true when the channel passed a sensor check (pencil-lead
	// break, automatic sensor test).
	Checked bool
	// HistoricIndex is the channel's historic index; nil when not
	// computed.
	HistoricIndex *float64
	// HistoricIndexTooFewHits is true when HistoricIndex was not computed
	// because the channel had too few hits for it: few hits are no sign of
	// damage, so no flag. A nil index without it is missing.
	HistoricIndexTooFewHits bool
	// Severity is the mean of the largest signal strengths of the
	// channel's hits (the instrument's unit); nil when not computed.
	Severity *float64
	// SeverityTooFewHits is true when Severity was not computed because
	// the channel had too few hits for it (no flag). A nil severity
	// without it is missing.
	SeverityTooFewHits bool
	// Hits is the number of counted hits (at or above the amplitude
	// floor) the channel recorded in the dive, whatever its sensor check
	// said: hits are evidence.
	Hits int
	// HighAmplitudeHits is the number of hits above the reference
	// amplitude.
	HighAmplitudeHits int
	// TotalCounts is the sum of the hits' threshold-crossing counts.
	TotalCounts float64
	// Reason says in words why a value is missing or the channel absent.
	Reason string
}

// Finding is one finding against the quality of a dive's record.
type Finding struct {
	// Code names the finding: record_not_at_surface_start,
	// record_not_at_surface_end, gap_at_depth, coarse_sampling,
	// duplicate_time, ….
	Code string
	// Detail says it in words.
	Detail string
}

// HullFacts is what the ledger knows about one hull, as Evaluate needs it.
type HullFacts struct {
	// Hull is the hull's serial.
	Hull string
	// Now is the time of the evaluation (passed in, never read from a
	// clock); the zero time makes every time-based rule missing.
	Now time.Time
	// DamageRatio is the governing (largest) ratio of cumulative damage to
	// the allowable over the hull's components; nil when not assessed.
	DamageRatio *float64
	// GoverningComponent names the component DamageRatio comes from.
	GoverningComponent string
	// RatedDepthM is the hull's current rated depth, m.
	RatedDepthM float64
	// MaxPressureMPa is the highest gauge pressure the hull has been
	// recorded at, proof tests included, MPa. The dives' PeakMPa count
	// too: the larger is taken.
	MaxPressureMPa float64
	// CollapsePressureMPa is the hull's collapse pressure from its spec,
	// MPa; 0 means not known, which holds the hull.
	CollapsePressureMPa float64
	// QualifiedCycles is the number of pressure cycles the design was
	// qualified for; nil when the spec does not say, and then the
	// design-cycles rule does not apply.
	QualifiedCycles *float64
	// CyclesUsed is the number of pressure cycles the hull has made,
	// counted as the qualification counts them.
	CyclesUsed float64
	// Dives are the dives since the last clearing event (more is
	// harmless: Status closes flags that later records cleared), in any
	// order.
	Dives []DiveFacts
	// DiveCount is the hull's total number of dives in the ledger.
	DiveCount int
	// Inspections and ProofTests are the hull's recorded inspections and
	// proof tests; only passing ones dated and recorded no later than Now
	// count for the overdue rules.
	Inspections []Inspection
	ProofTests  []ProofTest
}

// recorded is when the ledger learned of an event: rec, or at when rec
// is not known.
func recorded(at, rec time.Time) time.Time {
	if rec.IsZero() {
		return at
	}
	return rec
}

// sortByRecording orders dives as the ledger learned of them: by
// recording time (Start when not known), then Start, then ID.
func sortByRecording(ds []DiveFacts) {
	sort.SliceStable(ds, func(i, j int) bool {
		ri, rj := recorded(ds[i].Start, ds[i].RecordedAt), recorded(ds[j].Start, ds[j].RecordedAt)
		if !ri.Equal(rj) {
			return ri.Before(rj)
		}
		if !ds[i].Start.Equal(ds[j].Start) {
			return ds[i].Start.Before(ds[j].Start)
		}
		return ds[i].ID < ds[j].ID
	})
}

// Evaluate applies every rule to the hull's facts: hull-level rules once
// (the flag dated and recorded Now), dive rules on every dive in f.Dives
// (each flag dated by its dive's start and recorded at its dive's
// recording time), so that a flag raised by an earlier dive stays raised
// until Status finds it cleared. A nil or empty rule set gives a single
// hold flag: without rules nothing can be shown fit. Flags come in rule
// order; within a rule, in the order the ledger recorded the dives
// (RecordedAt, then Start, then ID), so that a logger clock that is wrong
// cannot reorder them.
func Evaluate(r *Rules, f HullFacts) []Flag {
	if r == nil || len(r.Rules) == 0 {
		return []Flag{{
			Rule: "no-rules", Title: "No fitness rules", Level: LevelHold,
			Value: math.NaN(), Missing: true, Detail: "no rule set was given",
			Basis: "without rules nothing can be shown fit", Source: "hulltally", At: f.Now, RecordedAt: f.Now,
		}}
	}
	dives := append([]DiveFacts(nil), f.Dives...)
	sortByRecording(dives)
	var out []Flag
	for _, rule := range r.Rules {
		if rule.Measure.HullLevel() {
			for _, m := range hullValues(rule.Measure, f, dives) {
				out = appendFlag(out, rule, m.v, m.detail, m.ok, "", f.Now, f.Now)
			}
			continue
		}
		if rule.Measure == MeasureResidualGrowth {
			out = append(out, growthFlags(rule, dives)...)
			continue
		}
		for _, d := range dives {
			for _, m := range diveValues(rule.Measure, d, f) {
				out = appendFlag(out, rule, m.v, m.detail, m.ok, d.ID, d.Start, d.RecordedAt)
			}
		}
	}
	return out
}

// appendFlag adds the flag rule raises for value v (or for a missing
// value when !ok), if any.
func appendFlag(out []Flag, rule Rule, v float64, detail string, ok bool, dive string, at, rec time.Time) []Flag {
	fl := Flag{
		Rule: rule.ID, Title: rule.Title, Unit: rule.Measure.Unit(), Detail: detail,
		Basis: rule.Basis, Source: rule.Source, Dive: dive, At: at, RecordedAt: rec,
	}
	if !ok || math.IsNaN(v) {
		lvl := rule.IfMissing
		if !lvl.valid() {
			lvl = LevelHold
		}
		t := rule.threshold(lvl)
		fl.Level, fl.Value, fl.Threshold, fl.When, fl.Missing = lvl, math.NaN(), t.At, t.When, true
		return append(out, fl)
	}
	lvl, t, tripped := rule.Level(v)
	if !tripped {
		return out
	}
	fl.Level, fl.Value, fl.Threshold, fl.When = lvl, v, t.At, t.When
	return append(out, fl)
}

type measured struct {
	v      float64
	detail string
	ok     bool
}

func missing(format string, args ...any) []measured {
	return []measured{{detail: fmt.Sprintf(format, args...)}}
}

func bad(x float64) bool { return math.IsNaN(x) || math.IsInf(x, 0) || x < 0 }

// hullValues computes a hull-level measure; nothing when the rule does not
// apply to the hull, an entry with ok false when the value is missing or
// doubtful.
func hullValues(m Measure, f HullFacts, dives []DiveFacts) []measured {
	switch m {
	case MeasureDamageRatio:
		if f.DamageRatio == nil {
			return missing("damage not assessed")
		}
		v := *f.DamageRatio
		if math.IsNaN(v) || v < 0 {
			return missing("damage ratio %v is not a valid number", v)
		}
		detail := "governing component not named"
		if f.GoverningComponent != "" {
			detail = "governing component " + f.GoverningComponent
		}
		return []measured{{v: v, detail: detail, ok: true}}
	case MeasureDivesSinceInspection, MeasureDaysSinceInspection:
		in, found := lastPassingInspection(f.Inspections, f.Now)
		return []measured{sinceValue(m, f, dives, "inspection", in.At, recorded(in.At, in.RecordedAt), in.DiveCount, found)}
	case MeasureDaysSinceProofTest:
		p, found := lastPassingProofTest(f.ProofTests, f.Now)
		return []measured{sinceValue(m, f, dives, "proof test", p.At, recorded(p.At, p.RecordedAt), p.DiveCount, found)}
	case MeasureCollapseFraction:
		c := f.CollapsePressureMPa
		if bad(c) || c == 0 {
			return missing("collapse pressure %v MPa not known: how near collapse the hull has been cannot be shown", c)
		}
		if bad(f.MaxPressureMPa) {
			return missing("highest recorded pressure %v MPa is not a valid number", f.MaxPressureMPa)
		}
		peak, where := f.MaxPressureMPa, "the hull's record"
		for _, d := range dives {
			if !bad(d.PeakMPa) && d.PeakMPa > peak {
				peak, where = d.PeakMPa, "dive "+d.ID
			}
		}
		return []measured{{v: peak / c, ok: true,
			detail: fmt.Sprintf("highest recorded pressure %.3f MPa (from %s) against the collapse pressure %.3f MPa", peak, where, c)}}
	case MeasureDesignCyclesUsed:
		if f.QualifiedCycles == nil {
			return nil // the spec does not say: the rule does not apply
		}
		q := *f.QualifiedCycles
		if bad(q) || q == 0 {
			return missing("qualified cycles %v is not a valid number", q)
		}
		if bad(f.CyclesUsed) {
			return missing("cycles used %v is not a valid number", f.CyclesUsed)
		}
		return []measured{{v: f.CyclesUsed / q, ok: true,
			detail: fmt.Sprintf("%.0f pressure cycles used of the %.0f the design was qualified for", f.CyclesUsed, q)}}
	}
	return missing("unknown measure %s", m)
}

// hullValue is the single value of a hull-level measure (the first entry
// of hullValues); applies is false when the rule does not apply.
func hullValue(m Measure, f HullFacts, dives []DiveFacts) (v float64, detail string, ok, applies bool) {
	ms := hullValues(m, f, dives)
	if len(ms) == 0 {
		return 0, "", false, false
	}
	return ms[0].v, ms[0].detail, ms[0].ok, true
}

// sinceValue is the time or number of dives since the last passing record
// made at at and recorded at rec, when the hull had made count dives.
func sinceValue(m Measure, f HullFacts, dives []DiveFacts, what string, at, rec time.Time, count int, found bool) measured {
	if f.Now.IsZero() {
		return measured{detail: "the time of the evaluation is not known"}
	}
	if !found {
		return measured{detail: "no passing " + what + " on record"}
	}
	detail := fmt.Sprintf("last passing %s on %s", what, at.UTC().Format(time.DateOnly))
	if m == MeasureDivesSinceInspection {
		n := f.DiveCount - count
		if f.DiveCount < 0 || count < 0 || n < 0 {
			return measured{detail: fmt.Sprintf("dive counts do not agree (hull %d, at the %s %d)", f.DiveCount, what, count)}
		}
		// Take the larger of the two counts the facts allow: dives given
		// that started after the inspection, or that the ledger recorded
		// after it recorded the inspection (a logger clock behind cannot
		// hide a dive), may exceed a stale count.
		after := 0
		for _, d := range dives {
			if d.Extra {
				continue
			}
			if d.Start.After(at) || recorded(d.Start, d.RecordedAt).After(rec) {
				after++
			}
		}
		return measured{v: float64(max(n, after)), detail: detail, ok: true}
	}
	return measured{v: f.Now.Sub(at).Hours() / 24, detail: detail, ok: true}
}

// diveValues computes a per-dive measure; it returns nothing when the rule
// does not apply to the dive, and may return a value and a missing entry
// (some gauges or channels measured, others not).
func diveValues(m Measure, d DiveFacts, f HullFacts) []measured {
	switch m {
	case MeasureFelicityRatio:
		if !anyChannelPresent(d) {
			return nil // no channels configured, or none reported: missing-evidence covers it
		}
		if d.FelicityRatio != nil {
			if v := *d.FelicityRatio; bad(v) {
				return missing("Felicity ratio %v is not a valid number", v)
			}
			return []measured{{v: *d.FelicityRatio, ok: true}}
		}
		if lb := d.FelicityLowerBound; lb != nil {
			if bad(*lb) {
				return missing("Felicity lower bound %v is not a valid number", *lb)
			}
			// The dive stayed below the reference without significant
			// emission. Either the bound itself satisfies the rule (the
			// ratio is at least the bound, so no level trips), or the
			// dive did not test the reference and the rule does not
			// apply to it. Neither is stored as a pass.
			return nil
		}
		return missing("Felicity ratio not evaluated%s", because(d.FelicityReason))
	case MeasureHoldEmission:
		if d.NoHoldPeriod || !anyChannelPresent(d) {
			return nil
		}
		known := false
		var why []string
		if s := d.HoldEmissionSignificant; s != nil {
			known = true
			if *s {
				why = append(why, "significant emission during the hold (hits after the settling time, or not decaying)")
			}
		}
		if h := d.HoldDecays; h != nil {
			known = true
			if !*h {
				why = append(why, "emission during the hold did not decay")
			}
		}
		switch {
		case !known:
			return missing("hold emission not evaluated")
		case len(why) > 0:
			return []measured{{v: 1, detail: strings.Join(why, "; "), ok: true}}
		}
		return []measured{{v: 0, ok: true}}
	case MeasureHoldHitsAfterSettle:
		if d.NoHoldPeriod || !anyChannelPresent(d) {
			return nil
		}
		if d.HoldHitsAfterSettle == nil {
			return missing("hits during the hold after the settling time not counted")
		}
		if n := *d.HoldHitsAfterSettle; n < 0 {
			return missing("hold hit count %d is not a valid number", n)
		}
		n := *d.HoldHitsAfterSettle
		return []measured{{v: float64(n), ok: true, detail: fmt.Sprintf("%d hit(s) during the hold at depth after the settling time", n)}}
	case MeasureHistoricIndex, MeasureSeverity, MeasureHighAmplitudeHits, MeasureTotalCounts:
		return channelValues(m, d)
	case MeasureComplianceChange:
		return gaugeValues(d, d.ComplianceChange, nil, "compliance change", func(g string, x float64) string {
			if x < 0 {
				return fmt.Sprintf("gauge %s stiffer by %.2f %% (a stiffer reading may be a debonded gauge: doubtful, not healthy)", g, -100*x)
			}
			return fmt.Sprintf("gauge %s softer by %.2f %%", g, 100*x)
		})
	case MeasureResidualStrain:
		return gaugeValues(d, d.ResidualStrain, d.ResidualNotComparable, "residual strain", func(g string, x float64) string {
			return fmt.Sprintf("gauge %s residual %.1f µε", g, x)
		})
	case MeasureCreepStrain:
		if d.NoHoldPeriod {
			return nil
		}
		return gaugeValues(d, d.Creep, nil, "creep", func(g string, x float64) string {
			return fmt.Sprintf("gauge %s crept %.1f µε during the hold (pressure-corrected)", g, x)
		})
	case MeasureStrainHysteresis:
		return gaugeValues(d, d.Hysteresis, nil, "hysteresis", func(g string, x float64) string {
			return fmt.Sprintf("gauge %s hysteresis %.4g (normalised)", g, x)
		})
	case MeasureDepthRatio:
		if d.ProofTest {
			return nil // judged by the proof-overshoot rule
		}
		rated := d.RatedDepthM
		if rated == 0 {
			rated = f.RatedDepthM
		}
		if math.IsNaN(rated) || math.IsInf(rated, 0) || rated <= 0 {
			return missing("rated depth not known")
		}
		if math.IsNaN(d.MaxDepthM) || d.MaxDepthM < 0 {
			return missing("maximum depth %v is not a valid number", d.MaxDepthM)
		}
		return []measured{{v: d.MaxDepthM / rated, ok: true,
			detail: fmt.Sprintf("maximum depth %.1f m against rated %.1f m", d.MaxDepthM, rated)}}
	case MeasureProofOvershoot:
		if !d.ProofTest {
			return nil
		}
		if bad(d.PeakMPa) || d.PeakMPa == 0 {
			return missing("peak pressure of the proof test %v MPa not known", d.PeakMPa)
		}
		if bad(d.SpecProofMPa) || d.SpecProofMPa == 0 {
			return missing("spec proof pressure %v MPa not known", d.SpecProofMPa)
		}
		detail := fmt.Sprintf("peak %.3f MPa against the spec proof pressure %.3f MPa", d.PeakMPa, d.SpecProofMPa)
		c := d.CollapseMPa
		if c == 0 {
			c = f.CollapsePressureMPa
		}
		if bad(c) || c == 0 {
			detail += "; collapse pressure not known: how near collapse it came cannot be said"
		} else {
			detail += fmt.Sprintf("; %.3g of the collapse pressure %.3f MPa", d.PeakMPa/c, c)
		}
		return []measured{{v: d.PeakMPa / d.SpecProofMPa, ok: true, detail: detail}}
	case MeasureDataQuality:
		if !d.DataQualityChecked && len(d.DataQuality) == 0 {
			return missing("the record's data quality was not checked")
		}
		var parts []string
		for _, x := range d.DataQuality {
			p := x.Code
			if p == "" {
				p = "unnamed finding"
			}
			if x.Detail != "" {
				p += " (" + x.Detail + ")"
			}
			parts = append(parts, p)
		}
		detail := ""
		if len(parts) > 0 {
			detail = "record findings: " + strings.Join(parts, "; ")
		}
		return []measured{{v: float64(len(d.DataQuality)), ok: true, detail: detail}}
	case MeasureMissingEvidence:
		var miss []string
		for _, g := range absent(d.Gauges, d.GaugesPresent) {
			if why, doubtful := d.GaugeProblems[g]; doubtful {
				miss = append(miss, fmt.Sprintf("strain gauge %s (no data; doubtful: %s)", g, orNone(why)))
				continue
			}
			miss = append(miss, "strain gauge "+g+" (no data)")
		}
		for _, g := range sortedKeys(d.GaugeProblems) {
			if contains(d.Gauges, g) && !contains(d.GaugesPresent, g) {
				continue // counted above
			}
			miss = append(miss, fmt.Sprintf("strain gauge %s (doubtful: %s)", g, orNone(d.GaugeProblems[g])))
		}
		for _, c := range d.Channels {
			if channelPresent(d, c) {
				continue
			}
			why := "no data"
			if cf, ok := d.ChannelFacts[c]; ok || d.ChannelFacts != nil {
				why = "no hit and no passing sensor check"
				if cf.Reason != "" {
					why += ": " + cf.Reason
				}
			}
			miss = append(miss, fmt.Sprintf("acoustic-emission channel %s (%s)", c, why))
		}
		detail := ""
		if len(miss) > 0 {
			detail = "missing or doubtful: " + strings.Join(miss, ", ")
		}
		return []measured{{v: float64(len(miss)), detail: detail, ok: true}}
	}
	return missing("unknown measure %s", m)
}

func because(reason string) string {
	if strings.TrimSpace(reason) == "" {
		return ""
	}
	return ": " + reason
}

// channelPresent reports whether configured channel c gave evidence in the
// dive: listed in ChannelsPresent and, when ChannelFacts is given, present
// there too (both must agree).
func channelPresent(d DiveFacts, c string) bool {
	if d.ChannelFacts != nil {
		if cf, ok := d.ChannelFacts[c]; !ok || !cf.Present {
			return false
		}
	}
	return contains(d.ChannelsPresent, c)
}

// anyChannelPresent reports whether the dive has configured channels and
// at least one of them gave evidence.
func anyChannelPresent(d DiveFacts) bool {
	for _, c := range d.Channels {
		if channelPresent(d, c) {
			return true
		}
	}
	// A channel that recorded hits gave evidence even when its sensor
	// check failed (the check makes it missing evidence besides): the
	// emission it recorded is never switched off.
	for _, cf := range d.ChannelFacts {
		if cf.Hits > 0 {
			return true
		}
	}
	return false
}

// channelValues takes the worst channel of a per-channel measure, naming
// it, over the channels that gave evidence (configured or not: evidence
// is evidence), and reports channels whose value is missing. Channels that
// gave no evidence are left to the missing-evidence rule; a historic index
// or severity not computed for too few hits is no flag.
func channelValues(m Measure, d DiveFacts) []measured {
	if !anyChannelPresent(d) {
		return nil
	}
	if d.ChannelFacts == nil {
		return missing("per-channel acoustic-emission evidence not evaluated")
	}
	names := make([]string, 0, len(d.ChannelFacts))
	for c := range d.ChannelFacts {
		names = append(names, c)
	}
	sort.Strings(names)
	var out []measured
	best, bestCh, found, n := 0.0, "", false, 0
	var miss []string
	for _, c := range names {
		cf := d.ChannelFacts[c]
		if !cf.Present && cf.Hits == 0 {
			continue // no evidence from it: the missing-evidence rule says so
		}
		var x float64
		switch m {
		case MeasureHistoricIndex:
			if cf.HistoricIndex == nil {
				if !cf.HistoricIndexTooFewHits {
					miss = append(miss, c+because(cf.Reason))
				}
				continue
			}
			x = *cf.HistoricIndex
		case MeasureSeverity:
			if cf.Severity == nil {
				if !cf.SeverityTooFewHits {
					miss = append(miss, c+because(cf.Reason))
				}
				continue
			}
			x = *cf.Severity
		case MeasureHighAmplitudeHits:
			x = float64(cf.HighAmplitudeHits)
		case MeasureTotalCounts:
			x = cf.TotalCounts
		}
		if bad(x) {
			miss = append(miss, fmt.Sprintf("%s (value %v is not a valid number)", c, x))
			continue
		}
		n++
		if !found || x > best {
			best, bestCh, found = x, c, true
		}
	}
	what := m.words()
	if found {
		out = append(out, measured{v: best, ok: true,
			detail: fmt.Sprintf("channel %s: %s %.4g (the worst of %d channel(s))", bestCh, what, best, n)})
	}
	if len(miss) > 0 {
		out = append(out, measured{detail: fmt.Sprintf("%s not computed for channel %s", what, strings.Join(miss, ", "))})
	}
	return out
}

// words names a per-channel measure in the flag's detail.
func (m Measure) words() string {
	switch m {
	case MeasureHistoricIndex:
		return "historic index"
	case MeasureSeverity:
		return "severity"
	case MeasureHighAmplitudeHits:
		return "high-amplitude hits"
	case MeasureTotalCounts:
		return "total counts"
	}
	return string(m)
}

// gaugeValues takes the largest magnitude over the gauges of vals, and
// reports configured gauges that have data but no value as missing, and
// gauges whose value cannot be compared (notComparable: gauge → reason),
// whose value is then not used. Gauges without any data are left to the
// missing-evidence rule; values from gauges not configured count as well
// (evidence is evidence).
func gaugeValues(d DiveFacts, vals map[string]float64, notComparable map[string]string, what string, say func(string, float64) string) []measured {
	var out []measured
	best, bestGauge, found := 0.0, "", false
	var doubtful []string
	for _, g := range sortedKeys(vals) {
		if _, skip := notComparable[g]; skip {
			continue
		}
		x := vals[g]
		if math.IsNaN(x) || math.IsInf(x, 0) {
			doubtful = append(doubtful, g)
			continue
		}
		if !found || math.Abs(x) > math.Abs(best) {
			best, bestGauge, found = x, g, true
		}
	}
	if found {
		out = append(out, measured{v: math.Abs(best), detail: say(bestGauge, best), ok: true})
	}
	var miss []string
	for _, g := range present(d.Gauges, d.GaugesPresent) {
		_, has := vals[g]
		_, skip := notComparable[g]
		if !has && !skip {
			miss = append(miss, g)
		}
	}
	var parts []string
	if len(miss) > 0 {
		parts = append(parts, fmt.Sprintf("no %s for gauge %s", what, strings.Join(miss, ", ")))
	}
	if len(doubtful) > 0 {
		parts = append(parts, fmt.Sprintf("%s not a number for gauge %s", what, strings.Join(doubtful, ", ")))
	}
	for _, g := range sortedKeys(notComparable) {
		parts = append(parts, fmt.Sprintf("%s of gauge %s not comparable%s", what, g, because(notComparable[g])))
	}
	if len(parts) > 0 {
		out = append(out, measured{detail: strings.Join(parts, "; ")})
	}
	return out
}

// growthFlags sums each gauge's residual strain over the dives in the order
// the ledger recorded them and applies the rule to the largest running
// magnitude after each dive. Each flag is dated by the latest start and
// recording time of the dives summed so far.
func growthFlags(rule Rule, dives []DiveFacts) []Flag {
	var out []Flag
	sum := map[string]float64{}
	var at, rec time.Time
	n := 0
	for _, d := range dives {
		if d.Extra {
			continue // an earlier judgement of a dive already summed
		}
		n++
		if d.Start.After(at) {
			at = d.Start
		}
		if r := recorded(d.Start, d.RecordedAt); r.After(rec) {
			rec = r
		}
		for g, x := range d.ResidualStrain {
			if _, skip := d.ResidualNotComparable[g]; skip || math.IsNaN(x) || math.IsInf(x, 0) {
				continue // the residual-strain rule flags it
			}
			sum[g] += x
		}
		if len(sum) == 0 {
			continue
		}
		best, bestGauge := 0.0, ""
		for _, g := range sortedKeys(sum) {
			if math.Abs(sum[g]) > math.Abs(best) || bestGauge == "" {
				best, bestGauge = sum[g], g
			}
		}
		detail := fmt.Sprintf("gauge %s residual strain summed over %d dive(s): %.1f µε", bestGauge, n, best)
		out = appendFlag(out, rule, math.Abs(best), detail, true, d.ID, at, rec)
	}
	return out
}

// present returns the configured names that are in have.
func present(configured, have []string) []string {
	var out []string
	for _, c := range configured {
		if contains(have, c) {
			out = append(out, c)
		}
	}
	return out
}

// absent returns the configured names that are not in have.
func absent(configured, have []string) []string {
	var out []string
	for _, c := range configured {
		if !contains(have, c) {
			out = append(out, c)
		}
	}
	return out
}

func contains(xs []string, x string) bool {
	for _, s := range xs {
		if s == x {
			return true
		}
	}
	return false
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
