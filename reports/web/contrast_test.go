package web

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"testing"
)

// TestContrast: every text colour pair of the pages' style sheet passes
// WCAG 2 AA (4.5:1; 3:1 for the focus ring, a non-text indicator),
// computed from the file with the WCAG 2 relative luminance (sRGB
// linearised, 0.2126 R + 0.7152 G + 0.0722 B; ratio (L1 + 0.05) /
// (L2 + 0.05); W3C WCAG 2.1, definitions of relative luminance and
// contrast ratio, from memory). Check value: black on white is 21:1, the
// standard's maximum.
func TestContrast(t *testing.T) {
	css, err := pageFiles.ReadFile("assets/style.css")
	if err != nil {
		t.Fatal(err)
	}
	vars := map[string]string{}
	for _, m := range regexp.MustCompile(`--([a-z-]+):\s*(#[0-9a-fA-F]{6})`).FindAllStringSubmatch(string(css), -1) {
		vars[m[1]] = m[2]
	}
	if got := ratio(t, "#000000", "#ffffff"); math.Abs(got-21) > 1e-9 {
		t.Fatalf("black on white: %v, want 21", got)
	}
	for _, p := range []struct {
		fg, bg string
		min    float64
	}{
		{"ink", "paper", 4.5}, {"muted", "paper", 4.5}, {"link", "paper", 4.5}, {"#ffffff", "band", 4.5},
		{"fit-ink", "fit-bg", 4.5}, {"watch-ink", "watch-bg", 4.5}, {"hold-ink", "hold-bg", 4.5},
		{"withdrawn-ink", "withdrawn-bg", 4.5}, {"hold-ink", "#ffffff", 4.5}, {"band", "#ffffff", 4.5},
		{"ink", "#e9edf2", 4.5}, {"ink", "#eef1f5", 4.5}, {"muted", "#eef1f5", 4.5},
		{"focus", "paper", 3},
	} {
		color := func(n string) string {
			if n[0] == '#' {
				return n
			}
			c, ok := vars[n]
			if !ok {
				t.Fatalf("no --%s in the style sheet", n)
			}
			return c
		}
		if r := ratio(t, color(p.fg), color(p.bg)); r < p.min {
			t.Errorf("%s on %s: %.2f:1, below %.1f:1", p.fg, p.bg, r, p.min)
		}
	}
}

func ratio(t *testing.T, a, b string) float64 {
	la, lb := luminance(t, a), luminance(t, b)
	return (math.Max(la, lb) + 0.05) / (math.Min(la, lb) + 0.05)
}

func luminance(t *testing.T, hex string) float64 {
	var c [3]float64
	for i := range c {
		v, err := strconv.ParseUint(hex[1+2*i:3+2*i], 16, 8)
		if err != nil {
			t.Fatal(fmt.Errorf("colour %s: %w", hex, err))
		}
		s := float64(v) / 255
		if s <= 0.03928 {
			c[i] = s / 12.92
		} else {
			c[i] = math.Pow((s+0.055)/1.055, 2.4)
		}
	}
	return 0.2126*c[0] + 0.7152*c[1] + 0.0722*c[2]
}
