package rainflow

import (
	"fmt"
	"math"
	"slices"
)

// This file holds a second counter, written another way, that the tests
// compare the package against: a plain sample-by-sample turning-point pass
// with an explicit direction variable, and the four-point rainflow method
// (Amzallag, Gerey, Robert & Bahuaud, "Standardization of the rainflow
// counting method for fatigue analysis", Int. J. Fatigue 16, 1994, 287–293)
// with the residue closed as half cycles. McInnes & Meehan ("Equivalence of
// four-point and three-point rainflow cycle counting algorithms", Int. J.
// Fatigue 30, 2008, 547–559) prove that it counts the same cycles as the
// three-point rule of ASTM E1049-85 §5.4.4.

// refTurningPoints is the hysteresis gate of TurningPoints, sample by
// sample.
func refTurningPoints(series []float64, gate float64) []float64 {
	if !(gate > 0) {
		gate = 0
	}
	var tps []float64
	dir := 0 // 0 not yet known, +1 rising, -1 falling
	var first, ext float64
	started := false
	for _, x := range series {
		if math.IsNaN(x) {
			continue
		}
		if !started {
			started = true
			first = x
			tps = append(tps, x)
			continue
		}
		switch dir {
		case 0:
			if x > first+gate {
				dir, ext = +1, x
			} else if x < first-gate {
				dir, ext = -1, x
			}
		case +1:
			if x > ext {
				ext = x
			} else if x < ext-gate {
				tps = append(tps, ext)
				dir, ext = -1, x
			}
		case -1:
			if x < ext {
				ext = x
			} else if x > ext+gate {
				tps = append(tps, ext)
				dir, ext = +1, x
			}
		}
	}
	if dir != 0 {
		tps = append(tps, ext)
	}
	for i := range tps {
		tps[i] += 0 // -0 is reported as +0
	}
	return tps
}

// refFourPoint counts the turning points tps by the four-point method: for
// four consecutive points, the inner range is a cycle when it is no larger
// than both outer ranges; what is left is the residue, counted as half
// cycles.
func refFourPoint(tps []float64) []Cycle {
	var out []Cycle
	var st []float64
	for _, p := range tps {
		st = append(st, p)
		for len(st) >= 4 {
			n := len(st)
			p1, p2, p3, p4 := st[n-4], st[n-3], st[n-2], st[n-1]
			inner := math.Abs(p2 - p3)
			if inner <= math.Abs(p1-p2) && inner <= math.Abs(p3-p4) {
				out = append(out, Cycle{Range: inner, Mean: (p2 + p3) / 2, Count: 1})
				st = append(st[:n-3], p4)
				continue
			}
			break
		}
	}
	for i := 0; i+1 < len(st); i++ {
		out = append(out, Cycle{Range: math.Abs(st[i] - st[i+1]), Mean: (st[i] + st[i+1]) / 2, Count: 0.5})
	}
	return out
}

// refCount is the whole second counter.
func refCount(series []float64, gate float64) []Cycle {
	return refFourPoint(refTurningPoints(series, gate))
}

// binned is a histogram of cycles: total count per (range, mean). Two
// counters agree when their histograms are equal (a full cycle and two half
// cycles of the same range and mean are the same damage).
type binned map[[2]float64]float64

func histogram(cycles []Cycle) binned {
	h := binned{}
	for _, c := range cycles {
		h[[2]float64{c.Range, c.Mean + 0}] += c.Count
	}
	return h
}

// diff lists the bins where a and b disagree, for test messages.
func (a binned) diff(b binned) []string {
	var out []string
	keys := map[[2]float64]bool{}
	for k := range a {
		keys[k] = true
	}
	for k := range b {
		keys[k] = true
	}
	for k := range keys {
		if a[k] != b[k] {
			out = append(out, fmtBin(k, a[k], b[k]))
		}
	}
	slices.Sort(out)
	return out
}

func fmtBin(k [2]float64, a, b float64) string {
	return fmt.Sprintf("range %v mean %v: %v against %v", k[0], k[1], a, b)
}
