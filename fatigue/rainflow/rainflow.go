package rainflow

import "math"

// Cycle is one counted cycle of a load (or stress, or strain) history.
type Cycle struct {
	// Range is the peak-to-valley distance, |peak − valley|, never negative.
	Range float64
	// Mean is (peak + valley)/2.
	Mean float64
	// Count is 1 for a full cycle and 0.5 for a half cycle.
	Count float64
}

// blockLen is the number of samples scanned for turning points at a time;
// the turning points of one block are kept in a buffer of this length.
const blockLen = 2048

// Count counts the cycles of series and appends them to dst, returning the
// extended slice (pass dst[:0] to reuse a buffer).
//
// The series is first reduced to its turning points with the hysteresis
// gate (see TurningPoints), then counted by the rainflow rule of ASTM
// E1049-85 (reapproved 2017) §5.4.4. Cycles come in the order the standard
// counts them: the full cycles (step 4) and the half cycles of the ranges
// that contain the starting point (step 5) as they close, then the residue,
// oldest range first, as half cycles (step 6). Count(nil, s, g) gives the
// same cycles, bit for bit and in the same order, as a Counter fed s in any
// chunks.
//
// Count allocates only when dst must grow or when the residue is longer
// than a small stack buffer.
func Count(dst []Cycle, series []float64, gate float64) []Cycle {
	var buf [blockLen]float64
	var stackBuf [64]float64
	stack := stackBuf[:0]
	sc := scanner{gate: normGate(gate)}
	for len(series) > 0 {
		m := min(len(series), blockLen)
		k := sc.scan(series[:m], buf[:])
		stack, dst = push(stack, buf[:k], dst)
		series = series[m:]
	}
	if t, ok := sc.pending(); ok {
		buf[0] = t
		stack, dst = push(stack, buf[:1], dst)
	}
	return residue(stack, dst)
}

// TurningPoints appends the turning points of series to dst and returns the
// extended slice.
//
// Hysteresis gate: the first sample that is not NaN is the first turning
// point. The direction of the first leg is set once the signal has moved
// away from it by more than gate (strictly). From then on a running extreme
// is kept (the highest sample of a rising leg, the lowest of a falling one),
// and a reversal is accepted only once the signal has moved back from the
// running extreme by more than gate (strictly greater): the running extreme
// is then a turning point, and the sample that crossed the gate starts the
// new leg as its running extreme. With gate 0 every strict reversal counts.
// Equal consecutive values are never a reversal: a plateau is one turning
// point, at the sample that reached it first.
//
// End of the record: the running extreme of the last leg is the last
// turning point. The samples after it stayed within the gate of it (else a
// reversal would have been accepted), so they are not a cycle by the gate's
// own rule and are dropped; the last sample itself is the last turning point
// whenever it is the extreme of its leg. If the signal never leaves the
// band around the first sample, the first sample is the only turning point.
// So consecutive turning points alternate in direction and always differ by
// more than gate.
//
// Gate: the gate must be >= 0; a negative or NaN gate is read as 0 (count
// every strict reversal, the conservative choice). Samples: NaN samples are
// skipped (they never become a turning point nor move a running extreme);
// −0 is returned as +0; infinities are taken as values, so they give
// infinite ranges and possibly NaN means. Callers validate their data; the
// counter never panics or loops on any input.
func TurningPoints(dst, series []float64, gate float64) []float64 {
	var buf [blockLen]float64
	sc := scanner{gate: normGate(gate)}
	for len(series) > 0 {
		m := min(len(series), blockLen)
		k := sc.scan(series[:m], buf[:])
		dst = append(dst, buf[:k]...)
		series = series[m:]
	}
	if t, ok := sc.pending(); ok {
		dst = append(dst, t)
	}
	return dst
}

