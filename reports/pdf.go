package reports

import (
	"bytes"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/jung-kurt/gofpdf"

	"hulltally/ledger"
	"hulltally/reports/charts"
)

// doc wraps gofpdf with the report's page furniture.
type doc struct {
	pdf   *gofpdf.Fpdf
	tr    func(string) string
	fp    string
	title string
}

const (
	pageW   = 210.0
	marginL = 15.0
	marginR = 15.0
	bodyW   = pageW - marginL - marginR
)

// ascii replaces the characters the PDF's built-in fonts (cp1252) lack.
var ascii = strings.NewReplacer("µε", "ue", "ε", "e", "≥", ">=", "≤", "<=", "≠", "!=", "→", "->", "−", "-", "·", "x", "‖", "||", "²", "2", "³", "3", "√", "sqrt")

func newDoc(m *Model, title string) (*doc, error) {
	fp, err := m.Fingerprint()
	if err != nil {
		return nil, err
	}
	pdf := gofpdf.New("P", "mm", "A4", "")
	pdf.SetCompression(true)
	pdf.SetCatalogSort(true)
	pdf.SetCreationDate(m.GeneratedAt)
	pdf.SetModificationDate(m.GeneratedAt)
	pdf.SetMargins(marginL, 15, marginR)
	pdf.SetAutoPageBreak(true, 18)
	pdf.AliasNbPages("{nb}")
	d := &doc{pdf: pdf, tr: pdf.UnicodeTranslatorFromDescriptor(""), fp: fp, title: title}
	pdf.SetTitle(d.t(title), false)
	pdf.SetAuthor("hulltally", false)
	pdf.SetCreator("hulltally", false)
	pdf.SetSubject(m.Kind+" "+m.Subject, false)
	pdf.SetKeywords(keywords(m, fp), false)
	pdf.SetFooterFunc(func() {
		pdf.SetY(-13)
		pdf.SetFont("Helvetica", "", 7)
		pdf.SetTextColor(90, 90, 90)
		pdf.CellFormat(bodyW, 4, d.t(fmt.Sprintf("hulltally %s report  |  fingerprint %s  |  generated %s  |  page %d of {nb}",
			m.Kind, fp, m.GeneratedAt.UTC().Format("2006-01-02 15:04:05 UTC"), pdf.PageNo())), "T", 0, "C", false, 0, "")
		pdf.SetTextColor(0, 0, 0)
	})
	return d, nil
}

// keywords carries what verification needs, in the PDF's metadata.
func keywords(m *Model, fp string) string {
	return fmt.Sprintf("hulltally-report kind=%s subject=%s generated=%s records=%d fingerprint=%s", m.Kind, m.Subject, m.GeneratedAt.UTC().Format(time.RFC3339Nano), m.records(), fp)
}

// records is the number of audit-chain records the report draws on.
func (m *Model) records() int64 {
	var n int64
	for _, c := range m.Chains {
		n += c.Records
	}
	return n
}

func (d *doc) t(s string) string { return d.tr(ascii.Replace(s)) }

func (d *doc) h1(s string) {
	d.pdf.SetFont("Helvetica", "B", 15)
	d.pdf.MultiCell(bodyW, 7, d.t(s), "", "L", false)
	d.pdf.Ln(1)
}

func (d *doc) h2(s string) {
	if d.pdf.GetY() > 255 {
		d.pdf.AddPage()
	}
	d.pdf.Ln(2)
	d.pdf.SetFont("Helvetica", "B", 11)
	d.pdf.CellFormat(bodyW, 6, d.t(s), "B", 1, "L", false, 0, "")
	d.pdf.Ln(1)
}

func (d *doc) para(s string, size float64) {
	d.pdf.SetFont("Helvetica", "", size)
	d.pdf.MultiCell(bodyW, size*0.45, d.t(s), "", "L", false)
}

// kv prints label: value lines.
func (d *doc) kv(rows [][2]string) {
	for _, r := range rows {
		d.pdf.SetFont("Helvetica", "B", 9)
		d.pdf.CellFormat(45, 5, d.t(r[0]), "", 0, "L", false, 0, "")
		d.pdf.SetFont("Helvetica", "", 9)
		d.pdf.MultiCell(bodyW-45, 5, d.t(r[1]), "", "L", false)
	}
}

