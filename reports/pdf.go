package reports

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"hulltally/ledger"
	"hulltally/reports/charts"
)

// shortReason cuts a reason before its rule, basis and source (stated in
// the basis section).
func shortReason(s string) string {
	if i := strings.Index(s, " [rule "); i > 0 {
		return s[:i]
	}
	return s
}

// reasonRows lists the reasons, each rule once with the number of dives
// that raised it.
func reasonRows(rs []ledger.Reason, withClosed bool) [][]string {
	type agg struct {
		r ledger.Reason
		n int
	}
	var order []string
	m := map[string]*agg{}
	for _, r := range rs {
		if r.State == "fit" && !withClosed {
			continue
		}
		key := r.Kind + "|" + r.Code + "|" + r.State
		if r.Kind != "flag" {
			key += "|" + r.Text
		}
		if a, ok := m[key]; ok {
			a.n++
			continue
		}
		m[key] = &agg{r, 1}
		order = append(order, key)
	}
	var out [][]string
	for _, k := range order {
		a := m[k]
		text := shortReason(a.r.Text)
		if a.n > 1 {
			text += fmt.Sprintf(" (and %d more dives)", a.n-1)
		}
		out = append(out, []string{a.r.State, a.r.Kind, text})
	}
	return out
}

func pct(r float64) string {
	switch {
	case math.IsInf(r, 1):
		return "OVERLOAD"
	case r == 0:
		return "0 %"
	case r < 1e-4:
		return "< 0.01 %"
	}
	return fmt.Sprintf("%.2f %%", math.Ceil(r*1e4)/100)
}

func sci(v float64) string {
	if math.IsInf(v, 1) {
		return "inf"
	}
	return fmt.Sprintf("%.3e", v)
}

func remainingText(d *ledger.Damages) string {
	if d.RemainingDives != nil {
		return fmt.Sprintf("%d dives (%s)", *d.RemainingDives, d.RemainingReason)
	}
	return fmt.Sprintf("%s: %s", strings.ReplaceAll(d.RemainingStatus, "_", " "), d.RemainingReason)
}

var chartSize = charts.Size{WidthMM: 180, HeightMM: 78, DPI: 200}

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
	d.kv([][2]string{
		{"Dives on record", fmt.Sprintf("%d", hp.Damage.DiveCount)},
		{"Highest pressure ever", highestText(hp.Highest)},
		{"Governing component", fmt.Sprintf("%s at %s of its allowable", hp.Damage.Governing, pct(float64(hp.Damage.GoverningRatio)))},
		{"Remaining", remainingText(hp.Damage)},
	})
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
	p.Ln(2)
	d.para("Fingerprint (SHA-256 of this report's ledger content and audit-chain head): "+d.fp+". Check it with: hulltally report verify FILE.pdf", 7.5)
	d.caution()

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
	if hp.Implosion != nil {
		implosion(d, hp.Implosion)
	}

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
		note := ""
		if dv.BeyondRated {
			note = "beyond rated depth"
		}
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
	if c.Environment != "" {
		parts = append(parts, "environment: "+c.Environment)
	} else {
		parts = append(parts, "environment not stated by the curve library")
	}
	if c.Material == "" {
		parts = append(parts, "material not stated in the ledger's basis")
	}
	return strings.Join(parts, "; ")
}

