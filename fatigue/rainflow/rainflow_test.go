package rainflow

import (
	"cmp"
	"encoding/binary"
	"math"
	"slices"
	"testing"

	"pgregory.net/rapid"
)

// ASTM E1049-85 (reapproved 2017), §5.4.4 and its Fig. 6: the series
// −2, 1, −3, 5, −1, 3, −4, 4, −2 counts as ranges 3 (0.5 cycle), 4 (1.5),
// 6 (0.5), 8 (1.0) and 9 (0.5).
//
// Means, by hand, following the steps of §5.4.4 with S the starting point:
//
//	read −2, 1, −3: X = 4 ≥ Y = 3 and Y holds S: half cycle −2..1, mean −0.5
//	read 5:         X = 8 ≥ Y = 4, Y holds S:    half cycle 1..−3, mean −1
//	read −1, 3, −4: X = 7 ≥ Y = 4, S not in Y:   full cycle −1..3, mean 1
//	                X = 9 ≥ Y = 8, Y holds S:    half cycle −3..5, mean 1
//	read 4, −2:     X < Y each time; out of data, the residue 5, −4, 4, −2
//	                gives half cycles 5..−4 (mean 0.5), −4..4 (mean 0) and
//	                4..−2 (mean 1).
func TestASTMExample(t *testing.T) {
	series := []float64{-2, 1, -3, 5, -1, 3, -4, 4, -2}
	want := []Cycle{
		{Range: 3, Mean: -0.5, Count: 0.5},
		{Range: 4, Mean: -1, Count: 0.5},
		{Range: 4, Mean: 1, Count: 1},
		{Range: 8, Mean: 1, Count: 0.5},
		{Range: 9, Mean: 0.5, Count: 0.5},
		{Range: 8, Mean: 0, Count: 0.5},
		{Range: 6, Mean: 1, Count: 0.5},
	}
	got := Count(nil, series, 0)
	if !slices.Equal(got, want) {
		t.Fatalf("Count = %v, want %v", got, want)
	}
	// The table of the standard: total count per range.
	perRange := map[float64]float64{}
	for _, c := range got {
		perRange[c.Range] += c.Count
	}
	table := map[float64]float64{3: 0.5, 4: 1.5, 6: 0.5, 8: 1.0, 9: 0.5}
	if len(perRange) != len(table) {
		t.Errorf("ranges %v, want %v", perRange, table)
	}
	for r, n := range table {
		if perRange[r] != n {
			t.Errorf("range %v: %v cycles, want %v (ASTM E1049-85 §5.4.4)", r, perRange[r], n)
		}
	}
	// The series is its own list of turning points.
	if tp := TurningPoints(nil, series, 0); !slices.Equal(tp, series) {
		t.Errorf("TurningPoints = %v, want %v", tp, series)
	}
	// Streaming, one sample at a time.
	c := NewCounter(0)
	for i := range series {
		c.Add(series[i : i+1])
	}
	if got := c.Finish(); !slices.Equal(got, want) {
		t.Errorf("Counter = %v, want %v", got, want)
	}
	// And the independent four-point counter agrees.
	if d := histogram(want).diff(histogram(refCount(series, 0))); len(d) > 0 {
		t.Errorf("four-point counter disagrees: %v", d)
	}
}