// table prints a table with a header repeated on every page.
func (d *doc) table(header []string, widths []float64, rows [][]string) {
	head := func() {
		d.pdf.SetFont("Helvetica", "B", 8)
		d.pdf.SetFillColor(225, 228, 235)
		for i, h := range header {
			d.pdf.CellFormat(widths[i], 5.5, d.t(h), "1", 0, "L", true, 0, "")
		}
		d.pdf.Ln(-1)
		d.pdf.SetFont("Helvetica", "", 8)
	}
	head()
	for _, r := range rows {
		// Row height from the tallest cell.
		lines := 1
		for i, c := range r {
			n := len(d.pdf.SplitLines([]byte(d.t(c)), widths[i]-1.5))
			lines = max(lines, n)
		}
		h := 4.2 * float64(lines)
		if d.pdf.GetY()+h > 279 {
			d.pdf.AddPage()
			head()
		}
		x, y := d.pdf.GetXY()
		for i, c := range r {
			d.pdf.Rect(x, y, widths[i], h, "D")
			d.pdf.SetXY(x+0.5, y+0.2)
			d.pdf.MultiCell(widths[i]-1, 4.2, d.t(c), "", "L", false)
			x += widths[i]
			d.pdf.SetXY(x, y)
		}
		d.pdf.SetXY(marginL, y+h)
	}
}

// image places a PNG chart across the body width.
func (d *doc) image(name string, png []byte, hMM float64) {
	if d.pdf.GetY()+hMM > 279 {
		d.pdf.AddPage()
	}
	opt := gofpdf.ImageOptions{ImageType: "PNG"}
	d.pdf.RegisterImageOptionsReader(name, opt, bytes.NewReader(png))
	d.pdf.ImageOptions(name, marginL, d.pdf.GetY(), bodyW, hMM, false, opt, 0, "")
	d.pdf.SetY(d.pdf.GetY() + hMM + 2)
}

func (d *doc) bytes() ([]byte, error) {
	var b bytes.Buffer
	if err := d.pdf.Output(&b); err != nil {
		return nil, fmt.Errorf("writing the PDF: %w", err)
	}
	return b.Bytes(), nil
}

func (d *doc) statusBox(status string) {
	r, g, b := 40, 130, 60
	switch status {
	case "watch":
		r, g, b = 200, 140, 0
	case "hold":
		r, g, b = 190, 30, 30
	case "withdrawn":
		r, g, b = 90, 90, 90
	}
	d.pdf.SetFillColor(r, g, b)
	d.pdf.SetTextColor(255, 255, 255)
	d.pdf.SetFont("Helvetica", "B", 14)
	d.pdf.CellFormat(bodyW, 10, d.t("STATUS: "+strings.ToUpper(status)), "", 1, "C", true, 0, "")
	d.pdf.SetTextColor(0, 0, 0)
	d.pdf.Ln(1)
}

