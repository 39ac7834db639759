package reports

import (
	"fmt"
	"hulltally/fatigue/fitness"
	"math"
	"sort"
	"strings"
	"time"

	"hulltally/ledger"
	"hulltally/reports/charts"
	"hulltally/reports/view"
)

// reasonRows lists the reasons, each rule and level once with the number
// of dives that raised it (view.CollapseReasons).
func reasonRows(rs []ledger.Reason, withClosed bool) [][]string {
	var out [][]string
	for _, x := range view.CollapseReasons(rs, withClosed) {
		out = append(out, []string{x.First.State, x.First.Kind, x.Text()})
	}
	return out
}

// pct prints a damage ratio as a percentage (view.Percent).
func pct(r float64) string { return view.Percent(r) }

func sci(v float64) string {
	if math.IsInf(v, 1) {
		return "inf"
	}
	return fmt.Sprintf("%.3e", v)
}

// lifeVoid reports whether the remaining life must not be shown as a
// figure (view.LifeOf).
func lifeVoid(status string, d *ledger.Damages) bool { return view.LifeOf(status, d).Void }

// statusLifeVoid is the ledger's remaining-life status of a void life.
const statusLifeVoid = view.LifeVoidStatus

// remainingText states the remaining life in one line (view.Life.Text).
func remainingText(status string, d *ledger.Damages) string { return view.LifeOf(status, d).Text() }

// remainingRows states the remaining life with both projections and the
// limit they run to; only the void statement when it is void.
func remainingRows(status string, d *ledger.Damages) [][2]string {
	rows := [][2]string{{"Remaining life", remainingText(status, d)}}
	if lifeVoid(status, d) || d.RemainingDives == nil {
		return rows
	}
	proj := func(v *int64, moreThan bool) string {
		if v == nil {
			return "not evaluated"
		}
		return view.DivesText(*v, moreThan)
	}
	dd := proj(d.RemainingAtDesignDive, d.RemainingAtDesignDiveMoreThan)
	if d.DesignDive != "" {
		dd += " (" + d.DesignDive + ")"
	}
	rows = append(rows,
		[2]string{"At the recent mean", proj(d.RemainingAtRecentMean, d.RemainingAtRecentMeanMoreThan)},
		[2]string{"At the design dive", dd},
		[2]string{"Projected to", fmt.Sprintf("%s of the allowable (the damage rule's hold level); the smaller projection is shown. %s", pct(d.LimitRatio), d.RemainingReason)})
	return rows
}

var chartSize = charts.Size{WidthMM: 180, HeightMM: 78, DPI: 200}

// sheetChart is the smaller chart of a dive sheet.
var sheetChart = charts.Size{WidthMM: 180, HeightMM: 62, DPI: 200}

// RenderHull writes a hull's fitness-for-service summary.
func RenderHull(m *Model) ([]byte, error) {
	r, err := RenderHullReport(m)
	if err != nil {
		return nil, err
	}
	return r.PDF, nil
}

// RenderHullReport writes a hull's fitness-for-service summary and says
// which characters could not be printed.
func RenderHullReport(m *Model) (*Rendered, error) {
	s := m.Hulls[0].Spec
	return renderDoc(m, "Fitness-for-service summary, hull "+s.Serial, func(d *doc) error { return hullBody(d, m) })
}

