package charts

import (
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// noData is the note on a chart without data.
const noData = "no data"

// Projection is the straight-line projection of the cumulative damage
// ratio drawn after the last dive.
type Projection struct {
	// FromDive is the dive number the projection starts at; the starting
	// ratio is read off the history at that dive.
	FromDive float64
	// RatePerDive is the damage ratio added per dive (the median rate).
	RatePerDive float64
	// UntilDive is the last dive number drawn. The projection stops
	// earlier where it meets the allowable. Zero (or any value not after
	// FromDive) means no cap; the projection then stops where it meets the
	// allowable, but never further ahead than ten times the recorded
	// span of dives.
	UntilDive float64
}

// DamageHistory draws the cumulative damage ratio of the governing
// component (cumulative damage divided by the allowable) against dive
// number, with a horizontal line at allowable labelled "allowable", a
// "watch" line at watch (0 draws none) and, when projection is not nil,
// a dashed projection from projection.FromDive at projection.RatePerDive
// to where it meets the allowable or to projection.UntilDive.
//
// allowable is 1.0 in ratio units; 0 means 1.0. A NaN ratio leaves a gap.
func DamageHistory(dives, ratio []float64, projection *Projection, allowable, watch float64, size Size) ([]byte, error) {
	if math.IsNaN(watch) || math.IsInf(watch, 0) || watch < 0 {
		return nil, fmt.Errorf("charts: damage history: watch level %g must be 0 or positive: %w", watch, ErrInput)
	}
	var limits []Limit
	if watch > 0 {
		limits = []Limit{{At: watch, When: "at_or_above", Label: fmt.Sprintf("watch (%s)", fmtNum(watch))}}
	}
	return DamageHistoryLimits(dives, ratio, projection, allowable, limits, size)
}

// Limit is a horizontal limit line from a rule: a threshold, the side of
// it that trips the rule, and its level.
type Limit struct {
	// At is the threshold, in the chart's units.
	At float64
	// When is the rule's comparison: "at_or_above", "above",
	// "at_or_below" or "below".
	When string
	// Label names the line in the legend.
	Label string
	// Hold draws a solid red hold line; otherwise a dashed amber watch
	// line.
	Hold bool
}

// trips reports whether v is on the tripping side of the limit.
func (l Limit) trips(v float64) bool {
	switch l.When {
	case "at_or_above":
		return v >= l.At
	case "above":
		return v > l.At
	case "at_or_below":
		return v <= l.At
	case "below":
		return v < l.At
	}
	return false
}

func checkLimits(what string, limits []Limit) error {
	for _, l := range limits {
		if math.IsNaN(l.At) || math.IsInf(l.At, 0) || l.At < 0 {
			return fmt.Errorf("charts: %s: limit %g must be 0 or more: %w", what, l.At, ErrInput)
		}
		switch l.When {
		case "at_or_above", "above", "at_or_below", "below":
		default:
			return fmt.Errorf("charts: %s: limit comparison %q: %w", what, l.When, ErrInput)
		}
	}
	return nil
}

// DamageHistoryLimits is DamageHistory with the limit lines of the rules
// in force: each limit is drawn and labelled, and the allowable line is
// drawn as well unless a limit lies on it.
func DamageHistoryLimits(dives, ratio []float64, projection *Projection, allowable float64, limits []Limit, size Size) ([]byte, error) {
	if err := checkLimits("damage history", limits); err != nil {
		return nil, err
	}
	if err := checkLen("damage history: dives and ratios", len(dives), len(ratio)); err != nil {
		return nil, err
	}
	if err := checkFinite("damage history: dives", dives); err != nil {
		return nil, err
	}
	if allowable == 0 {
		allowable = 1
	}
	if math.IsNaN(allowable) || math.IsInf(allowable, 0) || allowable < 0 {
		return nil, fmt.Errorf("charts: damage history: allowable %g must be positive: %w", allowable, ErrInput)
	}
	if projection != nil {
		if err := checkFinite("damage history: projection",
			[]float64{projection.FromDive, projection.RatePerDive, projection.UntilDive}); err != nil {
			return nil, err
		}
	}

	p := newPlot("Cumulative fatigue damage, governing component", "dive number", "damage ratio (1 = allowable)")
	g := newLegend()
	xlo, xhi, hasX := extent(dives)
	_, yhi, hasY := extent(ratio)
	if !hasX || !hasY {
		xlo, xhi = 0, 10
		yhi = 0
	}
	ytop := math.Max(allowable*1.15, yhi*1.05)

	lines, alone := runs(dives, ratio, nil)
	ls := draw.LineStyle{Color: palette(0), Width: vg.Points(1.5)}
	gs := draw.GlyphStyle{Color: palette(0), Radius: vg.Points(2), Shape: draw.CircleGlyph{}}
	thumb, err := addRuns(p, lines, alone, ls, gs)
	if err != nil {
		return nil, err
	}
	if thumb != nil {
		g.add("damage ratio", thumb)
	}

	// Projection: from the ratio at FromDive, straight at the rate.
	var proj plotter.XYs
	projLabel := ""
	if projection != nil && hasX && hasY {
		r0, ok := valueAt(dives, ratio, projection.FromDive)
		if ok && r0 < allowable {
			from := projection.FromDive
			until := projection.UntilDive
			if until <= from {
				until = from + 10*math.Max(xhi-xlo, 1)
				if projection.RatePerDive <= 0 {
					until = from + math.Max(xhi-xlo, 1)/4
				}
			}
			end, reaches := until, false
			if rate := projection.RatePerDive; rate > 0 {
				if hit := from + (allowable-r0)/rate; hit <= until {
					end, reaches = hit, true
				}
			}
			r1 := r0 + projection.RatePerDive*(end-from)
			proj = plotter.XYs{{X: from, Y: r0}, {X: end, Y: r1}}
			projLabel = fmt.Sprintf("projection, %s per dive", fmtNum(projection.RatePerDive))
			if reaches {
				projLabel = fmt.Sprintf("projection: allowable at dive %.0f", math.Ceil(end))
			}
			xhi = math.Max(xhi, end)
			xlo = math.Min(xlo, from)
			ytop = math.Max(ytop, r1*1.05)
		}
	}
	xlo, xhi = widen(xlo, xhi)

	if proj != nil {
		l, err := plotter.NewLine(proj)
		if err != nil {
			return nil, fmt.Errorf("charts: damage projection: %w", err)
		}
		l.LineStyle = draw.LineStyle{Color: palette(0), Width: vg.Points(1.2), Dashes: dashed()}
		p.Add(l)
		g.add(projLabel, l)
	}
	onAllowable, anyHold := false, false
	for _, l := range limits {
		onAllowable = onAllowable || l.At == allowable
		anyHold = anyHold || l.Hold
	}
	if !onAllowable {
		var c color.Color = limitColor()
		if anyHold {
			c = color.Gray{Y: 60}
		}
		al, err := hline(p, allowable, xlo, xhi, c, nil)
		if err != nil {
			return nil, err
		}
		g.add(fmt.Sprintf("allowable (%s)", fmtNum(allowable)), al)
	}
	if err := limitLines(p, g, limits, xlo, xhi); err != nil {
		return nil, err
	}
	for _, l := range limits {
		ytop = math.Max(ytop, l.At*1.1)
	}

	p.X.Min, p.X.Max = xlo, xhi
	p.X.Tick.Marker = niceTicks{Whole: true}
	p.Y.Min, p.Y.Max = 0, ytop
	note := ""
	if !hasX || !hasY {
		note = noData
	}
	return render(p, g, note, size)
}

// limitLines draws the limits, hold lines solid red, watch lines dashed
// amber.
func limitLines(p *plot.Plot, g *legend, limits []Limit, xlo, xhi float64) error {
	for _, l := range limits {
		c, dash := watchColor(), dashed()
		if l.Hold {
			c, dash = limitColor(), nil
		}
		ln, err := hline(p, l.At, xlo, xhi, c, dash)
		if err != nil {
			return err
		}
		g.add(l.Label, ln)
	}
	return nil
}

// valueAt returns the value of ys at x, interpolated linearly between the
// nearest finite points and held at the ends.
func valueAt(xs, ys []float64, x float64) (float64, bool) {
	type pt struct{ x, y float64 }
	var pts []pt
	for i := range xs {
		if !math.IsNaN(ys[i]) && !math.IsInf(ys[i], 0) {
			pts = append(pts, pt{xs[i], ys[i]})
		}
	}
	if len(pts) == 0 {
		return 0, false
	}
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].x < pts[j].x })
	if x <= pts[0].x {
		return pts[0].y, true
	}
	for i := 1; i < len(pts); i++ {
		if x <= pts[i].x {
			a, b := pts[i-1], pts[i]
			if b.x == a.x {
				return b.y, true
			}
			return a.y + (b.y-a.y)*(x-a.x)/(b.x-a.x), true
		}
	}
	return pts[len(pts)-1].y, true
}

