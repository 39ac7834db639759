package reports

import (
	"bytes"
	"fmt"
	"hulltally/ledger"
	"sort"
	"strings"
	"time"

	"github.com/jung-kurt/gofpdf"
)

// doc wraps gofpdf with the report's page furniture and its own text
// layout: every character is printed in the first font that has its glyph
// (several fonts may share a line), and a character no font has is
// printed as its bracketed code point and listed.
type doc struct {
	pdf   *gofpdf.Fpdf
	ts    *typeset
	fp    string
	title string
	// notice is printed under the first heading: the characters that could
	// not be printed (found by an earlier pass).
	notice     string
	noticeDone bool
}

const (
	pageW   = 210.0
	marginL = 15.0
	marginR = 15.0
	bodyW   = pageW - marginL - marginR
	// bottom is the lowest text line's foot on a page (A4, above the
	// footer).
	bottom = 279.0
	ptMM   = 25.4 / 72
)

func newDoc(m *Model, title, notice string) (*doc, error) {
	fp, err := m.Fingerprint()
	if err != nil {
		return nil, err
	}
	ts, err := newTypeset(FallbackFontPaths())
	if err != nil {
		return nil, err
	}
	pdf := gofpdf.New("P", "mm", "A4", "")
	pdf.SetCompression(true)
	pdf.SetCatalogSort(true)
	pdf.SetCreationDate(m.GeneratedAt)
	pdf.SetModificationDate(m.GeneratedAt)
	pdf.SetMargins(marginL, 15, marginR)
	// Page breaks are the layout's own: a break inside a line would tear
	// a line printed in several fonts.
	pdf.SetAutoPageBreak(false, 18)
	pdf.SetCellMargin(0)
	pdf.AliasNbPages("{nb}")
	d := &doc{pdf: pdf, ts: ts, fp: fp, title: title, notice: notice}
	pdf.SetTitle(title, true)
	pdf.SetAuthor("hulltally", true)
	pdf.SetCreator(ledger.CurrentSoftware().String(), true) // the build that wrote it
	pdf.SetSubject(m.Kind+" "+m.Subject, true)
	pdf.SetKeywords(keywords(m, fp), false)
	pdf.SetFooterFunc(func() {
		pdf.SetTextColor(90, 90, 90)
		pdf.SetDrawColor(90, 90, 90)
		pdf.Line(marginL, 283.5, marginL+bodyW, 283.5)
		pdf.SetY(284)
		d.block(marginL, bodyW, 3.2, fmt.Sprintf("hulltally %s report  |  generated %s  |  page %d of {nb}\nfingerprint %s",
			m.Kind, m.GeneratedAt.UTC().Format("2006-01-02 15:04:05 UTC"), pdf.PageNo(), fp), styleRegular, 7, "C", false)
		pdf.SetTextColor(0, 0, 0)
		pdf.SetDrawColor(0, 0, 0)
	})
	return d, nil
}

// keywords carries what verification needs, in the PDF's metadata.
func keywords(m *Model, fp string) string {
	return fmt.Sprintf("hulltally-report kind=%s subject=%s generated=%s records=%d chains=%s fingerprint=%s", m.Kind, m.Subject, m.GeneratedAt.UTC().Format(time.RFC3339Nano), m.records(), chainsText(m), fp)
}

// chainsText states, in the signed metadata, each hull's audit-chain
// length and head the report draws on ("SERIAL:length:head,…", by serial):
// an inspector holding a hull's bundle can check the report against the
// record without the database.
func chainsText(m *Model) string {
	serials := make([]string, 0, len(m.Chains))
	for s := range m.Chains {
		serials = append(serials, s)
	}
	sort.Strings(serials)
	parts := make([]string, len(serials))
	for i, s := range serials {
		c := m.Chains[s]
		parts[i] = fmt.Sprintf("%s:%d:%s", s, c.Records, c.Head)
	}
	return strings.Join(parts, ",")
}

// records is the number of audit-chain records the report draws on.
func (m *Model) records() int64 {
	var n int64
	for _, c := range m.Chains {
		n += c.Records
	}
	return n
}

// tline is one laid-out line.
type tline struct {
	gs []glyph
	w  float64 // mm
}

// mm converts a width in thousandths of the font size to millimetres.
func mm(w, sizePt float64) float64 { return w / 1000 * sizePt * ptMM }