func hullBody(d *doc, m *Model) error {
	hp := m.Hulls[0]
	s := hp.Spec
	p := d.pdf
	p.AddPage()
	d.h1(fmt.Sprintf("Fitness-for-service summary: hull %s (%s)", s.Serial, s.Name))
	d.statusBox(hp.Status)
	// The caution under the status, where a reader starts: after the key
	// figures, a long list of reasons pushed it to page 2
	// (TestCautionOnFirstPage). It is printed again at the end.
	d.caution()
	d.h2("Why")
	d.table([]string{"level", "from", "reason"}, []float64{16, 22, bodyW - 38}, reasonRows(hp.Reasons, false))
	if len(reasonRows(hp.Reasons, false)) == 0 {
		d.para("No open flag: every rule is satisfied on the ledger's evidence.", 9)
	}
	d.h2("Identity")
	geom := fmt.Sprintf("%s, inner radius %.3f m, wall %.3f m", s.Shape, s.InnerRadiusM, s.WallThicknessM)
	if s.Shape == "cylinder" {
		geom += fmt.Sprintf(", length %.3f m", s.LengthM)
	}
	d.kv([][2]string{
		{"Serial / name", fmt.Sprintf("%s / %s (spec revision %d)", s.Serial, s.Name, hp.Revision)},
		{"Material system", s.MaterialSystem},
		{"Geometry", geom},
		{"Rated depth", fmt.Sprintf("%.0f m", s.RatedDepthM)},
		{"Pressures", fmt.Sprintf("design %.2f MPa, proof %.2f MPa, collapse %.2f MPa", s.DesignPressureMPa, s.ProofPressureMPa, s.CollapsePressureMPa)},
	})
	d.h2("Key figures")
	d.kv(append([][2]string{
		{"Dives on record", divesOnRecord(&hp)},
		{"Highest pressure ever", highestText(hp.Highest)},
		{"Governing component", fmt.Sprintf("%s at %s of its allowable", hp.Damage.Governing, pct(float64(hp.Damage.GoverningRatio)))},
	}, remainingRows(hp.Status, hp.Damage)...))
	var rows [][]string
	anyPrior := false
	for _, c := range hp.Damage.Components {
		note := ""
		if c.Prior != nil {
			anyPrior = true
			note = "includes damage carried over"
		}
		rows = append(rows, []string{c.Name, sci(float64(c.CyclicDamage)), sci(float64(c.SustainedDamage)), fmt.Sprintf("%g", c.Allowable), pct(float64(c.Ratio)), note})
	}
	p.Ln(1)
	d.table([]string{"component", "cyclic damage", "sustained damage", "allowable", "of allowable", "note"}, []float64{38, 27, 27, 20, 24, bodyW - 136}, rows)
	if anyPrior {
		d.h2("Damage carried over from before the ledger")
		rows = nil
		for _, c := range hp.Damage.Components {
			if pr := c.Prior; pr != nil {
				rows = append(rows, []string{c.Name, sci(float64(pr.Cyclic)), sci(float64(pr.Sustained)), pr.Source})
			}
		}
		d.table([]string{"component", "cyclic", "sustained", "source (the earlier record)"}, []float64{38, 27, 27, bodyW - 92}, rows)
		d.para("The totals above include this damage; it was not counted from logged dives.", 8)
	}
	implosion(d, hp.Implosion, hp.ImplosionReason, s.RatedDepthM)
	p.Ln(2)
	d.para("Fingerprint (SHA-256 of this report's ledger content and audit-chain head): "+d.fp+". Check it with: hulltally report verify FILE.pdf", 7.5)

	// Basis.
	p.AddPage()
	d.h1("Basis of the figures")
	d.kv([][2]string{
		{"Method", "Rainflow counting (ASTM E1049-85 §5.4.4) of gauge pressure, load transfer to each component, Palmgren-Miner with the S-N curve, Robinson's rule with the stress-rupture curve."},
		{"Design fatigue factor", fmt.Sprintf("%g", m.Basis.DFF)},
		{"Mean-stress correction", m.Basis.MeanStress},
		{"Cyclic and sustained", m.Basis.Combine},
		{"Depth and pressure", "UNESCO 1983 (Fofonoff & Millard)"},
	})
	d.h2("Load transfer per component")
	rows = nil
	for _, tv := range hp.Transfer {
		basis := tv.Used
		if tv.Preferred != "" && tv.Preferred != tv.Used {
			basis = fmt.Sprintf("%s (preferred: %s)", tv.Used, tv.Preferred)
		}
		curve := ""
		for _, c := range hp.Damage.Components {
			if c.Name == tv.Component {
				curve = c.Curve
			}
		}
		rows = append(rows, []string{tv.Component, basis, fmt.Sprintf("%.4g MPa/MPa", tv.FactorMPaPerMPa), curve, strings.TrimSpace(tv.Source + " " + tv.Caveat)})
	}
	d.table([]string{"component", "basis", "factor", "S-N curve", "source and caveat"}, []float64{28, 24, 24, 40, bodyW - 116}, rows)
	d.h2("Curves")
	rows = nil
	for _, c := range m.Basis.Curves {
		ill := ""
		if c.Illustrative {
			ill = "ILLUSTRATIVE: load qualified data"
		}
		rows = append(rows, []string{c.Name, curveDescription(c), c.Basis, ill, c.Source})
	}
	d.table([]string{"curve", "material, mode, environment", "basis", "note", "source"}, []float64{34, 40, 20, 24, bodyW - 118}, rows)
	d.h2("Rules (" + m.Basis.RulesFrom + ")")
	rows = nil
	for _, r := range m.Basis.Rules {
		rows = append(rows, []string{r.ID, r.Thresholds, r.Source})
	}
	d.table([]string{"rule", "thresholds", "source"}, []float64{45, 40, bodyW - 85}, rows)

	// Charts.
	p.AddPage()
	d.h1("History")
	if err := hullCharts(d, m, &hp); err != nil {
		return err
	}

	// Tables.
	p.AddPage()
	d.h1("Dives")
	rows = nil
	for i, dv := range hp.Dives {
		fel := "-"
		if i < len(hp.Felicity) && hp.Felicity[i] != nil {
			fel = fmt.Sprintf("%.2f", *hp.Felicity[i])
		}
		note := diveNote(dv)
		rows = append(rows, []string{fmt.Sprint(i + 1), dv.ID.String()[:8], dv.Start.UTC().Format("2006-01-02 15:04"), fmt.Sprintf("%.2f", dv.DurationS/3600),
			fmt.Sprintf("%.1f", dv.MaxDepthM), fmt.Sprintf("%.3f", dv.MaxPressureMPa), fmt.Sprint(dv.AEHits), fel, note})
	}
	d.table([]string{"#", "dive", "start (UTC)", "hours", "deepest m", "max MPa", "AE hits", "Felicity", "note"}, []float64{10, 18, 30, 14, 20, 18, 16, 18, 36}, rows)
	d.h2("Inspections, proof tests and decisions")
	rows = nil
	for _, in := range hp.Maintenance.Inspections {
		rows = append(rows, []string{in.At.UTC().Format("2006-01-02"), "inspection", in.Result, in.Actor, in.Method + ": " + in.Findings})
	}
	for _, pt := range hp.Maintenance.ProofTests {
		rows = append(rows, []string{pt.At.UTC().Format("2006-01-02"), "proof test", pt.Result, pt.Actor, fmt.Sprintf("%.3f MPa. %s", pt.PressureMPa, pt.Notes)})
	}
	for _, dc := range hp.Maintenance.Decisions {
		rows = append(rows, []string{dc.At.UTC().Format("2006-01-02"), strings.ReplaceAll(dc.Kind, "_", " "), "", dc.Actor, dc.Reason})
	}
	sort.SliceStable(rows, func(i, j int) bool { return rows[i][0] < rows[j][0] })
	if len(rows) == 0 {
		d.para("None recorded.", 9)
	} else {
		d.table([]string{"date", "record", "result", "by", "details"}, []float64{22, 28, 14, 36, bodyW - 100}, rows)
	}
	d.h2("Flags, open and closed")
	d.table([]string{"state", "from", "reason"}, []float64{16, 22, bodyW - 38}, reasonRows(hp.Reasons, true))
	d.caution()
	return nil
}

