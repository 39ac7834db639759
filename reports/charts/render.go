// Package charts draws the print-legible charts that hulltally embeds in
// its PDF fitness-for-service reports: the cumulative damage history of a
// pressure hull with its projection, the rainflow histogram of pressure
// cycles, the Felicity ratio per dive, the strain-gauge compliance history
// and the pressure profile of one dive.
//
// Every chart is drawn as vectors by gonum/plot and rasterised at the
// requested resolution (200 dpi by default) into PNG bytes. PNG is used
// because the PDF library embeds raster images; at 200 dpi the text and
// lines stay sharp on a printed page. Output is deterministic: the same
// input gives the same bytes.
//
// Inputs are plain values. Empty inputs give a chart that says "no data";
// mismatched lengths, non-finite abscissae and invalid sizes give an error
// that wraps ErrInput.
package charts

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Default chart size: 170 mm × 80 mm at 200 dpi, a full text width of an
// A4 page.
const (
	DefaultWidthMM  = 170
	DefaultHeightMM = 80
	DefaultDPI      = 200
)

// Limits on the chart size, to keep a mistaken size from allocating an
// enormous image.
const (
	MaxSideMM = 1000
	MaxDPI    = 1200
)

// ErrInput is wrapped by every error about the inputs of a chart.
var ErrInput = errors.New("invalid chart input")

// Size is the printed size of a chart and the resolution of its raster.
// A zero field takes its default (170 × 80 mm, 200 dpi).
type Size struct {
	WidthMM, HeightMM float64
	DPI               int
	// SVG draws the chart as SVG (for the web pages) instead of PNG; the
	// resolution then does not matter.
	SVG bool
}

// resolve fills in defaults and checks the size.
func (s Size) resolve() (Size, error) {
	if s.WidthMM == 0 {
		s.WidthMM = DefaultWidthMM
	}
	if s.HeightMM == 0 {
		s.HeightMM = DefaultHeightMM
	}
	if s.DPI == 0 {
		s.DPI = DefaultDPI
	}
	for _, v := range []float64{s.WidthMM, s.HeightMM} {
		if math.IsNaN(v) || v < 20 || v > MaxSideMM {
			return s, fmt.Errorf("charts: size %g × %g mm: each side must be 20 to %d mm: %w",
				s.WidthMM, s.HeightMM, MaxSideMM, ErrInput)
		}
	}
	if s.DPI < 36 || s.DPI > MaxDPI {
		return s, fmt.Errorf("charts: resolution %d dpi: must be 36 to %d dpi: %w", s.DPI, MaxDPI, ErrInput)
	}
	return s, nil
}

// Font sizes in points, chosen for print.
const (
	titlePt  = 11
	labelPt  = 10
	tickPt   = 9
	legendPt = 9
	notePt   = 10
)

// sans is the typeface of every chart; the sans variant reads better than
// serif at small print sizes.
func sans(pt float64) font.Font {
	return font.From(font.Font{Typeface: "Liberation", Variant: "Sans"}, vg.Points(pt))
}

// palette returns the i-th series colour. The colours (Okabe–Ito) stay
// distinct for readers with colour-vision deficiency and in greyscale print
// they differ in lightness.
func palette(i int) color.Color {
	cs := []color.RGBA{
		{0, 114, 178, 255},   // blue
		{213, 94, 0, 255},    // vermilion
		{0, 158, 115, 255},   // bluish green
		{204, 121, 167, 255}, // reddish purple
		{230, 159, 0, 255},   // orange
		{86, 180, 233, 255},  // sky blue
		{0, 0, 0, 255},       // black
		{240, 228, 66, 255},  // yellow
	}
	return cs[i%len(cs)]
}

// limitColor is the colour of limit lines (allowable, rated, Felicity).
func limitColor() color.Color { return color.RGBA{R: 192, G: 0, B: 0, A: 255} }

// watchColor is the colour of the watch line.
func watchColor() color.Color { return color.RGBA{R: 200, G: 130, B: 0, A: 255} }

// dash patterns.
func dashed() []vg.Length { return []vg.Length{vg.Points(5), vg.Points(3)} }
func dotted() []vg.Length { return []vg.Length{vg.Points(1.5), vg.Points(2)} }

// newPlot returns a plot with the title, axis titles and print fonts set.
func newPlot(title, xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font = sans(titlePt)
	p.Title.Padding = vg.Points(6)
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.Label.TextStyle.Font = sans(labelPt)
		ax.Tick.Label.Font = sans(tickPt)
		ax.Label.Padding = vg.Points(3)
		ax.Tick.Marker = niceTicks{}
	}
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 220}
	g.Horizontal.Color = color.Gray{Y: 220}
	g.Vertical.Width = vg.Points(0.4)
	g.Horizontal.Width = vg.Points(0.4)
	p.Add(g)
	return p
}

// legend is a legend drawn beside the plot, outside the data area, so it
// never hides data.
type legend struct {
	l plot.Legend
	n int
}