// layout wraps s into lines no wider than width (mm): at spaces, around
// ideographs, and inside a word only when the word alone is too wide.
func (d *doc) layout(s string, style int, size, width float64) []tline {
	gs := d.ts.shape(s, style)
	var lines []tline
	finish := func(cur []glyph) {
		for len(cur) > 0 && cur[len(cur)-1].space {
			cur = cur[:len(cur)-1]
		}
		w := 0.0
		for _, g := range cur {
			w += mm(g.width, size)
		}
		lines = append(lines, tline{gs: cur, w: w})
	}
	var cur []glyph
	curW, lastBreak := 0.0, -1
	for _, g := range gs {
		if g.newline {
			finish(cur)
			cur, curW, lastBreak = nil, 0, -1
			continue
		}
		gw := mm(g.width, size)
		if curW+gw > width && len(cur) > 0 && !g.space {
			if lastBreak >= 0 {
				rest := append([]glyph(nil), cur[lastBreak+1:]...)
				finish(cur[:lastBreak+1])
				cur, curW = rest, 0
				for _, r := range rest {
					curW += mm(r.width, size)
				}
			} else {
				finish(cur)
				cur, curW = nil, 0
			}
			lastBreak = -1
		}
		if len(cur) == 0 && g.space && len(lines) > 0 {
			continue // no space at the start of a wrapped line
		}
		cur = append(cur, g)
		curW += gw
		if g.breakAfter {
			lastBreak = len(cur) - 1
		}
	}
	finish(cur)
	return lines
}

var styleNames = [2]string{"", "B"}

// setFont selects face k, registering it with the PDF on first use.
func (d *doc) setFont(k, style int, size float64) {
	f := d.ts.faces[k]
	if !f.added[style] {
		d.pdf.AddUTF8FontFromBytes(f.family, styleNames[style], f.data[style])
		f.added[style] = true
	}
	d.pdf.SetFont(f.family, styleNames[style], size)
}

// writeLine prints a line with its top-left corner at (x, y), in runs of
// one font each.
func (d *doc) writeLine(x, y, h float64, l tline, style int, size float64) {
	for i := 0; i < len(l.gs); {
		j := i
		var sb strings.Builder
		w := 0.0
		for ; j < len(l.gs) && l.gs[j].face == l.gs[i].face; j++ {
			sb.WriteString(l.gs[j].text)
			w += mm(l.gs[j].width, size)
		}
		d.setFont(l.gs[i].face, style, size)
		d.pdf.SetXY(x, y)
		d.pdf.CellFormat(w, h, sb.String(), "", 0, "L", false, 0, "")
		x += w
		i = j
	}
}

// block prints s wrapped to width from the current line at x, with line
// height lh, aligned "L" or "C", starting a new page before a line that
// would not fit when breakPages is set. It leaves the position under the
// block at the left margin.
func (d *doc) block(x, width, lh float64, s string, style int, size float64, align string, breakPages bool) {
	for _, l := range d.layout(s, style, size, width) {
		if breakPages && d.pdf.GetY()+lh > bottom {
			d.pdf.AddPage()
		}
		y := d.pdf.GetY()
		xx := x
		if align == "C" {
			xx = x + (width-l.w)/2
		}
		d.writeLine(xx, y, lh, l, style, size)
		d.pdf.SetXY(marginL, y+lh)
	}
}

func (d *doc) h1(s string) {
	d.block(marginL, bodyW, 7, s, styleBold, 15, "L", true)
	d.pdf.Ln(1)
	if d.notice != "" && !d.noticeDone {
		d.noticeDone = true
		d.pdf.SetTextColor(190, 30, 30)
		d.block(marginL, bodyW, 4.2, d.notice, styleBold, 9, "L", true)
		d.pdf.SetTextColor(0, 0, 0)
		d.pdf.Ln(1)
	}
}

func (d *doc) h2(s string) {
	if d.pdf.GetY() > 255 {
		d.pdf.AddPage()
	}
	d.pdf.Ln(2)
	d.block(marginL, bodyW, 6, s, styleBold, 11, "L", true)
	y := d.pdf.GetY()
	d.pdf.Line(marginL, y, marginL+bodyW, y)
	d.pdf.Ln(1)
}

func (d *doc) para(s string, size float64) {
	d.block(marginL, bodyW, size*0.45, s, styleRegular, size, "L", true)
}

// bullet prints s as a bulleted item with a hanging indent.
func (d *doc) bullet(s string, size, lh float64) {
	const indent = 4.0
	ls := d.layout(s, styleRegular, size, bodyW-indent-1)
	for i, l := range ls {
		if d.pdf.GetY()+lh > bottom {
			d.pdf.AddPage()
		}
		y := d.pdf.GetY()
		if i == 0 {
			d.writeLine(marginL+1, y, lh, d.layout("•", styleRegular, size, indent)[0], styleRegular, size)
		}
		d.writeLine(marginL+indent, y, lh, l, styleRegular, size)
		d.pdf.SetXY(marginL, y+lh)
	}
}