// divesOnRecord counts the dives, saying which are void and which are
// proof tests.
func divesOnRecord(hp *HullPart) string {
	s := fmt.Sprintf("%d counted", hp.Damage.DiveCount)
	switch {
	case hp.ProofTestDives == 1:
		s += ", of which 1 proof test logged with its samples"
	case hp.ProofTestDives > 1:
		s += fmt.Sprintf(", of which %d proof tests logged with their samples", hp.ProofTestDives)
	}
	if hp.VoidDives > 0 {
		s += fmt.Sprintf("; %d VOID, left out of the damage, the evidence and the status", hp.VoidDives)
	}
	return s
}

// diveNote marks a void dive and a proof test; a proof test is never a
// dive beyond the rated depth.
func diveNote(dv ledger.Dive) string {
	var parts []string
	if dv.Voided {
		parts = append(parts, "VOID: not counted")
	}
	switch {
	case dv.ProofTest:
		parts = append(parts, "proof test")
	case dv.BeyondRated:
		parts = append(parts, "beyond rated depth")
	}
	return strings.Join(parts, "; ")
}

// highestText states the highest pressure and what reached it.
func highestText(h *HighestPressure) string {
	if h == nil {
		return "no dive or proof test on record"
	}
	s := fmt.Sprintf("%.3f MPa", h.PressureMPa)
	if h.DepthM != nil {
		s += fmt.Sprintf(" (%.1f m)", *h.DepthM)
	}
	if h.Source == "proof test" {
		return s + ", proof test of " + h.At.UTC().Format("2006-01-02")
	}
	return s + ", dive of " + h.At.UTC().Format("2006-01-02")
}

// curveDescription states a curve's kind, material, loading mode and
// environment, saying what is not known.
func curveDescription(c CurveInfo) string {
	var parts []string
	if c.Kind != "" {
		parts = append(parts, c.Kind)
	}
	if c.Material != "" {
		parts = append(parts, c.Material)
	}
	if c.Mode != "" {
		parts = append(parts, "mode "+c.Mode)
	}
	switch {
	case c.Environment != "":
		parts = append(parts, c.Environment)
	case c.Kind == "stress-rupture":
		parts = append(parts, "environment: the data must be for the service conditions")
	case c.Kind == "":
		parts = append(parts, "not a curve of the shipped library: material, mode and environment not stated in the ledger's basis")
	default:
		parts = append(parts, "environment not stated by the curve library")
	}
	return strings.Join(parts, "; ")
}