func TestTurningPointsGate(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		name   string
		series []float64
		gate   float64
		want   []float64
	}{
		{"empty", nil, 0, nil},
		{"one sample", []float64{3}, 0, []float64{3}},
		{"constant record", []float64{2, 2, 2, 2}, 0, []float64{2}},
		{"two samples", []float64{0, 1}, 0, []float64{0, 1}},
		{"plateau is one turning point", []float64{0, 1, 1, 1, 0}, 0, []float64{0, 1, 0}},
		{"equal values are no reversal", []float64{0, 2, 2, 3, 3, 1}, 0, []float64{0, 3, 1}},
		{"gate 0 takes every strict reversal", []float64{0, 1, 0.999, 2}, 0, []float64{0, 1, 0.999, 2}},
		{"move back of exactly the gate is kept out", []float64{0, 4, 3, 5, 0}, 1, []float64{0, 5, 0}},
		{"move back of more than the gate is a reversal", []float64{0, 4, 2.75, 5, 0}, 1, []float64{0, 4, 2.75, 5, 0}},
		{"first leg must leave the band by more than the gate", []float64{0, 1, -1, 1, -1}, 1, []float64{0}},
		{"first leg sets the direction", []float64{0, 0.5, -2, 3}, 1, []float64{0, -2, 3}},
		{"record ends at the running extreme", []float64{0, 10, 9.5, 9.8}, 1, []float64{0, 10}},
		{"last sample when it is the extreme", []float64{0, 10, 5}, 1, []float64{0, 10, 5}},
		{"small wiggles inside the gate vanish", []float64{0, 5, 4.5, 5.5, 5, 6, 0}, 1, []float64{0, 6, 0}},
		{"NaN samples are skipped", []float64{nan, 0, nan, 3, nan, 1, nan}, 0, []float64{0, 3, 1}},
		{"all NaN", []float64{nan, nan}, 0, nil},
		{"negative gate reads as 0", []float64{0, 1, 0.5, 2}, -1, []float64{0, 1, 0.5, 2}},
		{"NaN gate reads as 0", []float64{0, 1, 0.5, 2}, nan, []float64{0, 1, 0.5, 2}},
		{"infinite gate: no reversal", []float64{0, 1e300, -1e300}, inf, []float64{0}},
		{"minus zero reads as plus zero", []float64{math.Copysign(0, -1), 1, 0}, 0, []float64{0, 1, 0}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := TurningPoints(nil, tt.series, tt.gate)
			if !slices.Equal(got, tt.want) {
				t.Fatalf("TurningPoints(%v, %v) = %v, want %v", tt.series, tt.gate, got, tt.want)
			}
			for _, v := range got {
				if v == 0 && math.Signbit(v) {
					t.Errorf("turning point −0 in %v", got)
				}
			}
			if ref := refTurningPoints(tt.series, tt.gate); !slices.Equal(ref, tt.want) {
				t.Errorf("reference pass gives %v", ref)
			}
			if got := TurningPoints([]float64{42}, tt.series, tt.gate); !slices.Equal(got, append([]float64{42}, tt.want...)) {
				t.Errorf("TurningPoints does not append to dst: %v", got)
			}
		})
	}
}

// exactSeries draws a record of multiples of 1/4 of moderate size, so that
// every difference and mean is exact and the two counters cannot be told
// apart by rounding. It mixes random walks (steps of 0 make plateaus),
// random values, and slow noisy ramps and holds that exercise the block
// path of the turning-point pass.
func exactSeries(t *rapid.T) []float64 {
	var s []float64
	x := 0
	for range rapid.IntRange(1, 6).Draw(t, "segments") {
		n := rapid.IntRange(0, 400).Draw(t, "length")
		switch rapid.IntRange(0, 3).Draw(t, "kind") {
		case 0: // random walk
			span := rapid.IntRange(0, 12).Draw(t, "span")
			for _, d := range rapid.SliceOfN(rapid.IntRange(-span, span), n, n).Draw(t, "steps") {
				x += d
				s = append(s, float64(x)/4)
			}
		case 1: // random values from a small set: many repeats
			for _, v := range rapid.SliceOfN(rapid.IntRange(-6, 6), n, n).Draw(t, "values") {
				x = v
				s = append(s, float64(x)/4)
			}
		case 2: // slow ramp with noise
			slope := rapid.IntRange(-2, 2).Draw(t, "slope")
			noise := rapid.IntRange(0, 3).Draw(t, "noise")
			for _, d := range rapid.SliceOfN(rapid.IntRange(-noise, noise), n, n).Draw(t, "noise") {
				x += slope
				s = append(s, float64(x+d)/4)
			}
		case 3: // hold with a swell
			amp := rapid.IntRange(0, 16).Draw(t, "amplitude")
			period := rapid.IntRange(2, 100).Draw(t, "period")
			for i := range n {
				s = append(s, float64(x+int(math.Round(float64(amp)*math.Sin(2*math.Pi*float64(i)/float64(period)))))/4)
			}
		}
	}
	return s
}

func exactGate(t *rapid.T) float64 {
	return rapid.SampledFrom([]float64{0, 0.25, 0.5, 1, 1.75, 3, 10}).Draw(t, "gate")
}

// anySeries draws any float64 record, NaN, infinities, ±0 and extreme
// magnitudes included, with runs of repeats.
func anySeries(t *rapid.T) []float64 {
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1),
		math.MaxFloat64, -math.MaxFloat64, math.SmallestNonzeroFloat64, 1, -1}
	n := rapid.IntRange(0, 600).Draw(t, "n")
	s := make([]float64, 0, n)
	for len(s) < n {
		var v float64
		switch rapid.IntRange(0, 9).Draw(t, "kind") {
		case 0:
			v = rapid.SampledFrom(special).Draw(t, "special")
		case 1, 2:
			v = rapid.Float64().Draw(t, "any")
		default:
			v = rapid.Float64Range(-100, 100).Draw(t, "moderate")
		}
		for range rapid.IntRange(1, 12).Draw(t, "repeat") {
			s = append(s, v)
		}
	}
	return s
}