// push feeds turning points to the rainflow stack (ASTM E1049-85 §5.4.4,
// steps 1 to 5) and appends the cycles that close. The stack holds the
// points not yet discarded; its first element is the starting point S.
func push(stack, tps []float64, cycles []Cycle) ([]float64, []Cycle) {
	for _, p := range tps {
		stack = append(stack, p)
		for n := len(stack); n >= 3; n = len(stack) {
			a, b, c := stack[n-3], stack[n-2], stack[n-1]
			x := math.Abs(c - b) // range X, the most recent
			y := math.Abs(b - a) // range Y, the one before it
			if x < y {
				break
			}
			if n == 3 {
				// Y contains the starting point: half a cycle, discard the
				// first point of Y, the second becomes the start (step 5).
				cycles = append(cycles, Cycle{Range: y, Mean: (a + b) * 0.5, Count: 0.5})
				stack[0], stack[1] = b, c
				stack = stack[:2]
			} else {
				// One cycle; discard both points of Y (step 4).
				cycles = append(cycles, Cycle{Range: y, Mean: (a + b) * 0.5, Count: 1})
				stack[n-3] = c
				stack = stack[:n-2]
			}
		}
	}
	return stack, cycles
}

// residue counts every range left on the stack as half a cycle (step 6),
// oldest first.
func residue(stack []float64, cycles []Cycle) []Cycle {
	for i := 1; i < len(stack); i++ {
		a, b := stack[i-1], stack[i]
		cycles = append(cycles, Cycle{Range: math.Abs(b - a), Mean: (a + b) * 0.5, Count: 0.5})
	}
	return cycles
}

// Counter is the streaming form of Count: it takes a record chunk by chunk
// and gives exactly the cycles Count gives on the concatenated record (same
// order, bit-identical values), whatever the chunk sizes. Its memory is the
// rainflow stack (the residue, short in practice), a fixed turning-point
// buffer and the cycles counted; Add allocates only when these must grow.
//
// The zero Counter is ready to use with gate 0. A Counter is not safe for
// concurrent use.
type Counter struct {
	sc       scanner
	buf      []float64
	stack    []float64
	cycles   []Cycle
	finished bool
}

// NewCounter returns a Counter with the hysteresis gate described at
// TurningPoints (a negative or NaN gate is read as 0).
func NewCounter(gate float64) *Counter {
	return &Counter{sc: scanner{gate: normGate(gate)}}
}

// Add reads the next chunk of the record. It panics if called after Finish
// without a Reset in between.
func (c *Counter) Add(chunk []float64) {
	if c.finished {
		panic("rainflow: Counter.Add after Finish (call Reset first)")
	}
	if c.buf == nil {
		c.buf = make([]float64, blockLen)
	}
	for len(chunk) > 0 {
		m := min(len(chunk), blockLen)
		k := c.sc.scan(chunk[:m], c.buf)
		c.stack, c.cycles = push(c.stack, c.buf[:k], c.cycles)
		chunk = chunk[m:]
	}
}

// Cycles returns the cycles counted so far: the full cycles closed so far,
// with the half cycles that §5.4.4 step 5 counts when a range containing
// the starting point is exceeded, in counting order. The residue is not in
// it until Finish. The slice is a read-only view into the Counter, valid
// until the next Add, Finish or Reset.
func (c *Counter) Cycles() []Cycle {
	return c.cycles[:len(c.cycles):len(c.cycles)]
}

// Finish ends the record: the running extreme of the last leg becomes the
// last turning point, the residue is counted as half cycles, and all the
// cycles of the record are returned (the same as Count). The slice belongs
// to the Counter and is valid until the next Reset. Calling Finish again
// returns the same cycles; call Reset to count another record.
func (c *Counter) Finish() []Cycle {
	if !c.finished {
		if t, ok := c.sc.pending(); ok {
			c.stack, c.cycles = push(c.stack, []float64{t}, c.cycles)
		}
		c.cycles = residue(c.stack, c.cycles)
		c.stack = c.stack[:0]
		c.finished = true
	}
	return c.cycles[:len(c.cycles):len(c.cycles)]
}

// Reset makes the Counter ready for a new record with the same gate,
// keeping its buffers.
func (c *Counter) Reset() {
	c.sc = scanner{gate: c.sc.gate}
	c.stack = c.stack[:0]
	c.cycles = c.cycles[:0]
	c.finished = false
}