// implosion prints the implosion hazard at the rated depth with its
// assumptions and caution, or why it is not stated.
func implosion(d *doc, iv *ImplosionView, reason string, ratedM float64) {
	if iv == nil && reason == "" {
		return
	}
	d.h2("Implosion hazard at the rated depth")
	if iv == nil {
		d.para("Implosion energy "+reason, 9)
		return
	}
	at := fmt.Sprintf("%.4g MPa", iv.PressureMPa)
	if ratedM > 0 {
		at += fmt.Sprintf(" (rated depth %.0f m, taken at latitude 90°: the most pressure per metre)", ratedM)
	}
	vol := fmt.Sprintf("%.4g m³ (sphere of the same volume: radius %.3g m)", iv.InternalVolumeM3, iv.EquivalentSphereRadiusM)
	if iv.EndClosure != "" {
		vol = fmt.Sprintf("%.4g m³ with %s end closures (sphere of the same volume: radius %.3g m)", iv.InternalVolumeM3, iv.EndClosure, iv.EquivalentSphereRadiusM)
	}
	energy := fmt.Sprintf("%.3g MJ, about %.3g kg of TNT", iv.EnergyMJ, iv.TNTEquivalentKg)
	if iv.PVEnergyMJ > 0 || iv.WaterElasticMJ > 0 {
		energy += fmt.Sprintf(" (pressure × volume %.3g MJ + elastic energy of the water %.3g MJ", iv.PVEnergyMJ, iv.WaterElasticMJ)
		if iv.BulkModulusGPa > 0 {
			energy += fmt.Sprintf(", bulk modulus %.3g GPa", iv.BulkModulusGPa)
		}
		energy += ")"
	}
	ct := "not estimated"
	if iv.CollapseTimeMS != nil {
		ct = fmt.Sprintf("about %.2g ms", *iv.CollapseTimeMS)
	}
	d.kv([][2]string{{"Sea pressure", at}, {"Internal volume", vol}, {"Energy released", energy}, {"Collapse time", ct}})
	d.pdf.Ln(0.5)
	d.block(marginL, bodyW, 3.6, ImplosionCaution, styleBold, 8, "L", true)
	d.pdf.Ln(0.5)
	d.block(marginL, bodyW, 3.4, "Assumptions:", styleBold, 7.5, "L", true)
	for _, a := range iv.Assumptions {
		d.bullet(a, 7.5, 3.3)
	}
}

func nanOr(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// chartLimits turns a rule's thresholds into chart lines.
func chartLimits(rl *RuleLimit) []charts.Limit {
	if rl == nil {
		return nil
	}
	var out []charts.Limit
	if t := rl.Watch; t != nil {
		out = append(out, charts.Limit{At: t.At, When: string(t.When), Label: "watch " + t.String()})
	}
	if t := rl.Hold; t != nil {
		out = append(out, charts.Limit{At: t.At, When: string(t.When), Label: "hold " + t.String(), Hold: true})
	}
	return out
}

// damageChart draws a hull's cumulative damage against its dives, with
// the projection of the dives left and the damage rule's limit lines.
func damageChart(m *Model, hp *HullPart, size charts.Size) ([]byte, error) {
	n := len(hp.CumRatio)
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = float64(i + 1)
	}
	var proj *charts.Projection
	if !lifeVoid(hp.Status, hp.Damage) && hp.Damage.RemainingDives != nil && n > 0 && *hp.Damage.RemainingDives > 0 {
		// The dives left are counted to the damage rule's hold level
		// (LimitRatio), so the line's rate is what is left to that level
		// over them.
		limit := hp.Damage.LimitRatio
		if !(limit > 0) {
			limit = 1
		}
		rate := (limit - hp.CumRatio[n-1]) / float64(*hp.Damage.RemainingDives)
		until := float64(n) + math.Min(float64(*hp.Damage.RemainingDives), 5*float64(n)+50)
		proj = &charts.Projection{FromDive: float64(n), RatePerDive: rate, UntilDive: until}
	}
	b, err := charts.DamageHistoryLimits(xs, hp.CumRatio, proj, 1, chartLimits(m.Basis.Limits.Damage), size)
	if err != nil {
		return nil, fmt.Errorf("damage chart: %w", err)
	}
	return b, nil
}

// felicityChart draws a hull's Felicity ratio per dive with the rule's
// limit lines.
func felicityChart(m *Model, hp *HullPart, size charts.Size) ([]byte, error) {
	fx := make([]float64, len(hp.Felicity))
	fy := make([]float64, len(hp.Felicity))
	for i, f := range hp.Felicity {
		fx[i], fy[i] = float64(i+1), nanOr(f)
	}
	b, err := charts.FelicityHistoryLimits(fx, fy, chartLimits(m.Basis.Limits.Felicity), size)
	if err != nil {
		return nil, fmt.Errorf("chart of the Felicity ratio: %w", err)
	}
	return b, nil
}

// complianceChart draws each strain gauge's compliance per dive against
// its baseline.
func complianceChart(hp *HullPart, size charts.Size) ([]byte, error) {
	series := map[string][]float64{}
	for g, v := range hp.Compliance {
		ys := make([]float64, len(v))
		for i := range v {
			ys[i] = nanOr(v[i])
		}
		series[g] = ys
	}
	cx := make([]float64, len(hp.Dives))
	for i := range cx {
		cx[i] = float64(i + 1)
	}
	b, err := charts.ComplianceHistory(cx, series, hp.Baseline, size)
	if err != nil {
		return nil, fmt.Errorf("compliance chart: %w", err)
	}
	return b, nil
}

// profileChart draws the deepest recent dive's profile (nil when there is
// none).
func profileChart(hp *HullPart, size charts.Size) ([]byte, error) {
	if hp.profile == nil || hp.Deepest == nil {
		return nil, nil
	}
	rated := 0.0
	if hp.Deepest.MaxDepthM > 0 {
		rated = hp.Deepest.MaxPressureMPa * hp.Spec.RatedDepthM / hp.Deepest.MaxDepthM // pressure per metre of that dive
	}
	b, err := charts.DiveProfile(hp.profile.TimeS, hp.profile.PressureMPa, rated, size)
	if err != nil {
		return nil, fmt.Errorf("profile chart: %w", err)
	}
	return b, nil
}

