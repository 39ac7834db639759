package sn

import (
	"math"
	"os"
	"testing"
)

// FuzzParseLibrary checks that ParseLibrary never panics and that every
// library it accepts validates and evaluates to sensible numbers.
func FuzzParseLibrary(f *testing.F) {
	if data, err := os.ReadFile("../../configs/curves.yaml"); err == nil {
		f.Add(data)
	}
	f.Add([]byte(minimalLibrary))
	f.Add([]byte(""))
	f.Add([]byte("curves: [{name: x, form: log_linear}]"))
	f.Add([]byte("rupture: [{name: r, a: 1, b: .inf, s_ult_mpa: 1}]"))
	f.Add([]byte("&a [*a]"))
	f.Fuzz(func(t *testing.T, data []byte) {
		lib, err := ParseLibrary(data)
		if err != nil {
			if lib != nil {
				t.Fatal("library returned with an error")
			}
			return
		}
		if err := lib.Validate(); err != nil {
			t.Fatalf("accepted library does not validate: %v", err)
		}
		for _, c := range lib.Curves {
			if _, err := lib.Curve(c.Name); err != nil {
				t.Fatal(err)
			}
			prev := math.Inf(1)
			for _, s := range []float64{0.1, 1, 10, 50, 100, 500, 1000, 5000} {
				n := c.N(s)
				if math.IsNaN(n) || n < 0 || n > prev {
					t.Fatalf("curve %q: N(%v) = %v after %v", c.Name, s, n, prev)
				}
				prev = n
				for _, ms := range []MeanStress{MeanStressNone, MeanStressGoodman} {
					if n, err := c.CyclesToFailure(s, -s, ms); err == nil && (math.IsNaN(n) || n < 0) {
						t.Fatalf("curve %q %s: N = %v", c.Name, ms, n)
					}
				}
			}
		}
		for _, r := range lib.Ruptures {
			if h := r.Hours(-0.5 * r.SUltMPa); math.IsNaN(h) || h < 0 {
				t.Fatalf("rupture %q: t_r = %v", r.Name, h)
			}
		}
	})
}