// kv prints label: value lines.
func (d *doc) kv(rows [][2]string) {
	const lw, lh = 45.0, 5.0
	for _, r := range rows {
		ll := d.layout(r[0], styleBold, 9, lw-1)
		vl := d.layout(r[1], styleRegular, 9, bodyW-lw)
		h := lh * float64(max(len(ll), len(vl)))
		if d.pdf.GetY()+h > bottom {
			d.pdf.AddPage()
		}
		y := d.pdf.GetY()
		for i, l := range ll {
			d.writeLine(marginL, y+float64(i)*lh, lh, l, styleBold, 9)
		}
		for i, l := range vl {
			d.writeLine(marginL+lw, y+float64(i)*lh, lh, l, styleRegular, 9)
		}
		d.pdf.SetXY(marginL, y+h)
	}
}

// table prints a table with a header repeated on every page.
func (d *doc) table(header []string, widths []float64, rows [][]string) {
	const lh, size = 4.2, 8.0
	cells := func(r []string, style int) ([][]tline, float64) {
		out := make([][]tline, len(r))
		n := 1
		for i, c := range r {
			out[i] = d.layout(c, style, size, widths[i]-1.5)
			n = max(n, len(out[i]))
		}
		return out, lh*float64(n) + 1
	}
	draw := func(cs [][]tline, h float64, style int, fill bool) {
		x, y := marginL, d.pdf.GetY()
		for i, ls := range cs {
			if fill {
				d.pdf.SetFillColor(225, 228, 235)
				d.pdf.Rect(x, y, widths[i], h, "FD")
			} else {
				d.pdf.Rect(x, y, widths[i], h, "D")
			}
			for k, l := range ls {
				d.writeLine(x+0.75, y+0.5+float64(k)*lh, lh, l, style, size)
			}
			x += widths[i]
		}
		d.pdf.SetXY(marginL, y+h)
	}
	hc, hh := cells(header, styleBold)
	if d.pdf.GetY()+hh+lh+1 > bottom {
		d.pdf.AddPage()
	}
	draw(hc, hh, styleBold, true)
	for _, r := range rows {
		rc, h := cells(r, styleRegular)
		if d.pdf.GetY()+h > bottom {
			d.pdf.AddPage()
			draw(hc, hh, styleBold, true)
		}
		draw(rc, h, styleRegular, false)
	}
}

// image places a PNG chart across the body width.
func (d *doc) image(name string, png []byte, hMM float64) {
	if d.pdf.GetY()+hMM > bottom {
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
	if d.pdf.GetY()+11 > bottom {
		d.pdf.AddPage()
	}
	y := d.pdf.GetY()
	d.pdf.SetFillColor(r, g, b)
	d.pdf.Rect(marginL, y, bodyW, 10, "F")
	d.pdf.SetTextColor(255, 255, 255)
	d.pdf.SetXY(marginL, y+1.5)
	d.block(marginL, bodyW, 7, "STATUS: "+strings.ToUpper(status), styleBold, 14, "C", false)
	d.pdf.SetTextColor(0, 0, 0)
	d.pdf.SetXY(marginL, y+11)
}

func (d *doc) caution() {
	d.h2("Caution")
	d.para(Caution, 8.5)
}

// Rendered is a rendered report.
type Rendered struct {
	// PDF is the file's bytes.
	PDF []byte
	// Unprintable are the characters no available font has a glyph for,
	// in code-point order. Each is printed as its code point in brackets
	// ("[U+E000]") and they are listed on the first page. Empty when every
	// character printed.
	Unprintable []rune
}

// Warning says which characters could not be printed; empty when all
// could.
func (r *Rendered) Warning() string {
	if len(r.Unprintable) == 0 {
		return ""
	}
	return unprintableNotice(r.Unprintable)
}

func unprintableNotice(rs []rune) string {
	cps := make([]string, len(rs))
	for i, r := range rs {
		cps[i] = fmt.Sprintf("U+%04X", r)
	}
	return fmt.Sprintf("%d character(s) could not be printed: no font available has a glyph for %s; each is printed as its code point in brackets, for example [%s]. Install a font that covers them (Debian: fonts-droid-fallback for Chinese, Japanese and Korean).",
		len(rs), strings.Join(cps, ", "), cps[0])
}

// renderDoc runs body on a fresh document; when characters could not be
// printed it renders again with their list under the first heading.
func renderDoc(m *Model, title string, body func(d *doc) error) (*Rendered, error) {
	pass := func(notice string) (*doc, []byte, error) {
		d, err := newDoc(m, title, notice)
		if err != nil {
			return nil, nil, err
		}
		if err := body(d); err != nil {
			return nil, nil, err
		}
		b, err := d.bytes()
		return d, b, err
	}
	d, b, err := pass("")
	if err != nil {
		return nil, err
	}
	if miss := d.ts.unprintable(); len(miss) > 0 {
		if d, b, err = pass(unprintableNotice(miss)); err != nil {
			return nil, err
		}
	}
	return &Rendered{PDF: b, Unprintable: d.ts.unprintable()}, nil
}