func hullCharts(d *doc, m *Model, hp *HullPart) error {
	png, err := damageChart(m, hp, chartSize)
	if err != nil {
		return err
	}
	d.image("damage", png, chartSize.HeightMM)
	if rl := m.Basis.Limits.Damage; rl != nil {
		d.para(fmt.Sprintf("Limit lines: the watch and hold levels of rule %s in force.", rl.Rule), 8)
	} else {
		d.para("The damage rule's thresholds could not be identified in the rule set: no watch or hold line is drawn; see the rules table.", 8)
	}
	png, err = charts.CycleHistogram(hp.CycleRanges, hp.CycleCounts, chartSize) // as HullChartsSVG
	if err != nil {
		return fmt.Errorf("cycle histogram: %w", err)
	}
	d.image("cycles", png, chartSize.HeightMM)
	if png, err = felicityChart(m, hp, chartSize); err != nil {
		return err
	}
	d.image("felicity", png, chartSize.HeightMM)
	if rl := m.Basis.Limits.Felicity; rl != nil {
		d.para(fmt.Sprintf("Limit lines: the watch and hold levels of rule %s in force.", rl.Rule), 8)
	} else {
		d.para("The Felicity rule's thresholds could not be identified in the rule set: no limit line is drawn; see the rules table.", 8)
	}
	if len(hp.FelicityDives) > 0 {
		d.h2("Felicity dives: cumulative hits against pressure")
		intro := "Each dive that raised a flag of the Felicity rule, or whose Felicity ratio is below 1: its acoustic-emission hits counted from the surface to the peak " +
			"(sensor checks made under load counted as hits), against the gauge pressure, with the reference (the highest pressure before the dive) and the onset of significant emission."
		if hp.FelicityDivesOmitted > 0 {
			intro += fmt.Sprintf(" The %d older such dives are not drawn: their dive sheets show them.", hp.FelicityDivesOmitted)
		}
		d.para(intro, 8)
	}
	for i, fd := range hp.FelicityDives {
		if len(fd.Hits) == 0 {
			d.para(fmt.Sprintf("Dive %s of %s: Felicity ratio %s; no hits on record to draw. %s", short(fd.Dive), fd.Start.UTC().Format("2006-01-02"), opt(fd.Ratio, "%.3f"), fd.Reason), 8.5)
			continue
		}
		if err := hitsChart(d, fmt.Sprintf("felicity-hits-%d", i), fd.Dive, fd.Start, fd.Ratio, fd.PreviousMaxMPa, fd.OnsetMPa, fd.Hits, chartSize); err != nil {
			return err
		}
		d.para(felicityCaption(fd.Level, fd.PreviousMaxMPa, fd.ReferenceSource, fd.Reason), 7.5)
		d.pdf.Ln(2)
	}
	if png, err = complianceChart(hp, chartSize); err != nil {
		return err
	}
	d.image("compliance", png, chartSize.HeightMM)
	if hp.profile != nil && hp.Deepest != nil {
		if png, err = profileChart(hp, chartSize); err != nil {
			return err
		}
		if d.pdf.GetY()+6+chartSize.HeightMM > bottom {
			d.pdf.AddPage() // the caption stays with its chart
		}
		d.para(fmt.Sprintf("Deepest of the last 10 dives: %s, %s, %.1f m", hp.Deepest.ID.String()[:8], hp.Deepest.Start.UTC().Format("2006-01-02"), hp.Deepest.MaxDepthM), 9)
		d.image("profile", png, chartSize.HeightMM)
	}
	return nil
}

// short is the first 8 characters of an ID.
func short(id string) string {
	if len(id) > 8 {
		return id[:8]
	}
	return id
}

// felicityCaption says what a cumulative-hits chart's lines are.
func felicityCaption(level string, ref float64, src, reason string) string {
	s := fmt.Sprintf("Reference line: %.4g MPa, %s.", ref, src)
	if level != "" {
		s = "Flag raised: " + level + ". " + s
	}
	if reason != "" {
		s += " " + reason
	}
	return s
}

// hitsChart draws a dive's cumulative hits against pressure with a line
// that names the dive.
func hitsChart(d *doc, name, dive string, start time.Time, ratio *float64, prevMax float64, onset *float64, hits []HitPoint, size charts.Size) error {
	ps := make([]float64, len(hits))
	cs := make([]float64, len(hits))
	for i, h := range hits {
		ps[i], cs[i] = h.PressureMPa, h.Cumulative
	}
	png, err := charts.CumulativeHits(ps, cs, prevMax, onset, size)
	if err != nil {
		return fmt.Errorf("cumulative hits chart: %w", err)
	}
	if len(dive) > 8 {
		dive = dive[:8]
	}
	if d.pdf.GetY()+16+size.HeightMM > bottom {
		d.pdf.AddPage() // the caption stays with its chart
	} else {
		d.pdf.Ln(1.5)
	}
	d.para(fmt.Sprintf("Dive %s of %s: Felicity ratio %s", dive, start.UTC().Format("2006-01-02"), opt(ratio, "%.3f")), 9)
	d.image(name, png, size.HeightMM)
	d.pdf.SetY(d.pdf.GetY() - 1)
	return nil
}

