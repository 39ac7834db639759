package rainflow

import "math"

// The turning-point pass. One scanner serves Count, TurningPoints and the
// Counter, so the batch and streaming forms run the same instructions on
// the same samples and give bit-identical turning points.
//
// Turning points leave the scanner normalised: a peak p as +p and a valley
// v as −v. Peaks and valleys alternate, so the rainflow stage can compare
// two points of the same kind with one comparison, and recover the signs
// from the kind of the first point (scanner.firstPeak).

// Phases of the scanner.
const (
	phaseNone = iota // no sample read yet (or only NaN samples)
	phaseOpen        // first sample read, direction not yet known
	phaseLeg         // direction known: see scanner.up
)

const (
	// blockLen is the number of samples scanned at a time; the turning
	// points of one block fit a buffer of this length. A power of two: the
	// buffer is indexed modulo blockLen, which needs no bounds check.
	blockLen = 2048
	// fastBlock is the number of samples the smooth-signal path tests at
	// once.
	fastBlock = 8
	// kernelRun is how many samples the branch-free kernel takes after the
	// smooth path has found a block that might hold a reversal, before the
	// smooth path is tried again.
	kernelRun = 64
)

const signBit = 1 << 63

// scanner is the state of the turning-point pass between calls.
type scanner struct {
	gate float64
	// phaseOpen: first is the first sample, hi = first+gate, lo =
	// first−gate. phaseLeg: up is 1 on a rising leg and 0 on a falling one;
	// hi and lo are the two thresholds of the leg: rising, hi is the running
	// maximum and lo = hi−gate; falling, lo is the running minimum and
	// hi = lo+gate. A sample above hi or below lo is an event.
	first, hi, lo float64
	phase         uint8
	up            int
	// firstPeak tells whether the first turning point is a peak (known once
	// the direction of the first leg is).
	firstPeak bool
}

// normGate returns the gate the scanner uses: a negative or NaN gate is
// read as 0.
func normGate(gate float64) float64 {
	if gate > 0 {
		return gate
	}
	return 0
}

// pending returns the running extreme of the leg in progress, normalised,
// which is the last turning point if the record ends here. In phaseOpen it
// returns the first sample, the only turning point of such a record, as it
// is.
func (sc *scanner) pending() (float64, bool) {
	switch sc.phase {
	case phaseOpen:
		return sc.first + 0, true
	case phaseLeg:
		if sc.up != 0 {
			return sc.hi + 0, true
		}
		return -(sc.lo + 0), true
	}
	return 0, false
}

