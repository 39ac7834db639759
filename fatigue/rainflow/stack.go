package rainflow

import (
	"math"
	"slices"
)

// stack is the rainflow stack of ASTM E1049-85 §5.4.4: the turning points
// read and not yet discarded, normalised (a peak p as +p, a valley v as −v).
// The points are s[base:top]; s[base] is the starting point S. Step 5
// discards the starting point by moving base up, so the points slide up the
// buffer and are moved down when the buffer's end is reached.
//
// Normalised, the comparison of step 3, X ≥ Y with Y the range (a, b) and
// X the range (b, c), is c ≥ a: a and c are of the same kind, and in exact
// arithmetic |c − b| ≥ |b − a| holds exactly when c lies at or beyond a.
// The comparison is made on the points themselves, so it is exact, and it
// needs no subtraction. The range of (a, b) is a + b and its mean is
// ±(a − b)/2, the sign being the kind of a, which is the kind of the top.
type stack struct {
	s         []float64
	base, top int
	// sign is signBit when the top point is a valley and 0 when it is a
	// peak.
	sign  uint64
	begun bool
}

// reset empties the stack, keeping its buffer.
func (st stack) reset() stack {
	return stack{s: st.s}
}

// push reads the normalised turning points tps (steps 1 to 5), appends the
// cycles that close to cycles and returns the new stack and cycles. (The
// stack goes by value so that a buffer on the caller's stack frame stays
// there.)
func (st stack) push(sc *scanner, tps []float64, cycles []Cycle) (stack, []Cycle) {
	if len(tps) == 0 {
		return st, cycles
	}
	if !st.begun {
		// The first push turns sign to the kind of the first point.
		st.begun = true
		st.sign = 0
		if sc.firstPeak {
			st.sign = signBit
		}
	}
	for len(tps) > 0 {
		if st.top == len(st.s) {
			st.s, st.base, st.top = makeRoom(st.s, st.base, st.top)
		}
		piece := tps[:min(len(tps), len(st.s)-st.top)]
		tps = tps[len(piece):]
		// Room for every cycle the piece can close: each one discards at
		// least one point.
		n0 := len(cycles)
		cycles = slices.Grow(cycles, st.top-st.base+len(piece))
		var m int
		st.base, st.top, st.sign, m = pushRun(st.s, st.base, st.top, st.sign, piece, cycles[n0:cap(cycles)])
		cycles = cycles[:n0+m]
	}
	return st, cycles
}

// pushRun is the loop of push: it pushes tps onto s[base:top], which has
// room for them, and writes the cycles that close to out, which has room
// for them. It calls nothing, so its loop keeps every value in a register.
func pushRun(s []float64, base, top int, sign uint64, tps []float64, out []Cycle) (int, int, uint64, int) {
	// h is ±0.5, the sign being the kind of the top point: the mean of the
	// range (a, b) below the top is (a − b)·h.
	h := math.Float64frombits(0x3FE0000000000000 ^ sign)
	m := 0
	for _, c := range tps {
		s[top] = c
		top++
		h = -h
		for top-base >= 3 {
			a := s[top-3]
			if c < a { // X < Y: read the next point (step 3a)
				break
			}
			b := s[top-2]
			mean := (a-b)*h + 0
			if top-base == 3 {
				// Y holds the starting point: half a cycle; its first point
				// is discarded and b is the new start (step 5).
				out[m] = Cycle{Range: a + b, Mean: mean, Count: 0.5}
				base++
			} else {
				// One cycle; a and b are discarded (step 4).
				out[m] = Cycle{Range: a + b, Mean: mean, Count: 1}
				s[top-3] = c
				top -= 2
			}
			m++
		}
	}
	return base, top, math.Float64bits(h) & signBit, m
}

// makeRoom returns the stack with free room after top: moved down if the
// points have slid up far enough, else in a buffer twice as large.
func makeRoom(s []float64, base, top int) ([]float64, int, int) {
	if base > 0 && base >= len(s)/2 {
		copy(s, s[base:top])
		return s, 0, top - base
	}
	t := make([]float64, max(2*len(s), 256))
	copy(t, s[base:top])
	return t, 0, top - base
}

// finish ends the record: the running extreme of the last leg is read as
// the last turning point, then every range left on the stack is counted as
// half a cycle, oldest first (step 6). The stack is then empty.
func (st stack) finish(sc *scanner, cycles []Cycle) (stack, []Cycle) {
	if t, ok := sc.pending(); ok && sc.phase == phaseLeg {
		one := [1]float64{t}
		st, cycles = st.push(sc, one[:], cycles)
	}
	s, base, top := st.s, st.base, st.top
	sign := st.sign // kind of s[top-1]
	if (top-base)%2 == 0 {
		sign ^= signBit // kind of s[base]
	}
	for i := base; i+1 < top; i++ {
		a, b := s[i], s[i+1]
		mean := math.Float64frombits(math.Float64bits((a-b)*0.5)^sign) + 0
		cycles = append(cycles, Cycle{Range: a + b, Mean: mean, Count: 0.5})
		sign ^= signBit
	}
	return st.reset(), cycles
}