// RenderDive writes a dive sheet.
func RenderDive(m *Model) ([]byte, error) {
	r, err := RenderDiveReport(m)
	if err != nil {
		return nil, err
	}
	return r.PDF, nil
}

// RenderDiveReport writes a dive sheet and says which characters could
// not be printed.
func RenderDiveReport(m *Model) (*Rendered, error) {
	return renderDoc(m, "Dive sheet "+m.Dive.Dive.ID.String(), func(d *doc) error { return diveBody(d, m) })
}

func diveBody(d *doc, m *Model) error {
	dp := m.Dive
	dv := dp.Dive
	d.pdf.AddPage()
	what := "Dive sheet"
	if dv.ProofTest {
		what = "Proof-test sheet"
	}
	d.h1(fmt.Sprintf("%s: hull %s, dive %s", what, dv.Hull, dv.ID.String()[:8]))
	// On page 1 before anything of unbounded length (a void's reason),
	// and again at the end.
	d.caution()
	if dv.Voided {
		why := "a void record takes it out"
		if v := dv.Void; v != nil {
			why = fmt.Sprintf("%s (decided by %s, recorded %s)", v.Reason, v.Actor, v.RecordedAt.UTC().Format("2006-01-02"))
		}
		d.pdf.SetTextColor(190, 30, 30)
		d.block(marginL, bodyW, 5, "VOID: this dive is left out of the damage, the evidence and the status. Reason: "+why, styleBold, 10, "L", true)
		d.pdf.SetTextColor(0, 0, 0)
		d.pdf.Ln(1)
	}
	note := ""
	switch {
	case dv.ProofTest:
		note = " - a proof test, judged as one (not a dive beyond the rated depth)"
	case dv.BeyondRated:
		note = " - BEYOND THE RATED DEPTH"
	}
	record := "dive"
	switch {
	case dv.ProofTest && dv.Voided:
		record = "proof test logged with its samples; VOID"
	case dv.ProofTest:
		record = "proof test logged with its samples"
	case dv.Voided:
		record = "dive; VOID"
	}
	d.kv([][2]string{
		{"Dive", dv.ID.String()},
		{"Record", record},
		{"Time (UTC)", fmt.Sprintf("%s to %s (%.2f h)", dv.Start.UTC().Format("2006-01-02 15:04:05"), dv.End.UTC().Format("15:04:05"), dv.DurationS/3600)},
		{"Deepest", fmt.Sprintf("%.1f m, %.3f MPa (rated %.0f m)%s", dv.MaxDepthM, dv.MaxPressureMPa, dv.RatedDepthM, note)},
		{"Site / operator", dv.Site + " / " + dv.Operator},
		{"Source", fmt.Sprintf("%s (SHA-256 %s), %d samples", dv.Source, dv.SourceSHA256, dv.Samples)},
		{"Hull status now", m.Hulls[0].Status},
	})
	if dp.profile != nil {
		png, err := diveProfileChart(dv, dp.profile, sheetChart)
		if err != nil {
			return err
		}
		d.image("profile", png, sheetChart.HeightMM)
	}
	if dv.Voided {
		d.h2("Damage computed (NOT counted: the dive is void)")
	} else {
		d.h2("Damage added")
	}
	var rows [][]string
	names := make([]string, 0, len(dp.Load.Damage))
	for n := range dp.Load.Damage {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		x := dp.Load.Damage[n]
		rows = append(rows, []string{n, sci(float64(x.Cyclic)), sci(float64(x.Sustained)), x.Basis, x.Curve})
	}
	d.table([]string{"component", "cyclic", "sustained", "transfer", "curve"}, []float64{35, 28, 28, 25, bodyW - 116}, rows)
	d.h2(fmt.Sprintf("Pressure cycles (%d)", len(dp.Load.PressureCycles)))
	cy := append([]ledger.Cycle(nil), dp.Load.PressureCycles...)
	sort.SliceStable(cy, func(i, j int) bool { return cy[i].RangeMPa > cy[j].RangeMPa })
	rows = nil
	for i, c := range cy {
		if i == 15 {
			rows = append(rows, []string{fmt.Sprintf("... %d smaller cycles", len(cy)-15), "", ""})
			break
		}
		rows = append(rows, []string{fmt.Sprintf("%.4f", c.RangeMPa), fmt.Sprintf("%.4f", c.MeanMPa), fmt.Sprintf("%g", c.Count)})
	}
	d.table([]string{"range MPa", "mean MPa", "count"}, []float64{40, 40, 30}, rows)
	d.h2("Evidence")
	if ev := dp.Evidence; ev != nil {
		if err := evidenceBody(d, dp, ev); err != nil {
			return err
		}
	} else {
		d.para("No evidence on record for this dive.", 9)
	}
	d.h2("Flags raised by this dive")
	rows = nil
	for _, f := range dp.Flags {
		detail := f.Detail
		if !f.Missing {
			v := fmt.Sprintf("%.4g %s %.4g %s", float64(f.Value), symbol(f.When), f.Threshold, f.Unit)
			if detail == "" {
				detail = v
			} else {
				detail = v + "; " + detail
			}
		} else if detail == "" {
			detail = "value not established"
		}
		rows = append(rows, []string{f.Level, f.Rule, detail})
	}
	if len(rows) == 0 {
		d.para("None.", 9)
	} else {
		d.table([]string{"level", "rule", "detail"}, []float64{16, 45, bodyW - 61}, rows)
	}
	d.caution()
	return nil
}