// implosion prints the implosion-energy statement.
func implosion(d *doc, iv *ImplosionView) {
	d.h2("Implosion energy")
	rows := [][2]string{
		{"Internal volume", fmt.Sprintf("%.4g m³", iv.InternalVolumeM3)},
		{"At pressure", fmt.Sprintf("%.4g MPa", iv.PressureMPa)},
		{"Energy released", fmt.Sprintf("%.4g MJ (%.4g kg TNT equivalent)", iv.EnergyMJ, iv.TNTEquivalentKg)},
	}
	if iv.CollapseTimeMS != nil {
		rows = append(rows, [2]string{"Collapse time", fmt.Sprintf("%.3g ms", *iv.CollapseTimeMS)})
	} else {
		rows = append(rows, [2]string{"Collapse time", "not estimated"})
	}
	d.kv(rows)
	for _, a := range iv.Assumptions {
		d.para("• "+a, 8)
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

func hullCharts(d *doc, m *Model, hp *HullPart) error {
	n := len(hp.CumRatio)
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = float64(i + 1)
	}
	var proj *charts.Projection
	if hp.Damage.RemainingDives != nil && n > 0 && *hp.Damage.RemainingDives > 0 {
		left := 1 - hp.CumRatio[n-1]
		rate := left / float64(*hp.Damage.RemainingDives)
		until := float64(n) + math.Min(float64(*hp.Damage.RemainingDives), 5*float64(n)+50)
		proj = &charts.Projection{FromDive: float64(n), RatePerDive: rate, UntilDive: until}
	}
	png, err := charts.DamageHistoryLimits(xs, hp.CumRatio, proj, 1, chartLimits(m.Basis.Limits.Damage), chartSize)
	if err != nil {
		return fmt.Errorf("damage chart: %w", err)
	}
	d.image("damage", png, chartSize.HeightMM)
	if rl := m.Basis.Limits.Damage; rl != nil {
		d.para(fmt.Sprintf("Limit lines: the watch and hold levels of rule %s in force.", rl.Rule), 8)
	} else {
		d.para("The damage rule's thresholds could not be identified in the rule set: no watch or hold line is drawn; see the rules table.", 8)
	}
	png, err = charts.CycleHistogram(hp.CycleRanges, hp.CycleCounts, chartSize)
	if err != nil {
		return fmt.Errorf("cycle histogram: %w", err)
	}
	d.image("cycles", png, chartSize.HeightMM)
	fx := make([]float64, len(hp.Felicity))
	fy := make([]float64, len(hp.Felicity))
	for i, f := range hp.Felicity {
		fx[i], fy[i] = float64(i+1), nanOr(f)
	}
	png, err = charts.FelicityHistoryLimits(fx, fy, chartLimits(m.Basis.Limits.Felicity), chartSize)
	if err != nil {
		return fmt.Errorf("Felicity chart: %w", err)
	}
	d.image("felicity", png, chartSize.HeightMM)
	if rl := m.Basis.Limits.Felicity; rl != nil {
		d.para(fmt.Sprintf("Limit lines: the watch and hold levels of rule %s in force.", rl.Rule), 8)
	} else {
		d.para("The Felicity rule's thresholds could not be identified in the rule set: no limit line is drawn; see the rules table.", 8)
	}
	for i, fd := range hp.FelicityDives {
		if len(fd.Hits) == 0 {
			continue
		}
		if err := hitsChart(d, fmt.Sprintf("felicity-hits-%d", i), fd.Dive, fd.Start, fd.Ratio, fd.PreviousMaxMPa, fd.OnsetMPa, fd.Hits); err != nil {
			return err
		}
	}
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
	png, err = charts.ComplianceHistory(cx, series, hp.Baseline, chartSize)
	if err != nil {
		return fmt.Errorf("compliance chart: %w", err)
	}
	d.image("compliance", png, chartSize.HeightMM)
	if hp.profile != nil && hp.Deepest != nil {
		rated := 0.0
		if hp.Deepest.MaxDepthM > 0 {
			rated = hp.Deepest.MaxPressureMPa * hp.Spec.RatedDepthM / hp.Deepest.MaxDepthM // pressure per metre of that dive
		}
		png, err = charts.DiveProfile(hp.profile.TimeS, hp.profile.PressureMPa, rated, chartSize)
		if err != nil {
			return fmt.Errorf("profile chart: %w", err)
		}
		if d.pdf.GetY()+6+chartSize.HeightMM > bottom {
			d.pdf.AddPage() // the caption stays with its chart
		}
		d.para(fmt.Sprintf("Deepest of the last 10 dives: %s, %s, %.1f m", hp.Deepest.ID.String()[:8], hp.Deepest.Start.UTC().Format("2006-01-02"), hp.Deepest.MaxDepthM), 9)
		d.image("profile", png, chartSize.HeightMM)
	}
	return nil
}

// hitsChart draws a dive's cumulative hits against pressure with a line
// that names the dive.
func hitsChart(d *doc, name, dive string, start time.Time, ratio *float64, prevMax float64, onset *float64, hits []HitPoint) error {
	ps := make([]float64, len(hits))
	cs := make([]float64, len(hits))
	for i, h := range hits {
		ps[i], cs[i] = h.PressureMPa, h.Cumulative
	}
	png, err := charts.CumulativeHits(ps, cs, prevMax, onset, chartSize)
	if err != nil {
		return fmt.Errorf("cumulative hits chart: %w", err)
	}
	if len(dive) > 8 {
		dive = dive[:8]
	}
	if d.pdf.GetY()+6+chartSize.HeightMM > bottom {
		d.pdf.AddPage() // the caption stays with its chart
	}
	d.para(fmt.Sprintf("Dive %s of %s: Felicity ratio %s", dive, start.UTC().Format("2006-01-02"), opt(ratio, "%.3f")), 9)
	d.image(name, png, chartSize.HeightMM)
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
	d.h1(fmt.Sprintf("Dive sheet: hull %s, dive %s", dv.Hull, dv.ID.String()[:8]))
	note := ""
	if dv.BeyondRated {
		note = " - BEYOND THE RATED DEPTH"
	}
	d.kv([][2]string{
		{"Dive", dv.ID.String()},
		{"Time (UTC)", fmt.Sprintf("%s to %s (%.2f h)", dv.Start.UTC().Format("2006-01-02 15:04:05"), dv.End.UTC().Format("15:04:05"), dv.DurationS/3600)},
		{"Deepest", fmt.Sprintf("%.1f m, %.3f MPa (rated %.0f m)%s", dv.MaxDepthM, dv.MaxPressureMPa, dv.RatedDepthM, note)},
		{"Site / operator", dv.Site + " / " + dv.Operator},
		{"Source", fmt.Sprintf("%s (SHA-256 %s), %d samples", dv.Source, dv.SourceSHA256, dv.Samples)},
		{"Hull status now", m.Hulls[0].Status},
	})
	if dp.profile != nil {
		rated := 0.0
		if dv.MaxDepthM > 0 {
			rated = dv.MaxPressureMPa * dv.RatedDepthM / dv.MaxDepthM // this dive's pressure per metre
		}
		png, err := charts.DiveProfile(dp.profile.TimeS, dp.profile.PressureMPa, rated, chartSize)
		if err != nil {
			return err
		}
		d.image("profile", png, chartSize.HeightMM)
	}
	d.h2("Damage added")
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
		if ae := ev.AE; ae != nil {
			fr := "not evaluated"
			if ae.FelicityRatio != nil {
				fr = fmt.Sprintf("%.3f", *ae.FelicityRatio)
			}
			d.kv([][2]string{{"Acoustic emission", fmt.Sprintf("%d hits; Felicity ratio %s: %s", ae.Hits, fr, ae.FelicityReason)},
				{"Hold emission", fmt.Sprintf("%d hits, energy %.4g: %s", ae.HoldHits, ae.HoldEnergy, ae.HoldReason)}})
		}
		rows = nil
		for _, s := range ev.Strain {
			rows = append(rows, []string{s.Gauge, opt(s.ComplianceUEPerMPa, "%.2f"), opt(s.ComplianceChange, "%+.4f"), opt(s.ResidualUE, "%.1f"), opt(s.Hysteresis, "%.4f"), opt(s.CreepUE, "%.1f")})
		}
		if len(dp.Channels) > 0 {
			d.h2("Acoustic emission per channel")
			var cr [][]string
			for _, c := range dp.Channels {
				state := "present"
				if !c.Present {
					state = "ABSENT"
				}
				if c.Reason != "" {
					state += ": " + c.Reason
				}
				cr = append(cr, []string{fmt.Sprint(c.Channel), fmt.Sprint(c.Hits), opt(c.HistoricIndex, "%.3f"), opt(c.Severity, "%.4g"),
					fmt.Sprint(c.HighAmplitudeHits), fmt.Sprintf("%.0f", c.TotalCounts), state})
			}
			d.table([]string{"channel", "hits", "historic index", "severity", "high-amplitude hits", "total counts", "state"}, []float64{16, 16, 24, 22, 28, 24, bodyW - 130}, cr)
		}
		if len(dp.FelicityHits) > 0 && ev.AE != nil {
			if err := hitsChart(d, "felicity-hits", dv.ID.String(), dv.Start, ev.AE.FelicityRatio, ev.PreviousMaxMPa, ev.AE.OnsetMPa, dp.FelicityHits); err != nil {
				return err
			}
		}
		rows = nil
		for _, s := range ev.Strain {
			rows = append(rows, []string{s.Gauge, opt(s.ComplianceUEPerMPa, "%.2f"), opt(s.ComplianceChange, "%+.4f"), opt(s.ResidualUE, "%.1f"), opt(s.Hysteresis, "%.4f"), opt(s.CreepUE, "%.1f")})
		}
		d.table([]string{"gauge", "compliance µε/MPa", "change", "residual µε", "hysteresis", "creep µε"}, []float64{25, 35, 25, 30, 30, 35}, rows)
		d.para("Strain baseline: "+ev.BaselineSource, 8)
	} else {
		d.para("No evidence on record for this dive.", 9)
	}
	d.h2("Flags raised by this dive")
	rows = nil
	for _, f := range dp.Flags {
		rows = append(rows, []string{f.Level, f.Rule, f.Detail})
	}
	if len(rows) == 0 {
		d.para("None.", 9)
	} else {
		d.table([]string{"level", "rule", "detail"}, []float64{16, 45, bodyW - 61}, rows)
	}
	d.caution()
	return nil
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
	var rows [][]string
	for _, h := range m.Hulls {
		open := 0
		for _, r := range h.Reasons {
			if r.Kind == "flag" && r.State != "fit" {
				open++
			}
		}
		left := "-"
		if h.Damage.RemainingDives != nil {
			left = fmt.Sprint(*h.Damage.RemainingDives)
		} else {
			left = strings.ReplaceAll(h.Damage.RemainingStatus, "_", " ")
		}
		rows = append(rows, []string{h.Spec.Serial, h.Spec.Name, strings.ToUpper(h.Status), pct(float64(h.Damage.GoverningRatio)), h.Damage.Governing, left, fmt.Sprint(h.Damage.DiveCount), fmt.Sprint(open)})
	}
	d.table([]string{"serial", "name", "status", "damage", "governing", "dives left", "dives", "open flags"}, []float64{26, 24, 18, 20, 28, 24, 14, 26}, rows)
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