func anyGate(t *rapid.T) float64 {
	return rapid.OneOf(
		rapid.SampledFrom([]float64{0, 0.05, 1, math.NaN(), -1, math.Inf(1)}),
		rapid.Float64Range(0, 200),
	).Draw(t, "gate")
}

// streamCount feeds series to a Counter in the given chunk lengths (cycled)
// and returns Finish's cycles. It also checks that what Cycles reported
// along the way is what Finish returns first: a Counter only appends.
func streamCount(t interface{ Fatalf(string, ...any) }, series []float64, gate float64, chunks []int) []Cycle {
	c := NewCounter(gate)
	var seen []Cycle
	for i, j := 0, 0; i < len(series); j++ {
		m := 1
		if len(chunks) > 0 {
			m = chunks[j%len(chunks)]
		}
		m = min(m, len(series)-i)
		c.Add(series[i : i+m])
		i += m
		now := c.Cycles()
		if len(now) < len(seen) {
			t.Fatalf("Cycles shrank from %d to %d", len(seen), len(now))
		}
		seen = append(seen, now[len(seen):]...)
	}
	out := c.Finish()
	if len(out) < len(seen) || !sameCycles(out[:len(seen)], seen) {
		t.Fatalf("Finish changed the cycles Cycles had returned")
	}
	return out
}

// sameCycles compares bit for bit (NaN means included).
func sameCycles(a, b []Cycle) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i].Range) != math.Float64bits(b[i].Range) ||
			math.Float64bits(a[i].Mean) != math.Float64bits(b[i].Mean) ||
			math.Float64bits(a[i].Count) != math.Float64bits(b[i].Count) {
			return false
		}
	}
	return true
}

func TestAgainstFourPointCounter(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		series, gate := exactSeries(t), exactGate(t)
		tp := TurningPoints(nil, series, gate)
		if ref := refTurningPoints(series, gate); !slices.Equal(tp, ref) {
			t.Fatalf("turning points\n got %v\nwant %v", tp, ref)
		}
		got, want := histogram(Count(nil, series, gate)), histogram(refCount(series, gate))
		if d := got.diff(want); len(d) > 0 {
			t.Fatalf("cycles differ from the four-point counter (got against want): %v", d)
		}
	})
}

// The block path and the branch-free kernel of the turning-point pass must
// give exactly what the plain sample-by-sample rule gives, on any data.
func TestTurningPointsAgainstPlainLoop(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		var series []float64
		var gate float64
		if rapid.Bool().Draw(t, "exact") {
			series, gate = exactSeries(t), exactGate(t)
		} else {
			series, gate = anySeries(t), anyGate(t)
		}
		tp, ref := TurningPoints(nil, series, gate), refTurningPoints(series, gate)
		if len(tp) != len(ref) {
			t.Fatalf("%d turning points, plain loop %d\n got %v\nwant %v", len(tp), len(ref), tp, ref)
		}
		for i := range tp {
			if math.Float64bits(tp[i]) != math.Float64bits(ref[i]) {
				t.Fatalf("turning point %d: %v, plain loop %v", i, tp[i], ref[i])
			}
		}
	})
}

func TestTurningPointsAlternateAndClearTheGate(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		series, gate := exactSeries(t), exactGate(t)
		tp := TurningPoints(nil, series, gate)
		for i := 1; i < len(tp); i++ {
			if !(math.Abs(tp[i]-tp[i-1]) > gate) {
				t.Fatalf("turning points %v and %v are not more than %v apart", tp[i-1], tp[i], gate)
			}
			if i > 1 && (tp[i]-tp[i-1] > 0) == (tp[i-1]-tp[i-2] > 0) {
				t.Fatalf("turning points %v %v %v do not alternate", tp[i-2], tp[i-1], tp[i])
			}
		}
	})
}

func TestStreamingEqualsBatch(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		var series []float64
		var gate float64
		if rapid.Bool().Draw(t, "exact") {
			series, gate = exactSeries(t), exactGate(t)
		} else {
			series, gate = anySeries(t), anyGate(t)
		}
		chunks := rapid.SliceOfN(rapid.IntRange(1, 3000), 1, 8).Draw(t, "chunks")
		batch := Count(nil, series, gate)
		if stream := streamCount(t, series, gate, chunks); !sameCycles(stream, batch) {
			t.Fatalf("streaming\n%v\nbatch\n%v", stream, batch)
		}
		// Count appends to dst.
		head := []Cycle{{Range: 1, Mean: 2, Count: 3}}
		if got := Count(slices.Clone(head), series, gate); !sameCycles(got[:1], head) || !sameCycles(got[1:], batch) {
			t.Fatalf("Count does not append to dst")
		}
	})
}