// scan reads the samples s (at most blockLen of them) and writes the
// normalised turning points they confirm to out, returning how many. Every
// sample confirms at most one turning point.
//
// Three paths share the work, and each gives exactly what the rule of
// TurningPoints gives sample by sample, so the result does not depend on
// where calls, blocks or runs begin:
//
//   - the smooth path tests fastBlock samples at once: on a rising leg, if
//     no sample of the block lies below (the largest of the running maximum
//     and the block's samples) − gate, the block holds no reversal and that
//     largest value is the new running maximum (the falling leg is the
//     mirror image). The test is a sufficient condition for the
//     sample-by-sample rule to find no reversal, evaluated with the same
//     rounding (x − gate is monotone in x), and min and max propagate NaN,
//     so a block holding NaN always fails it;
//   - the kernel takes kernelRun samples one by one without a branch on the
//     data: the two thresholds are kept as bits and replaced by conditional
//     moves, and every sample writes the candidate turning point and
//     advances the count by 0 or 1. Float comparisons with NaN are false,
//     so NaN samples change nothing;
//   - the open phase (before the first leg has a direction) is a plain
//     loop.
//
// The sign of a zero turning point may depend on the path (min and max
// order −0 below +0, the kernel keeps a sample's bits); the rainflow stage
// does not see it (see stack), and TurningPoints reports −0 as +0.
func (sc *scanner) scan(s []float64, out *[blockLen]float64) int {
	g := sc.gate
	hi, lo := sc.hi, sc.lo
	up := sc.up
	n := len(s)
	i, k := 0, 0

	switch sc.phase {
	case phaseLeg:
		goto leg
	case phaseOpen:
		goto open
	}
	// phaseNone: the first sample that is not NaN is the first turning
	// point; it is written when the first leg shows whether it is a peak.
	for i < n {
		x := s[i]
		i++
		if x == x {
			sc.first = x
			hi, lo = x+g, x-g
			goto open
		}
	}
	return k

open:
	for i < n {
		x := s[i]
		i++
		if x > hi {
			// Rising first leg: the first sample is a valley.
			sc.firstPeak = false
			out[k&(blockLen-1)] = -(sc.first + 0)
			k++
			hi, lo, up = x, x-g, 1
			goto leg
		}
		if x < lo {
			sc.firstPeak = true
			out[k&(blockLen-1)] = sc.first + 0
			k++
			hi, lo, up = x+g, x, 0
			goto leg
		}
	}
	sc.hi, sc.lo, sc.phase = hi, lo, phaseOpen
	return k

leg:
	for i < n {
		// Smooth path.
		blk := s[i:]
		for len(blk) >= fastBlock {
			b := (*[fastBlock]float64)(blk)
			mn := min(min(min(b[0], b[1]), min(b[2], b[3])), min(min(b[4], b[5]), min(b[6], b[7])))
			// The largest sample, negated: the smallest negation costs
			// half as much as Go's max.
			nmx := min(min(min(-b[0], -b[1]), min(-b[2], -b[3])), min(min(-b[4], -b[5]), min(-b[6], -b[7])))
			if up != 0 {
				h := -min(-hi, nmx)
				if !(mn >= h-g) {
					break
				}
				hi = h
			} else {
				l := min(lo, mn)
				if !(-nmx <= l+g) {
					break
				}
				lo = l
			}
			blk = blk[fastBlock:]
		}
		// The other threshold, as the kernel sets it at an extension.
		if up != 0 {
			lo = hi - g
		} else {
			hi = lo + g
		}
		i = n - len(blk)

		// Kernel.
		run := blk[:min(len(blk), kernelRun)]
		i += len(run)
		k, hi, lo, up = kernel(run, out, k, g, hi, lo, up)
	}
	sc.hi, sc.lo, sc.up, sc.phase = hi, lo, up, phaseLeg
	return k
}

// kernel is the branch-free path of scan over run, from the thresholds hi
// and lo and the direction up, writing turning points to out from index k.
// It returns the new k, thresholds and direction. It is a function of its
// own so that its loop keeps every value in a register.
//
//go:noinline
func kernel(run []float64, out *[blockLen]float64, k int, g, hi, lo float64, up int) (int, float64, float64, int) {
	hiB, loB := math.Float64bits(hi), math.Float64bits(lo)
	// eB is the running extreme, normalised: the candidate turning point.
	eB := loB ^ signBit
	if up != 0 {
		eB = hiB
	}
	_ = out[0] // one nil check, outside the loop
	for _, v := range run {
		hiT := math.Float64frombits(hiB)
		loT := math.Float64frombits(loB)
		vb := math.Float64bits(v)
		pb := math.Float64bits(v + g)
		mb := math.Float64bits(v - g)
		out[k&(blockLen-1)] = math.Float64frombits(eB)
		// Above the upper threshold the leg is rising, below the lower one
		// it is falling; a change of direction is a reversal, which
		// confirms the candidate.
		nu := up
		if v > hiT {
			hiB, loB, eB, nu = vb, mb, vb, 1
		}
		if v < loT {
			hiB, loB, eB, nu = pb, vb, vb^signBit, 0
		}
		k += up ^ nu
		up = nu
	}
	return k, math.Float64frombits(hiB), math.Float64frombits(loB), up
}
