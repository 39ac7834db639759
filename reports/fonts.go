package reports

import (
	"fmt"
	"math"
	"os"
	"sort"
	"unicode"

	"codeberg.org/go-fonts/liberation/liberationsansbold"
	"codeberg.org/go-fonts/liberation/liberationsansregular"
	"golang.org/x/image/font/sfnt"
	"golang.org/x/image/math/fixed"
)

// FallbackFontPaths are the system fonts a report falls back to, in order,
// for characters the embedded Liberation Sans lacks. Each is used only
// when present; a character no font has is printed as its code point in
// brackets ("[U+E000]") and listed as unprintable. Debian:
// fonts-droid-fallback covers Chinese, Japanese and Korean;
// fonts-dejavu-core covers many symbols and scripts.
func FallbackFontPaths() []string {
	return []string{
		"/usr/share/fonts/truetype/droid/DroidSansFallbackFull.ttf",
		"/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
	}
}

// Font styles.
const (
	styleRegular = 0
	styleBold    = 1
)

// face is one typeface the report can print with: a regular and a bold
// TrueType font (the same file when the face has no bold).
type face struct {
	family string
	data   [2][]byte
	font   [2]*sfnt.Font
	upem   [2]float64
	added  [2]bool
	origin string
}

// typeset chooses, for every character, the first face that has its
// glyph, measures text, and keeps the characters no face has. It belongs
// to one rendering.
type typeset struct {
	faces []*face
	buf   sfnt.Buffer
	// which caches the face index per style and rune; -1: none.
	which [2]map[rune]int
	// width caches advance widths in thousandths of the font size.
	width   map[widthKey]float64
	missing map[rune]bool
	// pending are fallback font files not read yet: they are read when a
	// character is first missing from the faces loaded.
	pending []string
}

type widthKey struct {
	face, style int
	r           rune
}

func newFace(family, origin string, regular, bold []byte) (*face, error) {
	f := &face{family: family, data: [2][]byte{regular, bold}, origin: origin}
	for i, b := range f.data {
		ft, err := sfnt.Parse(b)
		if err != nil {
			return nil, fmt.Errorf("font %s: %w", origin, err)
		}
		f.font[i] = ft
		f.upem[i] = float64(ft.UnitsPerEm())
	}
	return f, nil
}

// newTypeset loads the embedded Liberation Sans and the system fallback
// fonts that are present.
func newTypeset(fallbacks []string) (*typeset, error) {
	lib, err := newFace("LiberationSans", "Liberation Sans (embedded)", liberationsansregular.TTF, liberationsansbold.TTF)
	if err != nil {
		return nil, err
	}
	ts := &typeset{faces: []*face{lib}, missing: map[rune]bool{}, width: map[widthKey]float64{}, pending: fallbacks}
	for i := range ts.which {
		ts.which[i] = map[rune]int{}
	}
	return ts, nil
}

// loadFallbacks reads the fallback fonts that are installed.
func (ts *typeset) loadFallbacks() {
	for i, p := range ts.pending {
		b, err := os.ReadFile(p)
		if err != nil {
			continue // not installed: its characters are reported, not lost
		}
		f, err := newFace(fmt.Sprintf("Fallback%d", i), p, b, b)
		if err != nil {
			continue
		}
		ts.faces = append(ts.faces, f)
	}
	ts.pending = nil
}

// faceOf returns the index of the first face with a glyph for r in the
// style, or -1. The PDF library reads only the Basic Multilingual Plane of
// a font, so characters beyond it have no face.
func (ts *typeset) faceOf(r rune, style int) int {
	if k, ok := ts.which[style][r]; ok {
		return k
	}
	k := -1
	if r > 0 && r <= 0xFFFF && !unicode.IsControl(r) {
		for pass := 0; pass < 2 && k < 0; pass++ {
			if pass == 1 {
				if len(ts.pending) == 0 {
					break
				}
				ts.loadFallbacks()
			}
			for i, f := range ts.faces {
				if g, err := f.font[style].GlyphIndex(&ts.buf, r); err == nil && g != 0 {
					k = i
					break
				}
			}
		}
	}
	ts.which[style][r] = k
	return k
}

// adv is the advance width of r in face k, in thousandths of the font
// size, rounded as the PDF library rounds it.
func (ts *typeset) adv(k int, style int, r rune) float64 {
	key := widthKey{k, style, r}
	if w, ok := ts.width[key]; ok {
		return w
	}
	f := ts.faces[k]
	g, err := f.font[style].GlyphIndex(&ts.buf, r)
	w := 0.0
	if err == nil && g != 0 {
		ppem := fixed.Int26_6(f.upem[style] * 64)
		if a, err := f.font[style].GlyphAdvance(&ts.buf, g, ppem, 0); err == nil {
			w = math.Round(float64(a) / 64 * 1000 / f.upem[style])
		}
	}
	ts.width[key] = w
	return w
}

// glyph is one printed character (or the bracketed code point standing
// for an unprintable one) with its face and width.
type glyph struct {
	text  string
	face  int
	width float64 // thousandths of the font size
	space bool
	// breakAfter allows a line break after it (a space or an ideograph).
	breakAfter bool
	newline    bool
}

// shape turns s into glyphs, choosing each character's face and
// replacing characters no face has.
func (ts *typeset) shape(s string, style int) []glyph {
	out := make([]glyph, 0, len(s))
	for _, r := range s {
		switch r {
		case '\r':
			continue
		case '\n':
			out = append(out, glyph{newline: true})
			continue
		case '\t':
			r = ' '
		}
		k := ts.faceOf(r, style)
		if k < 0 {
			ts.missing[r] = true
			rep := fmt.Sprintf("[U+%04X]", r)
			w := 0.0
			for _, c := range rep {
				w += ts.adv(0, style, c)
			}
			out = append(out, glyph{text: rep, face: 0, width: w})
			continue
		}
		g := glyph{text: string(r), face: k, width: ts.adv(k, style, r)}
		switch {
		case unicode.IsSpace(r):
			g.space, g.breakAfter = true, true
		case wide(r), r == '-', r == '/':
			// A line may break after a hyphen or slash, as in a long
			// curve name, before it breaks inside a word.
			g.breakAfter = true
		}
		out = append(out, g)
	}
	// A line may also break before an ideograph.
	for i := 0; i+1 < len(out); i++ {
		if n := []rune(out[i+1].text); len(n) == 1 && wide(n[0]) {
			out[i].breakAfter = true
		}
	}
	return out
}

// wide reports a character of a script written without spaces, where a
// line may break between any two characters.
func wide(r rune) bool {
	return unicode.In(r, unicode.Han, unicode.Hiragana, unicode.Katakana, unicode.Hangul) ||
		(r >= 0x3000 && r <= 0x303F) || (r >= 0xFF00 && r <= 0xFFEF)
}

// Unprintable returns the characters no font had, in code-point order.
func (ts *typeset) unprintable() []rune {
	out := make([]rune, 0, len(ts.missing))
	for r := range ts.missing {
		out = append(out, r)
	}
	sort.Slice(out, func(i, j int) bool { return out[i] < out[j] })
	return out
}