func (d *doc) caution() {
	d.h2("Caution")
	d.para(Caution, 8.5)
}

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
	hp := m.Hulls[0]
	s := hp.Spec
	d, err := newDoc(m, "Fitness-for-service summary, hull "+s.Serial)
	if err != nil {
		return nil, err
	}
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
	maxP, maxZ := 0.0, 0.0
	for _, dv := range hp.Dives {
		maxP, maxZ = math.Max(maxP, dv.MaxPressureMPa), math.Max(maxZ, dv.MaxDepthM)
	}
	d.kv([][2]string{
		{"Dives on record", fmt.Sprintf("%d", hp.Damage.DiveCount)},
		{"Highest pressure ever", fmt.Sprintf("%.3f MPa (%.1f m)", maxP, maxZ)},
		{"Governing component", fmt.Sprintf("%s at %s of its allowable", hp.Damage.Governing, pct(float64(hp.Damage.GoverningRatio)))},
		{"Remaining", remainingText(hp.Damage)},
	})
	var rows [][]string
	for _, c := range hp.Damage.Components {
		rows = append(rows, []string{c.Name, sci(float64(c.CyclicDamage)), sci(float64(c.SustainedDamage)), fmt.Sprintf("%g", c.Allowable), pct(float64(c.Ratio))})
	}
	p.Ln(1)
	d.table([]string{"component", "cyclic damage", "sustained damage", "allowable", "of allowable"}, []float64{50, 35, 35, 25, 35}, rows)
	p.Ln(2)
	p.SetFont("Helvetica", "", 7.5)
	p.MultiCell(bodyW, 3.6, d.t("Fingerprint (SHA-256 of this report's ledger content and audit-chain head): "+d.fp+". Check it with: hulltally report verify FILE.pdf"), "", "L", false)
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
	for i, c := range hp.Damage.Components {
		src := ""
		if i < len(s.Components) {
			src = s.Components[i].Transfer.Source
		}
		rows = append(rows, []string{c.Name, c.Basis, fmt.Sprintf("%.4g MPa/MPa", c.Factor), c.Curve, src})
	}
	d.table([]string{"component", "basis", "factor", "S-N curve", "source of the factor"}, []float64{30, 20, 28, 52, 50}, rows)
	d.h2("Curves")
	rows = nil
	for _, c := range m.Basis.Curves {
		ill := ""
		if c.Illustrative {
			ill = "ILLUSTRATIVE: load qualified data"
		}
		rows = append(rows, []string{c.Name, c.Basis, ill, c.Source})
	}
	d.table([]string{"curve", "basis", "note", "source"}, []float64{42, 24, 28, bodyW - 94}, rows)
	d.h2("Rules (" + m.Basis.RulesFrom + ")")
	rows = nil
	for _, r := range m.Basis.Rules {
		rows = append(rows, []string{r.ID, r.Thresholds, r.Source})
	}
	d.table([]string{"rule", "thresholds", "source"}, []float64{45, 40, bodyW - 85}, rows)

	// Charts.
	p.AddPage()
	d.h1("History")
	if err := hullCharts(d, &hp); err != nil {
		return nil, err
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
	return d.bytes()
}

func nanOr(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

func hullCharts(d *doc, hp *HullPart) error {
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
	png, err := charts.DamageHistory(xs, hp.CumRatio, proj, 1, 0.5, chartSize)
	if err != nil {
		return fmt.Errorf("damage chart: %w", err)
	}
	d.image("damage", png, chartSize.HeightMM)
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
	png, err = charts.FelicityHistory(fx, fy, 0.95, chartSize)
	if err != nil {
		return fmt.Errorf("Felicity chart: %w", err)
	}
	d.image("felicity", png, chartSize.HeightMM)
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
		d.para(fmt.Sprintf("Deepest of the last 10 dives: %s, %s, %.1f m", hp.Deepest.ID.String()[:8], hp.Deepest.Start.UTC().Format("2006-01-02"), hp.Deepest.MaxDepthM), 9)
		d.image("profile", png, chartSize.HeightMM)
	}
	return nil
}

// RenderDive writes a dive sheet.
func RenderDive(m *Model) ([]byte, error) {
	dp := m.Dive
	dv := dp.Dive
	d, err := newDoc(m, "Dive sheet "+dv.ID.String())
	if err != nil {
		return nil, err
	}
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
			return nil, err
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
		d.table([]string{"gauge", "compliance ue/MPa", "change", "residual ue", "hysteresis", "creep ue"}, []float64{25, 35, 25, 30, 30, 35}, rows)
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
	return d.bytes()
}

func opt(p *float64, f string) string {
	if p == nil {
		return "-"
	}
	return fmt.Sprintf(f, *p)
}

// RenderFleet writes the fleet summary.
func RenderFleet(m *Model) ([]byte, error) {
	d, err := newDoc(m, "Fleet summary")
	if err != nil {
		return nil, err
	}
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
	return d.bytes()
}

// Render writes a model as its kind of report.
func Render(m *Model) ([]byte, error) {
	switch m.Kind {
	case KindHull:
		return RenderHull(m)
	case KindDive:
		return RenderDive(m)
	case KindFleet:
		return RenderFleet(m)
	}
	return nil, fmt.Errorf("unknown report kind %q", m.Kind)
}