// evidenceBody prints a dive's evidence: the reference pressure and its
// source, the acoustic emission overall and per channel with the hits
// against pressure, the strain per gauge, the gauge problems and the
// data-quality findings.
func evidenceBody(d *doc, dp *DivePart, ev *ledger.Evidence) error {
	dv := dp.Dive
	kv := [][2]string{}
	if !ev.Evaluated {
		kv = append(kv, [2]string{"Not evaluated", ev.Reason})
	}
	kv = append(kv, [2]string{"Reference pressure", fmt.Sprintf("%.4g MPa: %s (the highest pressure before this dive, dives not void and proof tests)", ev.PreviousMaxMPa, ev.ReferenceSource)})
	if ae := ev.AE; ae != nil {
		fr := "not evaluated"
		if ae.FelicityRatio != nil {
			fr = fmt.Sprintf("%.3f", *ae.FelicityRatio)
		}
		kv = append(kv,
			[2]string{"Acoustic emission", fmt.Sprintf("%d hits (%d sensor checks); Felicity ratio %s: %s", ae.Hits, ae.SensorChecks, fr, ae.FelicityReason)},
			[2]string{"Onset of emission", fmt.Sprintf("%s; criterion: %s", opt(ae.OnsetMPa, "%.4g MPa"), ae.OnsetCriterion)},
			[2]string{"Hold emission", fmt.Sprintf("%d hits, %d after settling, energy %.4g: %s", ae.HoldHits, ae.HoldHitsAfterSettle, ae.HoldEnergy, ae.HoldReason)})
	} else if ev.MissingAE {
		kv = append(kv, [2]string{"Acoustic emission", "MISSING: the hull has acoustic-emission channels but this dive has no hits file"})
	} else {
		kv = append(kv, [2]string{"Acoustic emission", "no acoustic-emission data for this dive"})
	}
	d.kv(kv)
	if len(dp.Channels) > 0 {
		d.h2("Acoustic emission per channel")
		var cr [][]string
		for _, c := range dp.Channels {
			state := "present"
			if c.Checked {
				state += ", sensor check passed"
			}
			if c.Reason != "" {
				state = c.Reason
			}
			if !c.Present {
				state = "ABSENT: " + strings.TrimPrefix(state, "present")
				if c.Reason == "" {
					state = "ABSENT: nothing recorded on this dive"
				}
			}
			cr = append(cr, []string{fmt.Sprint(c.Channel), fmt.Sprint(c.Hits), figure(c.HistoricIndex, c.HistoricIndexTooFew, "%.3f"), figure(c.Severity, c.SeverityTooFew, "%.4g"),
				fmt.Sprint(c.HighAmplitudeHits), fmt.Sprintf("%.0f", c.TotalCounts), state})
		}
		d.table([]string{"channel", "hits", "historic index", "severity", "high-amplitude hits", "total counts", "state"}, []float64{16, 14, 26, 26, 26, 22, bodyW - 130}, cr)
		d.para("A figure left out for too few hits is no sign of damage; \"not evaluated\" is missing evidence.", 7.5)
	}
	if len(dp.FelicityHits) > 0 && ev.AE != nil {
		if err := hitsChart(d, "felicity-hits", dv.ID.String(), dv.Start, ev.AE.FelicityRatio, ev.PreviousMaxMPa, ev.AE.OnsetMPa, dp.FelicityHits, sheetChart); err != nil {
			return err
		}
		d.para(felicityCaption("", ev.PreviousMaxMPa, ev.ReferenceSource, ""), 7.5)
	}
	if len(ev.Strain) > 0 {
		d.h2("Strain per gauge")
		var rows [][]string
		for _, s := range ev.Strain {
			res := opt(s.ResidualUE, "%.1f")
			if s.ResidualNotComparable != "" {
				res = "not comparable"
			}
			rows = append(rows, []string{s.Gauge, opt(s.ComplianceUEPerMPa, "%.2f"), opt(s.ComplianceChange, "%+.4f"), res, opt(s.Hysteresis, "%.4f"), opt(s.CreepUE, "%.1f"), strings.Join(s.Notes, "; ")})
		}
		d.table([]string{"gauge", "compliance µε/MPa", "change", "residual µε", "hysteresis", "creep µε", "notes"}, []float64{18, 30, 16, 20, 18, 16, bodyW - 118}, rows)
	}
	d.para("Strain baseline: "+ev.BaselineSource, 8)
	d.h2("Gauge problems and missing evidence")
	var rows [][]string
	gs := make([]string, 0, len(ev.GaugeProblems))
	for g := range ev.GaugeProblems {
		gs = append(gs, g)
	}
	sort.Strings(gs)
	for _, g := range gs {
		rows = append(rows, []string{g, "doubtful data: " + ev.GaugeProblems[g]})
	}
	for _, g := range ev.MissingGauges {
		rows = append(rows, []string{g, "MISSING: no column in this dive's file"})
	}
	if ev.MissingAE {
		rows = append(rows, []string{"acoustic emission", "MISSING: no hits file for this dive"})
	}
	if len(rows) == 0 {
		d.para("None: every configured gauge and channel gave data judged sound.", 9)
	} else {
		d.table([]string{"gauge or sensor", "problem"}, []float64{35, bodyW - 35}, rows)
	}
	d.h2("Data quality of the record")
	rows = nil
	for _, f := range ev.DataQuality {
		rows = append(rows, []string{strings.ReplaceAll(f.Code, "_", " "), f.Detail})
	}
	if len(rows) == 0 {
		d.para("No finding: the record starts and ends at the surface, without gaps at depth or coarse sampling.", 9)
	} else {
		d.table([]string{"finding", "detail"}, []float64{45, bodyW - 45}, rows)
	}
	return nil
}

