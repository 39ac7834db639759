package charts

import (
	"fmt"
	"math"
	"sort"
	"strconv"

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
	if math.IsNaN(watch) || math.IsInf(watch, 0) || watch < 0 {
		return nil, fmt.Errorf("charts: damage history: watch level %g must be 0 or positive: %w", watch, ErrInput)
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
	al, err := hline(p, allowable, xlo, xhi, limitColor(), nil)
	if err != nil {
		return nil, err
	}
	g.add(fmt.Sprintf("allowable (%s)", fmtNum(allowable)), al)
	if watch > 0 {
		wl, err := hline(p, watch, xlo, xhi, watchColor(), dashed())
		if err != nil {
			return nil, err
		}
		g.add(fmt.Sprintf("watch (%s)", fmtNum(watch)), wl)
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
	if err := checkLen("Felicity history: dives and ratios", len(dives), len(ratio)); err != nil {
		return nil, err
	}
	if err := checkFinite("Felicity history: dives", dives); err != nil {
		return nil, err
	}
	if math.IsNaN(limit) || math.IsInf(limit, 0) || limit < 0 {
		return nil, fmt.Errorf("charts: Felicity history: limit %g must be 0 or more: %w", limit, ErrInput)
	}
	var ok, low plotter.XYs
	skipped := 0
	for i, r := range ratio {
		switch {
		case math.IsNaN(r) || math.IsInf(r, 0):
			skipped++
		case r < limit:
			low = append(low, plotter.XY{X: dives[i], Y: r})
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
		g.add(fmt.Sprintf("at or above limit (%d)", len(ok)), s)
	}
	if len(low) > 0 {
		s, err := plotter.NewScatter(low)
		if err != nil {
			return nil, fmt.Errorf("charts: Felicity points: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: limitColor(), Radius: vg.Points(2.8), Shape: draw.TriangleGlyph{}}
		p.Add(s)
		g.add(fmt.Sprintf("below limit (%d)", len(low)), s)
	}
	ll, err := hline(p, limit, xlo, xhi, limitColor(), dashed())
	if err != nil {
		return nil, err
	}
	g.add(fmt.Sprintf("Felicity limit (%s)", fmtNum(limit)), ll)
	p.X.Min, p.X.Max = xlo, xhi
	p.X.Tick.Marker = niceTicks{Whole: true}
	p.Y.Min, p.Y.Max = 0, ytop
	note := ""
	switch {
	case len(ratio) == 0:
		note = noData
	case len(ok)+len(low) == 0:
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
