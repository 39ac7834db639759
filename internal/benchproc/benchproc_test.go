package benchproc

import "testing"

func TestMinMedMax(t *testing.T) {
	cases := []struct {
		v    []float64
		want string
	}{
		{nil, "n/a"},
		{[]float64{3}, "3/3/3"},
		{[]float64{4, 1, 3}, "1/3/4"},
		{[]float64{4, 1, 3, 2}, "1/2.5/4"},
	}
	for _, c := range cases {
		if got := MinMedMax(c.v, "%g"); got != c.want {
			t.Errorf("MinMedMax(%v) = %q, want %q", c.v, got, c.want)
		}
	}
}