func newLegend() *legend {
	l := plot.NewLegend()
	l.TextStyle.Font = sans(legendPt)
	l.Top = true
	l.Left = true
	l.ThumbnailWidth = vg.Points(24)
	l.Padding = vg.Points(3)
	return &legend{l: l}
}

// maxLegendRunes bounds the length of one legend entry.
const maxLegendRunes = 32

func (g *legend) add(name string, thumbs ...plot.Thumbnailer) {
	if r := []rune(name); len(r) > maxLegendRunes {
		name = string(r[:maxLegendRunes-1]) + "…"
	}
	g.l.Add(name, thumbs...)
	g.n++
}

// render draws p with the legend to its right and the note centred in the
// data area, and returns the PNG bytes.
func render(p *plot.Plot, g *legend, note string, size Size) ([]byte, error) {
	size, err := size.resolve()
	if err != nil {
		return nil, err
	}
	w := vg.Length(size.WidthMM) * vg.Millimeter
	h := vg.Length(size.HeightMM) * vg.Millimeter
	var c vg.CanvasWriterTo
	if size.SVG {
		// The same drawing as the PDF's; the fonts are named, not embedded.
		c = vgsvg.NewWith(vgsvg.UseWH(w, h), vgsvg.EmbedFonts(false))
	} else {
		c = vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(size.DPI))}
	}
	dc := draw.New(c)
	pad := 2 * vg.Millimeter
	area := draw.Crop(dc, pad, -pad, pad, -pad)
	// The title spans the whole chart, above both the plot and the legend,
	// and shrinks (down to 8 pt) rather than run off the page.
	if title := p.Title.Text; title != "" {
		sty := p.Title.TextStyle
		for pt := float64(titlePt); sty.Width(title) > area.Size().X && pt > 8; pt -= 0.5 {
			sty.Font = sans(pt - 0.5)
		}
		for sty.Width(title) > area.Size().X && len([]rune(title)) > 2 {
			r := []rune(title)
			title = string(r[:len(r)-2]) + "…"
		}
		sty.XAlign = draw.XCenter
		sty.YAlign = draw.YTop
		area.FillText(sty, vg.Point{X: area.Center().X, Y: area.Max.Y}, title)
		area = draw.Crop(area, 0, 0, 0, -(sty.Rectangle(title).Size().Y + p.Title.Padding))
		p.Title.Text = ""
	}
	plotArea := area
	if g != nil && g.n > 0 {
		gap := 3 * vg.Millimeter
		lw := g.l.Rectangle(area).Size().X
		if max := area.Size().X / 2; lw > max {
			lw = max
		}
		plotArea = draw.Crop(area, 0, -(lw + gap), 0, 0)
		legArea := draw.Crop(area, area.Size().X-lw, 0, 0, 0)
		g.l.Draw(legArea)
	}
	p.Draw(plotArea)
	if note != "" {
		da := p.DataCanvas(plotArea)
		sty := text.Style{
			Color:   color.Gray{Y: 90},
			Font:    sans(notePt),
			XAlign:  draw.XCenter,
			YAlign:  draw.YCenter,
			Handler: p.TextHandler,
		}
		// A white box behind the note keeps it clear of limit lines.
		r := sty.Rectangle(note)
		m := vg.Points(4)
		ctr := da.Center()
		box := vg.Rectangle{
			Min: vg.Point{X: ctr.X + r.Min.X - m, Y: ctr.Y + r.Min.Y - m},
			Max: vg.Point{X: ctr.X + r.Max.X + m, Y: ctr.Y + r.Max.Y + m},
		}
		da.FillPolygon(color.White, []vg.Point{
			box.Min, {X: box.Max.X, Y: box.Min.Y}, box.Max, {X: box.Min.X, Y: box.Max.Y},
		})
		da.FillText(sty, ctr, note)
	}
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("charts: encode: %w", err)
	}
	return buf.Bytes(), nil
}

// checkLen reports mismatched lengths.
func checkLen(what string, a, b int) error {
	if a != b {
		return fmt.Errorf("charts: %s: %d values against %d: %w", what, a, b, ErrInput)
	}
	return nil
}

// checkFinite reports a non-finite value in xs.
func checkFinite(what string, xs []float64) error {
	for i, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("charts: %s[%d] is %g: %w", what, i, x, ErrInput)
		}
	}
	return nil
}

// runs splits the points (xs[i], f(ys[i])) into runs of finite values, so
// a missing value (NaN) leaves a gap in the line. Points that stand alone
// between gaps are returned separately, to be drawn as markers.
func runs(xs, ys []float64, f func(float64) float64) (lines []plotter.XYs, alone plotter.XYs) {
	var cur plotter.XYs
	flush := func() {
		switch len(cur) {
		case 0:
		case 1:
			alone = append(alone, cur[0])
		default:
			lines = append(lines, cur)
		}
		cur = nil
	}
	for i := range xs {
		y := ys[i]
		if f != nil {
			y = f(y)
		}
		if math.IsNaN(y) || math.IsInf(y, 0) {
			flush()
			continue
		}
		cur = append(cur, plotter.XY{X: xs[i], Y: y})
	}
	flush()
	return lines, alone
}