// figure prints a per-channel figure: the value, or why it is missing.
func figure(p *float64, tooFew bool, f string) string {
	switch {
	case p != nil:
		return fmt.Sprintf(f, *p)
	case tooFew:
		return "- (too few hits)"
	}
	return "not evaluated"
}

func opt(p *float64, f string) string {
	if p == nil {
		return "-"
	}
	return fmt.Sprintf(f, *p)
}

// RenderFleet writes the fleet summary.
func RenderFleet(m *Model) ([]byte, error) {
	r, err := RenderFleetReport(m)
	if err != nil {
		return nil, err
	}
	return r.PDF, nil
}

// RenderFleetReport writes the fleet summary and says which characters
// could not be printed.
func RenderFleetReport(m *Model) (*Rendered, error) {
	return renderDoc(m, "Fleet summary", func(d *doc) error { return fleetBody(d, m) })
}

func fleetBody(d *doc, m *Model) error {
	d.pdf.AddPage()
	d.h1(fmt.Sprintf("Fleet summary: %d hulls, most urgent first", len(m.Hulls)))
	// On page 1 whatever the fleet's size, and again at the end.
	d.caution()
	var rows [][]string
	for _, h := range m.Hulls {
		open := len(view.OpenFlags(h.Reasons))
		life := view.LifeOf(h.Status, h.Damage)
		left := life.Short()
		if life.Void {
			left = "VOID" // the paragraph under the table says why
		}
		rows = append(rows, []string{h.Spec.Serial, h.Spec.Name, strings.ToUpper(h.Status), pct(float64(h.Damage.GoverningRatio)), h.Damage.Governing, left, fmt.Sprint(h.Damage.DiveCount), fmt.Sprint(open)})
	}
	d.table([]string{"serial", "name", "status", "damage", "governing", "dives left", "dives", "open flags"}, []float64{26, 24, 18, 20, 28, 24, 14, 26}, rows)
	for _, h := range m.Hulls {
		if lifeVoid(h.Status, h.Damage) {
			d.para("Dives left VOID: no figure is shown while a hull is on hold, withdrawn or has a flag of evidence of damage open (a fatigue projection means nothing then); the reasons are listed per hull below.", 8)
			break
		}
	}
	for _, h := range m.Hulls {
		rr := reasonRows(h.Reasons, false)
		if len(rr) == 0 {
			continue
		}
		d.h2(fmt.Sprintf("%s %s: %s", h.Spec.Serial, h.Spec.Name, h.Status))
		d.table([]string{"level", "from", "reason"}, []float64{16, 22, bodyW - 38}, rr)
	}
	d.caution()
	return nil
}

// Render writes a model as its kind of report.
func Render(m *Model) ([]byte, error) {
	r, err := RenderReport(m)
	if err != nil {
		return nil, err
	}
	return r.PDF, nil
}

// RenderReport writes a model as its kind of report and says which
// characters could not be printed.
func RenderReport(m *Model) (*Rendered, error) {
	switch m.Kind {
	case KindHull:
		return RenderHullReport(m)
	case KindDive:
		return RenderDiveReport(m)
	case KindFleet:
		return RenderFleetReport(m)
	}
	return nil, fmt.Errorf("unknown report kind %q", m.Kind)
}

// symbol is a comparison as its sign.
func symbol(when string) string {
	return fitness.Comparison(when).Symbol()
}