func TestNegatedRecord(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		var series []float64
		var gate float64
		if rapid.Bool().Draw(t, "exact") {
			series, gate = exactSeries(t), exactGate(t)
		} else {
			series, gate = anySeries(t), anyGate(t)
		}
		neg := make([]float64, len(series))
		for i, v := range series {
			neg[i] = -v
		}
		a, b := Count(nil, series, gate), Count(nil, neg, gate)
		if len(a) != len(b) {
			t.Fatalf("%d cycles, negated %d", len(a), len(b))
		}
		for i := range a {
			same := func(x, y float64) bool { return x == y || (x != x && y != y) }
			if !same(a[i].Range, b[i].Range) || !same(a[i].Mean, -b[i].Mean) || a[i].Count != b[i].Count {
				t.Fatalf("cycle %d: %v, negated %v", i, a[i], b[i])
			}
		}
	})
}

// Every turning point but the last starts one range; a full cycle is two
// of them and a half cycle one, so Σ 2·Count = turning points − 1.
func TestCountsAddUpToTheRanges(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		var series []float64
		var gate float64
		if rapid.Bool().Draw(t, "exact") {
			series, gate = exactSeries(t), exactGate(t)
		} else {
			series, gate = anySeries(t), anyGate(t)
		}
		sum := 0.0
		for _, c := range Count(nil, series, gate) {
			sum += 2 * c.Count
		}
		want := max(len(TurningPoints(nil, series, gate))-1, 0)
		if sum != float64(want) {
			t.Fatalf("Σ 2·Count = %v, want %d", sum, want)
		}
	})
}

// DESIGN.md §4: a dive that starts and ends at the surface closes its own
// largest cycle. With the residue counted as half cycles (ASTM E1049-85
// §5.4.4 steps 5 and 6) the surface-to-depth range comes out as two half
// cycles, one full cycle's worth.
func TestDiveClosesItsLargestCycle(t *testing.T) {
	dive := []float64{0, 5, 4, 12, 11.5, 20, 19, 19.5, 20, 19.6, 20, 14, 15, 8, 9, 0}
	for _, gate := range []float64{0, 0.25} {
		cycles := Count(nil, dive, gate)
		var halves []Cycle
		for _, c := range cycles {
			if c.Range == 20 {
				halves = append(halves, c)
			}
			if c.Range > 20 {
				t.Fatalf("range %v larger than the dive", c.Range)
			}
		}
		want := []Cycle{{Range: 20, Mean: 10, Count: 0.5}, {Range: 20, Mean: 10, Count: 0.5}}
		if !slices.Equal(halves, want) {
			t.Errorf("gate %v: 0-20-0 cycles %v, want %v (all: %v)", gate, halves, want, cycles)
		}
	}
	// The same on the benchmark's 10 h dive record with noise: the
	// surface-to-40-MPa range is the largest and counts one cycle in all.
	rec := diveRecord(7)
	cycles := Count(nil, rec, 0.05)
	slices.SortFunc(cycles, func(a, b Cycle) int { return cmp.Compare(b.Range, a.Range) })
	if len(cycles) < 2 || cycles[0].Count+cycles[1].Count != 1 || cycles[0].Range < 39.9 || cycles[1].Range < 39.9 || cycles[2].Range > 1 {
		t.Errorf("largest cycles of the dive record: %v", cycles[:min(4, len(cycles))])
	}
	// 4 h of a 60 s swell: 240 swell cycles.
	swell := 0.0
	for _, c := range cycles {
		if c.Range > 0.3 && c.Range < 0.5 {
			swell += c.Count
		}
	}
	if swell < 239 || swell > 241 {
		t.Errorf("%v swell cycles, want about 240", swell)
	}
}

// A record whose swings first grow (every new range exceeds the one holding
// the starting point: a half cycle each, §5.4.4 step 5) and then die away
// (nothing closes: a long residue, step 6) moves the rainflow stack through
// its buffer and makes it grow.
func TestLongResidue(t *testing.T) {
	var series []float64
	for i := range 700 {
		series = append(series, float64(i*(1-2*(i%2))))
	}
	for i := 700; i > 0; i-- {
		series = append(series, float64(i*(1-2*(i%2))))
	}
	cycles := Count(nil, series, 0)
	if d := histogram(cycles).diff(histogram(refCount(series, 0))); len(d) > 0 {
		t.Fatalf("four-point counter disagrees: %v", d[:min(len(d), 5)])
	}
	for _, chunk := range []int{1, 7, 300, 5000} {
		if got := streamCount(t, series, 0, []int{chunk}); !sameCycles(got, cycles) {
			t.Errorf("chunks of %d: streaming differs from batch", chunk)
		}
	}
}