// addRuns adds the runs as lines of one style and the lone points as
// markers; it returns a thumbnail for the legend.
func addRuns(p *plot.Plot, lines []plotter.XYs, alone plotter.XYs, ls draw.LineStyle, gs draw.GlyphStyle) (plot.Thumbnailer, error) {
	var thumb plot.Thumbnailer
	for _, xy := range lines {
		l, err := plotter.NewLine(xy)
		if err != nil {
			return nil, fmt.Errorf("charts: line: %w", err)
		}
		l.LineStyle = ls
		p.Add(l)
		thumb = l
	}
	if len(alone) > 0 {
		s, err := plotter.NewScatter(alone)
		if err != nil {
			return nil, fmt.Errorf("charts: points: %w", err)
		}
		s.GlyphStyle = gs
		p.Add(s)
		if thumb == nil {
			thumb = s
		}
	}
	return thumb, nil
}

// hline adds a horizontal line at y from x0 to x1 and returns it for the
// legend.
func hline(p *plot.Plot, y, x0, x1 float64, c color.Color, dashes []vg.Length) (*plotter.Line, error) {
	l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: x1, Y: y}})
	if err != nil {
		return nil, fmt.Errorf("charts: limit line: %w", err)
	}
	l.LineStyle = draw.LineStyle{Color: c, Width: vg.Points(1.2), Dashes: dashes}
	p.Add(l)
	return l, nil
}

// extent returns the minimum and maximum finite values of xs; ok is false
// when there is none.
func extent(xs []float64) (lo, hi float64, ok bool) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		lo = math.Min(lo, x)
		hi = math.Max(hi, x)
		ok = true
	}
	return lo, hi, ok
}

// widen returns a range that is not empty.
func widen(lo, hi float64) (float64, float64) {
	if hi > lo {
		return lo, hi
	}
	d := math.Max(math.Abs(lo)*0.05, 0.5)
	return lo - d, hi + d
}

// fmtNum formats a number compactly for labels.
func fmtNum(v float64) string {
	return fmt.Sprintf("%.3g", v)
}

// niceTicks places labelled ticks at a round step (1, 2 or 5 times a
// power of ten) giving about six labels, with unlabelled minor ticks
// between them, so tick labels never crowd.
type niceTicks struct {
	// Whole keeps the step at 1 or more, for counts such as dive numbers.
	Whole bool
}

// Ticks implements plot.Ticker.
func (t niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: strconv.FormatFloat(lo, 'g', 4, 64)}}
	}
	raw := (hi - lo) / 6
	e := math.Pow(10, math.Floor(math.Log10(raw)))
	step, minor := 10*e, 5
	for _, m := range []float64{1, 2, 5} {
		if m*e >= raw {
			step = m * e
			if m == 2 {
				minor = 4
			}
			break
		}
	}
	if t.Whole && step < 1 {
		step, minor = 1, 1
	}
	dec := 0
	if d := -int(math.Floor(math.Log10(step) + 1e-9)); d > 0 {
		dec = d
	}
	var ticks []plot.Tick
	sub := step / float64(minor)
	first := math.Ceil(lo/sub-1e-9) * sub
	for i := 0; ; i++ {
		v := first + float64(i)*sub
		if v > hi+sub*1e-9 {
			break
		}
		k := v / step
		if math.Abs(k-math.Round(k)) < 1e-6 {
			v = math.Round(k) * step
			if v == 0 {
				v = 0 // no "-0"
			}
			ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', dec, 64)})
		} else {
			ticks = append(ticks, plot.Tick{Value: v})
		}
	}
	return ticks
}

// logTicks labels the axis of log10(value) - Base at each power of ten,
// with unlabelled minor ticks at 2 to 9 times each, and places no tick
// outside the range. A logarithmic quantity is drawn this way, on a linear
// axis of its logarithm, so that the axis title stays centred.
type logTicks struct {
	// Base is the decade at the bottom of the axis.
	Base float64
}

// Ticks implements plot.Ticker.
func (t logTicks) Ticks(lo, hi float64) []plot.Tick {
	var ticks []plot.Tick
	for e := math.Floor(lo + t.Base); e <= math.Ceil(hi+t.Base); e++ {
		for m := 1; m <= 9; m++ {
			v := e + math.Log10(float64(m)) - t.Base
			if v < lo-1e-9 || v > hi+1e-9 {
				continue
			}
			tk := plot.Tick{Value: v}
			if m == 1 {
				tk.Label = strconv.FormatFloat(math.Pow(10, e), 'f', -1, 64)
			}
			ticks = append(ticks, tk)
		}
	}
	return ticks
}