// CycleHistogram draws the rainflow histogram of pressure cycle ranges:
// ranges[i] (MPa) counted counts[i] times (half cycles count 0.5). The
// ranges are grouped into bins of a round width from 0 MPa; the cycle
// axis is logarithmic when the fullest bin holds more than 100 times the
// emptiest non-empty one.
func CycleHistogram(ranges, counts []float64, size Size) ([]byte, error) {
	if err := checkLen("cycle histogram: ranges and counts", len(ranges), len(counts)); err != nil {
		return nil, err
	}
	if err := checkFinite("cycle histogram: ranges", ranges); err != nil {
		return nil, err
	}
	if err := checkFinite("cycle histogram: counts", counts); err != nil {
		return nil, err
	}
	for i := range ranges {
		if ranges[i] < 0 || counts[i] < 0 {
			return nil, fmt.Errorf("charts: cycle histogram: range %g MPa counted %g times: both must be 0 or more: %w",
				ranges[i], counts[i], ErrInput)
		}
	}

	total := 0.0
	for _, c := range counts {
		total += c
	}
	title := fmt.Sprintf("Rainflow histogram of pressure cycles (%s cycles in all)", fmtCount(total))
	p := newPlot(title, "pressure range (MPa)", "cycles")

	_, rmax, _ := extent(ranges)
	if total == 0 {
		p.Title.Text = "Rainflow histogram of pressure cycles"
		p.X.Min, p.X.Max = 0, 1
		p.Y.Min, p.Y.Max = 0, 1
		return render(p, nil, noData, size)
	}
	width := niceStep(math.Max(rmax, 1e-9) / 20)
	n := int(math.Floor(rmax/width)) + 1
	bins := make([]plotter.HistogramBin, n)
	for i := range bins {
		bins[i] = plotter.HistogramBin{Min: float64(i) * width, Max: float64(i+1) * width}
	}
	for i, r := range ranges {
		k := int(math.Floor(r / width))
		if k >= n {
			k = n - 1
		}
		bins[k].Weight += counts[i]
	}
	lo, hi := math.Inf(1), 0.0
	for _, b := range bins {
		if b.Weight > 0 {
			lo = math.Min(lo, b.Weight)
			hi = math.Max(hi, b.Weight)
		}
	}
	h := &plotter.Histogram{
		Bins:      bins,
		Width:     width,
		FillColor: palette(5),
		LineStyle: draw.LineStyle{Color: palette(0), Width: vg.Points(0.6)},
	}
	p.Add(h)
	p.X.Min, p.X.Max = 0, float64(n)*width
	if hi/lo > 100 {
		// Logarithmic: bar heights are log10(cycles) above the bottom
		// decade, on a linear axis labelled in cycles.
		base := math.Floor(math.Log10(lo * 0.5))
		for i := range h.Bins {
			if w := h.Bins[i].Weight; w > 0 {
				h.Bins[i].Weight = math.Log10(w) - base
			}
		}
		p.Y.Tick.Marker = logTicks{Base: base}
		p.Y.Label.Text = "cycles (log scale)"
		p.Y.Min = 0
		p.Y.Max = math.Ceil(math.Log10(hi*1.05)) - base
	} else {
		p.Y.Min, p.Y.Max = 0, hi*1.08
	}
	return render(p, nil, "", size)
}

