package rainflow

// The turning-point pass. One scanner serves Count, TurningPoints and the
// Counter, so the batch and streaming forms run the same instructions on
// the same samples and give bit-identical turning points.

// Phases of the scanner.
const (
	phaseNone = iota // no sample read yet (or only NaN samples)
	phaseOpen        // first turning point read, direction not yet known
	phaseUp          // rising: hi is the running maximum
	phaseDown        // falling: lo is the running minimum
)

const (
	// fastBlock is the number of samples the fast path inspects at once.
	fastBlock = 8
	// slowRun is how many samples are taken one by one after the fast path
	// has found a block that might hold a reversal, before it is tried
	// again: on a busy signal (a reversal every few samples) the block test
	// then costs little, and on a smooth one the fast path resumes soon.
	slowRun = 64
)

// scanner is the state of the turning-point pass between chunks.
type scanner struct {
	gate float64
	// In phaseOpen hi and lo are the thresholds first+gate and first-gate;
	// in phaseUp hi is the running maximum; in phaseDown lo is the running
	// minimum.
	hi, lo float64
	phase  uint8
}

// normGate returns the gate the scanner uses: a negative or NaN gate is
// read as 0.
func normGate(gate float64) float64 {
	if gate > 0 {
		return gate
	}
	return 0
}

// pending returns the running extreme of the leg in progress, which is the
// last turning point if the record ends here, and whether there is one.
func (sc *scanner) pending() (float64, bool) {
	switch sc.phase {
	case phaseUp:
		return sc.hi + 0, true
	case phaseDown:
		return sc.lo + 0, true
	}
	return 0, false
}

// scan reads the samples s and writes the turning points they confirm to
// out, returning how many. Every sample confirms at most one turning point,
// so out must be at least as long as s.
//
// The direction of the leg in progress is carried by where the code runs
// (labels up and down), not by a variable. Each leg first tries a fast path
// on blocks of fastBlock samples: in a rising leg, if no sample of the block
// lies more than the gate below the largest of the running maximum and the
// block's samples, the block holds no reversal and the new running maximum
// is that largest value (the falling leg is the mirror image). This is
// exact, not an approximation: the block test is a sufficient condition for
// the sample-by-sample rule to find no reversal, and it fails on any NaN
// (min and max propagate NaN), which sends the block to the sample-by-sample
// loop, so the result does not depend on where blocks or chunks begin.
// Turning points are written as x+0, which turns -0 into +0, so that the
// sign of a zero never depends on the path taken.
func (sc *scanner) scan(s, out []float64) int {
	gate := sc.gate
	hi, lo := sc.hi, sc.lo
	n := len(s)
	out = out[:n]
	i, k, lim := 0, 0, 0
	var blk []float64

	switch sc.phase {
	case phaseOpen:
		goto open
	case phaseUp:
		goto up
	case phaseDown:
		goto down
	}
	// phaseNone: the first sample that is not NaN is the first turning point.
	for i < n {
		x := s[i]
		i++
		if x == x {
			out[k] = x + 0
			k++
			hi, lo = x+gate, x-gate
			goto open
		}
	}
	return k

open:
	// Direction unknown: the signal must leave (first-gate, first+gate)
	// (strictly) to set it.
	blk = s[i:]
	for len(blk) >= fastBlock {
		b := blk[:fastBlock]
		mx := max(max(max(b[0], b[1]), max(b[2], b[3])), max(max(b[4], b[5]), max(b[6], b[7])))
		mn := min(min(min(b[0], b[1]), min(b[2], b[3])), min(min(b[4], b[5]), min(b[6], b[7])))
		if !(mx <= hi && mn >= lo) {
			break
		}
		blk = blk[fastBlock:]
	}
	i = n - len(blk)
	for j, x := range blk {
		if x > hi {
			hi = x
			i += j + 1
			goto up
		}
		if x < lo {
			lo = x
			i += j + 1
			goto down
		}
	}
	sc.hi, sc.lo, sc.phase = hi, lo, phaseOpen
	return k

up:
	if i >= lim {
		blk = s[i:]
		for len(blk) >= fastBlock {
			b := blk[:fastBlock]
			mx := max(max(max(b[0], b[1]), max(b[2], b[3])), max(max(b[4], b[5]), max(b[6], b[7])))
			mn := min(min(min(b[0], b[1]), min(b[2], b[3])), min(min(b[4], b[5]), min(b[6], b[7])))
			h := max(hi, mx)
			if !(mn >= h-gate) {
				break
			}
			hi = h
			blk = blk[fastBlock:]
		}
		i = n - len(blk)
		lim = min(i+slowRun, n)
	}
	for j, x := range s[i:lim] {
		if x > hi {
			hi = x
			continue
		}
		if x < hi-gate {
			out[k] = hi + 0
			k++
			lo = x
			i += j + 1
			goto down
		}
	}
	i = lim
	if i < n {
		goto up
	}
	sc.hi, sc.phase = hi, phaseUp
	return k

down:
	if i >= lim {
		blk = s[i:]
		for len(blk) >= fastBlock {
			b := blk[:fastBlock]
			mx := max(max(max(b[0], b[1]), max(b[2], b[3])), max(max(b[4], b[5]), max(b[6], b[7])))
			mn := min(min(min(b[0], b[1]), min(b[2], b[3])), min(min(b[4], b[5]), min(b[6], b[7])))
			l := min(lo, mn)
			if !(mx <= l+gate) {
				break
			}
			lo = l
			blk = blk[fastBlock:]
		}
		i = n - len(blk)
		lim = min(i+slowRun, n)
	}
	for j, x := range s[i:lim] {
		if x < lo {
			lo = x
			continue
		}
		if x > lo+gate {
			out[k] = lo + 0
			k++
			hi = x
			i += j + 1
			goto up
		}
	}
	i = lim
	if i < n {
		goto down
	}
	sc.lo, sc.phase = lo, phaseDown
	return k
}
