package rainflow

// Cycle is one counted cycle of a load (or stress, or strain) history.
type Cycle struct {
	// Range is the peak-to-valley distance, |peak − valley|, never negative.
	Range float64
	// Mean is (peak + valley)/2.
	Mean float64
	// Count is 1 for a full cycle and 0.5 for a half cycle.
	Count float64
}

// Count counts the cycles of series and appends them to dst, returning the
// extended slice (pass dst[:0] to reuse a buffer).
//
// The series is first reduced to its turning points with the hysteresis
// gate (see TurningPoints), then counted by the rainflow rule of ASTM
// E1049-85 (reapproved 2017) §5.4.4. Cycles come in the order the standard
// counts them: the full cycles (step 4) and the half cycles of the ranges
// that contain the starting point (step 5) as they close, then the residue,
// oldest range first, as half cycles (step 6). The comparison X ≥ Y of
// step 3 is made exactly, on the points, not on rounded ranges. Count gives
// the same cycles, bit for bit and in the same order, as a Counter fed the
// series in any chunks.
//
// Count allocates only to grow dst (it makes room for the most cycles a
// block of turning points could close) or when the residue outgrows a
// small buffer.
func Count(dst []Cycle, series []float64, gate float64) []Cycle {
	var buf [blockLen]float64
	var st stack
	var stackBuf [256]float64
	st.s = stackBuf[:]
	sc := scanner{gate: normGate(gate)}
	for len(series) > 0 {
		m := min(len(series), blockLen)
		k := sc.scan(series[:m], &buf)
		st, dst = st.push(&sc, buf[:k], dst)
		series = series[m:]
	}
	_, dst = st.finish(&sc, dst)
	return dst
}

// TurningPoints appends the turning points of series to dst and returns the
// extended slice.
//
// Hysteresis gate: the first sample that is not NaN is the first turning
// point. The direction of the first leg is set once the signal has moved
// away from it by more than gate (strictly): x > first+gate or
// x < first−gate. From then on a running extreme e is kept (the highest
// sample of a rising leg, the lowest of a falling one), and a reversal is
// accepted only once the signal has moved back from it by more than gate
// (strictly): x < e−gate on a rising leg, x > e+gate on a falling one, as
// computed in float64. The running extreme is then a turning point, and the
// sample that crossed the gate starts the new leg as its running extreme.
// With gate 0 every strict reversal counts. Equal consecutive values are
// never a reversal: a plateau is one turning point.
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
	peak, started := false, false // whether the next turning point is a peak
	for len(series) > 0 {
		m := min(len(series), blockLen)
		k := sc.scan(series[:m], &buf)
		if k > 0 && !started {
			peak, started = sc.firstPeak, true
		}
		for _, v := range buf[:k] {
			if !peak {
				v = -v
			}
			dst = append(dst, v+0) // −0 as +0
			peak = !peak
		}
		series = series[m:]
	}
	if t, ok := sc.pending(); ok {
		if sc.phase == phaseLeg && sc.up == 0 {
			t = -t
		}
		dst = append(dst, t)
	}
	return dst
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
	buf      *[blockLen]float64
	st       stack
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
		c.buf = new([blockLen]float64)
	}
	for len(chunk) > 0 {
		m := min(len(chunk), blockLen)
		k := c.sc.scan(chunk[:m], c.buf)
		c.st, c.cycles = c.st.push(&c.sc, c.buf[:k], c.cycles)
		chunk = chunk[m:]
	}
}

// Cycles returns the cycles counted so far, in counting order: the full
// cycles closed so far, with the half cycles that §5.4.4 step 5 counts when
// a range holding the starting point is exceeded. The residue is not in it
// until Finish. The slice is a read-only view into the Counter, valid until
// the next Add, Finish or Reset.
func (c *Counter) Cycles() []Cycle {
	return c.cycles[:len(c.cycles):len(c.cycles)]
}

// Pending is the number of cycles counted and not yet drained.
func (c *Counter) Pending() int { return len(c.cycles) }

// Drain returns the cycles counted since the last Drain (or the start), in
// counting order, and forgets them, so that a long record can be counted
// in bounded memory: the caller stores or sums each part as it comes.
// Finish then returns only the cycles not drained. The slice is a view
// into the Counter, valid until the next Add, Drain, Finish or Reset.
func (c *Counter) Drain() []Cycle {
	out := c.cycles[:len(c.cycles):len(c.cycles)]
	c.cycles = c.cycles[:0]
	return out
}

// Finish ends the record: the running extreme of the last leg becomes the
// last turning point, the residue is counted as half cycles, and all the
// cycles of the record are returned (the same as Count), less any drained
// (see Drain). The slice belongs
// to the Counter and is valid until the next Reset. Calling Finish again
// returns the same cycles; call Reset to count another record.
func (c *Counter) Finish() []Cycle {
	if !c.finished {
		c.st, c.cycles = c.st.finish(&c.sc, c.cycles)
		c.finished = true
	}
	return c.cycles[:len(c.cycles):len(c.cycles)]
}

// Reset makes the Counter ready for a new record with the same gate,
// keeping its buffers.
func (c *Counter) Reset() {
	c.sc = scanner{gate: c.sc.gate}
	c.st = c.st.reset()
	c.cycles = c.cycles[:0]
	c.finished = false
}