// niceStep returns the smallest of 1, 2, 2.5 and 5 times a power of ten
// that is at least x.
func niceStep(x float64) float64 {
	e := math.Pow(10, math.Floor(math.Log10(x)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*e >= x*(1-1e-12) {
			return m * e
		}
	}
	return 10 * e
}

// FelicityHistory draws the Felicity ratio evaluated on each dive (NaN:
// not evaluated, counted in the title) as points, those below limit
// marked apart, with the limit line labelled. The ratio axis runs from 0
// to the larger of 1.2 and the largest ratio.
func FelicityHistory(dives, ratio []float64, limit float64, size Size) ([]byte, error) {
	return FelicityHistoryLimits(dives, ratio, []Limit{{At: limit, When: "below", Label: fmt.Sprintf("Felicity limit (%s)", fmtNum(limit)), Hold: true}}, size)
}

// FelicityHistoryLimits is FelicityHistory with the limits of the rules
// in force: a point that trips a hold limit is a red triangle, one that
// trips only a watch limit an amber square, the others blue circles.
func FelicityHistoryLimits(dives, ratio []float64, limits []Limit, size Size) ([]byte, error) {
	if err := checkLimits("Felicity history", limits); err != nil {
		return nil, err
	}
	if err := checkLen("Felicity history: dives and ratios", len(dives), len(ratio)); err != nil {
		return nil, err
	}
	if err := checkFinite("Felicity history: dives", dives); err != nil {
		return nil, err
	}
	var ok, low, watch plotter.XYs
	skipped := 0
	limit := 0.0
	for _, l := range limits {
		limit = math.Max(limit, l.At)
	}
	for i, r := range ratio {
		if math.IsNaN(r) || math.IsInf(r, 0) {
			skipped++
			continue
		}
		hold, w := false, false
		for _, l := range limits {
			if l.trips(r) {
				if l.Hold {
					hold = true
				} else {
					w = true
				}
			}
		}
		switch {
		case hold:
			low = append(low, plotter.XY{X: dives[i], Y: r})
		case w:
			watch = append(watch, plotter.XY{X: dives[i], Y: r})
		default:
			ok = append(ok, plotter.XY{X: dives[i], Y: r})
		}
	}
	title := "Felicity ratio per dive"
	if skipped > 0 {
		title += fmt.Sprintf(" (%d of %d dives not evaluated)", skipped, len(ratio))
	}
	p := newPlot(title, "dive number", "Felicity ratio (–)")
	g := newLegend()
	xlo, xhi, hasX := extent(dives)
	if !hasX {
		xlo, xhi = 0, 10
	}
	xlo, xhi = widen(xlo, xhi)
	// Keep the markers of the first and last dives clear of the axes.
	padX := (xhi - xlo) * 0.02
	xlo, xhi = xlo-padX, xhi+padX
	_, rmax, _ := extent(ratio)
	ytop := math.Max(1.2, math.Max(rmax, limit)*1.05)

	if len(ok) > 0 {
		s, err := plotter.NewScatter(ok)
		if err != nil {
			return nil, fmt.Errorf("charts: Felicity points: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: palette(0), Radius: vg.Points(2.2), Shape: draw.CircleGlyph{}}
		p.Add(s)
		g.add(fmt.Sprintf("clear of the limits (%d)", len(ok)), s)
	}
	if len(watch) > 0 {
		s, err := plotter.NewScatter(watch)
		if err != nil {
			return nil, fmt.Errorf("charts: Felicity points: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: watchColor(), Radius: vg.Points(2.5), Shape: draw.SquareGlyph{}}
		p.Add(s)
		g.add(fmt.Sprintf("at the watch level (%d)", len(watch)), s)
	}
	if len(low) > 0 {
		s, err := plotter.NewScatter(low)
		if err != nil {
			return nil, fmt.Errorf("charts: Felicity points: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: limitColor(), Radius: vg.Points(2.8), Shape: draw.TriangleGlyph{}}
		p.Add(s)
		g.add(fmt.Sprintf("at the hold level (%d)", len(low)), s)
	}
	if err := limitLines(p, g, limits, xlo, xhi); err != nil {
		return nil, err
	}
	p.X.Min, p.X.Max = xlo, xhi
	p.X.Tick.Marker = niceTicks{Whole: true}
	p.Y.Min, p.Y.Max = 0, ytop
	note := ""
	switch {
	case len(ratio) == 0:
		note = noData
	case len(ok)+len(low)+len(watch) == 0:
		note = "no dive evaluated"
	}
	return render(p, g, note, size)
}

// ComplianceHistory draws, for each strain gauge (in name order), the
// magnitude of its compliance (µε/MPa) against dive number as a solid
// line, with its baseline as a dashed line of the same colour. series
// holds one value per dive for each gauge (NaN: none, a gap in the line);
// a gauge without a baseline, or with a NaN one, gets no baseline line.
// Baselines of gauges not in series are not drawn.
func ComplianceHistory(dives []float64, series map[string][]float64, baseline map[string]float64, size Size) ([]byte, error) {
	if err := checkFinite("compliance history: dives", dives); err != nil {
		return nil, err
	}
	names := make([]string, 0, len(series))
	for name := range series {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if err := checkLen(fmt.Sprintf("compliance history: dives and gauge %q", name), len(dives), len(series[name])); err != nil {
			return nil, err
		}
	}

	p := newPlot("Strain-gauge compliance per dive", "dive number", "compliance (µε/MPa, magnitude)")
	g := newLegend()
	xlo, xhi, hasX := extent(dives)
	if !hasX {
		xlo, xhi = 0, 10
	}
	xlo, xhi = widen(xlo, xhi)
	ymax := 0.0
	anyData := false
	shapes := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.PyramidGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}}
	anyBaseline := false
	for i, name := range names {
		col := palette(i)
		// Beyond the palette, vary the dash so lines stay distinct.
		var dash []vg.Length
		if i >= 8 {
			dash = dotted()
		}
		lines, alone := runs(dives, series[name], math.Abs)
		ls := draw.LineStyle{Color: col, Width: vg.Points(1.4), Dashes: dash}
		gs := draw.GlyphStyle{Color: col, Radius: vg.Points(2), Shape: shapes[i%len(shapes)]}
		thumb, err := addRuns(p, lines, alone, ls, gs)
		if err != nil {
			return nil, err
		}
		if _, hi, ok := extent(series[name]); ok {
			lo, _, _ := extent(series[name])
			ymax = math.Max(ymax, math.Max(math.Abs(lo), math.Abs(hi)))
			anyData = true
		}
		if thumb == nil {
			// A gauge without values still gets its legend entry.
			l, err := plotter.NewLine(plotter.XYs{{X: xlo, Y: 0}})
			if err != nil {
				return nil, fmt.Errorf("charts: compliance legend: %w", err)
			}
			l.LineStyle = ls
			thumb = l
		}
		g.add(name, thumb)
		if b, ok := baseline[name]; ok && !math.IsNaN(b) && !math.IsInf(b, 0) {
			b = math.Abs(b)
			if _, err := hline(p, b, xlo, xhi, col, dashed()); err != nil {
				return nil, err
			}
			ymax = math.Max(ymax, b)
			anyBaseline = true
		}
	}
	if anyBaseline {
		l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}})
		if err != nil {
			return nil, fmt.Errorf("charts: compliance legend: %w", err)
		}
		l.LineStyle = draw.LineStyle{Color: palette(6), Width: vg.Points(1.2), Dashes: dashed()}
		g.add("baseline (dashed, gauge colour)", l)
	}
	if ymax == 0 {
		ymax = 1
	}
	p.X.Min, p.X.Max = xlo, xhi
	p.X.Tick.Marker = niceTicks{Whole: true}
	p.Y.Min, p.Y.Max = 0, ymax*1.1
	note := ""
	if len(dives) == 0 || !anyData {
		note = noData
	}
	return render(p, g, note, size)
}

// DiveProfile draws the gauge pressure of one dive against time in hours
// (timeS in seconds from the start of the log), with the rated pressure
// as a line labelled "rated depth". A NaN pressure leaves a gap.
func DiveProfile(timeS, pressureMPa []float64, ratedMPa float64, size Size) ([]byte, error) {
	if err := checkLen("dive profile: times and pressures", len(timeS), len(pressureMPa)); err != nil {
		return nil, err
	}
	if err := checkFinite("dive profile: times", timeS); err != nil {
		return nil, err
	}
	if math.IsNaN(ratedMPa) || math.IsInf(ratedMPa, 0) || ratedMPa < 0 {
		return nil, fmt.Errorf("charts: dive profile: rated pressure %g MPa must be 0 or more: %w", ratedMPa, ErrInput)
	}
	hours := make([]float64, len(timeS))
	for i, t := range timeS {
		hours[i] = t / 3600
	}
	p := newPlot("Dive pressure profile", "time (h)", "gauge pressure (MPa)")
	g := newLegend()
	xlo, xhi, hasX := extent(hours)
	_, pmax, hasY := extent(pressureMPa)
	pmin, _, _ := extent(pressureMPa)
	if !hasX || !hasY {
		xlo, xhi = 0, 1
		pmin, pmax = 0, 0
	}
	xlo, xhi = widen(xlo, xhi)

	lines, alone := runs(hours, pressureMPa, nil)
	ls := draw.LineStyle{Color: palette(0), Width: vg.Points(1.4)}
	gs := draw.GlyphStyle{Color: palette(0), Radius: vg.Points(2), Shape: draw.CircleGlyph{}}
	thumb, err := addRuns(p, lines, alone, ls, gs)
	if err != nil {
		return nil, err
	}
	if thumb != nil {
		g.add("gauge pressure", thumb)
	}
	if ratedMPa > 0 {
		rl, err := hline(p, ratedMPa, xlo, xhi, limitColor(), dashed())
		if err != nil {
			return nil, err
		}
		g.add(fmt.Sprintf("rated depth (%s MPa)", fmtNum(ratedMPa)), rl)
	}
	p.X.Min, p.X.Max = xlo, xhi
	p.Y.Min = math.Min(0, pmin*1.05)
	p.Y.Max = math.Max(math.Max(ratedMPa, pmax)*1.1, 1)
	note := ""
	if !hasX || !hasY {
		note = noData
	}
	return render(p, g, note, size)
}

// fmtCount formats a cycle count: whole, or to the half cycle.
func fmtCount(v float64) string {
	if v == math.Trunc(v) && v < 1e15 {
		return strconv.FormatFloat(v, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', 1, 64)
}

// CumulativeHits draws one dive's cumulative acoustic-emission hits
// against gauge pressure (MPa), with the highest pressure the hull had
// reached before the dive and, when not nil, the pressure at the onset of
// significant emission as vertical lines. This is the picture behind a
// Felicity ratio: emission that starts below the previous maximum.
func CumulativeHits(pressureMPa, cumulative []float64, previousMaxMPa float64, onsetMPa *float64, size Size) ([]byte, error) {
	if err := checkLen("cumulative hits: pressures and counts", len(pressureMPa), len(cumulative)); err != nil {
		return nil, err
	}
	if err := checkFinite("cumulative hits: pressures", pressureMPa); err != nil {
		return nil, err
	}
	if math.IsNaN(previousMaxMPa) || math.IsInf(previousMaxMPa, 0) || previousMaxMPa < 0 {
		return nil, fmt.Errorf("charts: cumulative hits: previous maximum %g MPa must be 0 or more: %w", previousMaxMPa, ErrInput)
	}
	if onsetMPa != nil && (math.IsNaN(*onsetMPa) || math.IsInf(*onsetMPa, 0)) {
		return nil, fmt.Errorf("charts: cumulative hits: onset %g MPa: %w", *onsetMPa, ErrInput)
	}
	p := newPlot("Cumulative acoustic-emission hits against pressure", "gauge pressure (MPa)", "cumulative hits")
	g := newLegend()
	xlo, xhi, hasX := extent(pressureMPa)
	_, yhi, hasY := extent(cumulative)
	if !hasX || !hasY {
		xlo, xhi, yhi = 0, 1, 1
	}
	xlo = math.Min(xlo, 0)
	xhi = math.Max(xhi, previousMaxMPa)
	if onsetMPa != nil {
		xhi = math.Max(xhi, *onsetMPa)
	}
	xlo, xhi = widen(xlo, xhi*1.05)
	yhi = math.Max(yhi*1.1, 1)
	lines, alone := runs(pressureMPa, cumulative, nil)
	thumb, err := addRuns(p, lines, alone, draw.LineStyle{Color: palette(0), Width: vg.Points(1.4)},
		draw.GlyphStyle{Color: palette(0), Radius: vg.Points(2), Shape: draw.CircleGlyph{}})
	if err != nil {
		return nil, err
	}
	if thumb != nil {
		g.add("cumulative hits", thumb)
	}
	vline := func(x float64, c color.Color, dash []vg.Length, label string) error {
		l, err := plotter.NewLine(plotter.XYs{{X: x, Y: 0}, {X: x, Y: yhi}})
		if err != nil {
			return fmt.Errorf("charts: cumulative hits: %w", err)
		}
		l.LineStyle = draw.LineStyle{Color: c, Width: vg.Points(1.2), Dashes: dash}
		p.Add(l)
		g.add(label, l)
		return nil
	}
	if previousMaxMPa > 0 {
		if err := vline(previousMaxMPa, palette(6), dashed(), fmt.Sprintf("previous maximum (%s MPa)", fmtNum(previousMaxMPa))); err != nil {
			return nil, err
		}
	}
	if onsetMPa != nil {
		if err := vline(*onsetMPa, limitColor(), nil, fmt.Sprintf("onset of emission (%s MPa)", fmtNum(*onsetMPa))); err != nil {
			return nil, err
		}
	}
	p.X.Min, p.X.Max = xlo, xhi
	p.Y.Min, p.Y.Max = 0, yhi
	note := ""
	if !hasX || !hasY {
		note = noData
	}
	return render(p, g, note, size)
}