func TestCounterLifecycle(t *testing.T) {
	series := []float64{-2, 1, -3, 5, -1, 3, -4, 4, -2}
	want := Count(nil, series, 0)
	var zero Counter // the zero Counter counts with gate 0
	zero.Add(series)
	if got := zero.Finish(); !slices.Equal(got, want) {
		t.Fatalf("zero Counter: %v, want %v", got, want)
	}
	if got := zero.Finish(); !slices.Equal(got, want) {
		t.Fatalf("second Finish: %v", got)
	}
	func() {
		defer func() {
			if recover() == nil {
				t.Error("Add after Finish did not panic")
			}
		}()
		zero.Add(series)
	}()
	zero.Reset()
	if len(zero.Cycles()) != 0 {
		t.Fatalf("Cycles after Reset: %v", zero.Cycles())
	}
	// After −2, 1, −3, 5 the 5 is only the running maximum: a turning
	// point once −1 has come.
	zero.Add(series[:4])
	if got := zero.Cycles(); !slices.Equal(got, want[:1]) {
		t.Errorf("Cycles after 4 samples: %v, want %v", got, want[:1])
	}
	zero.Add(series[4:5])
	if got := zero.Cycles(); !slices.Equal(got, want[:2]) {
		t.Errorf("Cycles after 5 samples: %v, want %v", got, want[:2])
	}
	zero.Add(series[5:])
	if got := zero.Finish(); !slices.Equal(got, want) {
		t.Errorf("after Reset: %v, want %v", got, want)
	}
	if got := NewCounter(1).Finish(); len(got) != 0 {
		t.Errorf("empty record: %v", got)
	}
}

func TestNoAllocationPerSample(t *testing.T) {
	series := randomWalk(100_000, 3)
	dst := Count(nil, series, 0.05)
	if n := testing.AllocsPerRun(5, func() { dst = Count(dst[:0], series, 0.05) }); n != 0 {
		t.Errorf("Count with a reused buffer: %v allocations", n)
	}
	c := NewCounter(0.05)
	run := func() {
		c.Reset()
		for s := series; len(s) > 0; {
			m := min(len(s), 1000)
			c.Add(s[:m])
			s = s[m:]
		}
		c.Finish()
	}
	run()
	if n := testing.AllocsPerRun(5, run); n != 0 {
		t.Errorf("Counter, reused: %v allocations", n)
	}
}

// FuzzCount: for any record, gate and chunking, streaming equals batch bit
// for bit, and nothing panics. The record is the input bytes read as
// little-endian float64s, so every bit pattern (NaN payloads, infinities,
// subnormals) can occur.
func FuzzCount(f *testing.F) {
	enc := func(v ...float64) []byte {
		b := make([]byte, 8*len(v))
		for i, x := range v {
			binary.LittleEndian.PutUint64(b[8*i:], math.Float64bits(x))
		}
		return b
	}
	f.Add(enc(-2, 1, -3, 5, -1, 3, -4, 4, -2), 0.0, uint16(3))
	f.Add(enc(0, 1, 1, 1, 0, math.NaN(), 2, math.Inf(1), -1), 0.5, uint16(1))
	f.Add(enc(randomWalk(300, 9)...), 0.05, uint16(17))
	f.Fuzz(func(t *testing.T, data []byte, gate float64, chunk uint16) {
		series := make([]float64, len(data)/8)
		for i := range series {
			series[i] = math.Float64frombits(binary.LittleEndian.Uint64(data[8*i:]))
		}
		batch := Count(nil, series, gate)
		chunks := []int{int(chunk%61) + 1, int(chunk>>6) + 1}
		if stream := streamCount(t, series, gate, chunks); !sameCycles(stream, batch) {
			t.Fatalf("streaming\n%v\nbatch\n%v", stream, batch)
		}
		tp := TurningPoints(nil, series, gate)
		sum := 0.0
		for _, c := range batch {
			sum += 2 * c.Count
		}
		if want := max(len(tp)-1, 0); sum != float64(want) {
			t.Fatalf("Σ 2·Count = %v, turning points %d", sum, len(tp))
		}
	})
}
