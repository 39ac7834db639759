package rainflow

import (
	"math"
	"math/rand/v2"
	"testing"
)

// randomWalk returns n samples of a random walk from 0 with N(0, 1) steps.
func randomWalk(n int, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 0x5eed))
	s := make([]float64, n)
	x := 0.0
	for i := range s {
		x += r.NormFloat64()
		s[i] = x
	}
	return s
}

// diveNoiseMPa is the standard deviation σ of the Gaussian sensor noise on
// the benchmark's dive record: 0.01 MPa, the configured pressure-sensor
// noise, so the 0.05 MPa gate of the benchmark is 5σ as configured. The
// difference of two independent samples has σ√2 ≈ 0.014 MPa, so the gate
// is crossed about once in 10^4 sample pairs: over 3.6e6 samples this
// gives some ten thousand noise cycles on top of the swell's 240, the
// load a real record puts on the counter (uniform noise bounded by
// ±0.01 MPa never crosses the gate at all).
const diveNoiseMPa = 0.01

// diveGateMPa is the hysteresis gate of the dive-record benchmark, 5σ.
const diveGateMPa = 5 * diveNoiseMPa

// diveRecord returns a 100 Hz pressure record in MPa of one deep dive: a
// 1 h linear descent from 0 to 40 MPa, 4 h at 40 MPa with a ±0.2 MPa swell
// of 60 s period, a 1 h linear ascent and 4 h at the surface, with
// Gaussian sensor noise N(0, σ = diveNoiseMPa) added to every sample
// (3.6e6 samples).
func diveRecord(seed uint64) []float64 {
	const (
		hz    = 100
		hour  = 3600 * hz
		depth = 40.0
	)
	r := rand.New(rand.NewPCG(seed, 0xd17e))
	s := make([]float64, 0, 10*hour)
	noise := func() float64 { return diveNoiseMPa * r.NormFloat64() }
	for i := range hour {
		s = append(s, depth*float64(i)/hour+noise())
	}
	for i := range 4 * hour {
		t := float64(i) / hz
		s = append(s, depth+0.2*math.Sin(2*math.Pi*t/60)+noise())
	}
	for i := range hour {
		s = append(s, depth*(1-float64(i)/hour)+noise())
	}
	for range 4 * hour {
		s = append(s, noise())
	}
	return s
}

// streamChunk is the chunk size of the streaming benchmarks, a typical
// data-logger read.
const streamChunk = 4096

func benchCount(b *testing.B, series []float64, gate float64, stream bool) {
	var cycles []Cycle
	c := NewCounter(gate)
	run := func() {
		if stream {
			c.Reset()
			for s := series; len(s) > 0; {
				m := min(len(s), streamChunk)
				c.Add(s[:m])
				s = s[m:]
			}
			cycles = c.Finish()
		} else {
			cycles = Count(cycles[:0], series, gate)
		}
	}
	run() // grow the buffers once: the timed runs allocate nothing
	for b.Loop() {
		run()
	}
	samples := float64(b.N) * float64(len(series))
	ns := float64(b.Elapsed().Nanoseconds()) / samples
	b.ReportMetric(ns, "ns/sample")
	b.ReportMetric(1e3/ns, "Msamples/s")
	b.ReportMetric(float64(len(cycles)), "cycles")
}

// BenchmarkRandomWalk counts a 10^7-sample random walk with N(0, 1) steps
// and a gate of 0.05: a busy signal with a reversal about every second
// sample.
func BenchmarkRandomWalk(b *testing.B) {
	series := randomWalk(10_000_000, 1)
	b.Run("batch", func(b *testing.B) { benchCount(b, series, 0.05, false) })
	b.Run("stream", func(b *testing.B) { benchCount(b, series, 0.05, true) })
	b.Run("sum-baseline", func(b *testing.B) { benchSum(b, series) })
}

// sumSink keeps the baseline's result alive so the compiler cannot drop
// the sum (test-only).
var sumSink float64

// sumOnePass is the ceiling of every counter: one pass over the series,
// reading each sample once and adding it to a running total. It is an
// ordinary top-level function, compiled and optimised as any other; it
// is called once per benchmark iteration and its result stored in
// sumSink.
func sumOnePass(series []float64) float64 {
	total := 0.0
	for _, v := range series {
		total += v
	}
	return total
}

// benchSum is the baseline of the same run: one pass summing the array,
// the least any counter must do (read every sample once).
func benchSum(b *testing.B, series []float64) {
	for b.Loop() {
		sumSink = sumOnePass(series)
	}
	samples := float64(b.N) * float64(len(series))
	ns := float64(b.Elapsed().Nanoseconds()) / samples
	b.ReportMetric(ns, "ns/sample")
	b.ReportMetric(1e3/ns, "Msamples/s")
	b.ReportMetric(8/ns, "GB/s") // 8 bytes per float64 sample
}

// BenchmarkDiveRecord counts a 10 h, 100 Hz record of one deep dive with
// Gaussian sensor noise σ = 0.01 MPa and a gate of 0.05 MPa (5σ).
func BenchmarkDiveRecord(b *testing.B) {
	series := diveRecord(1)
	b.Run("batch", func(b *testing.B) { benchCount(b, series, diveGateMPa, false) })
	b.Run("stream", func(b *testing.B) { benchCount(b, series, diveGateMPa, true) })
	b.Run("sum-baseline", func(b *testing.B) { benchSum(b, series) })
}

// TestDiveRecordNoiseCrossesGate guards the benchmark's honesty: the
// record's sensor noise must actually reach the counter. With Gaussian
// noise σ = 0.01 MPa and a 5σ gate, two neighbouring samples differ by
// more than the gate with probability 2·Φ(-5/√2) ≈ 4e-4, so a 3.6e6-sample
// record yields thousands of noise cycles; the swell alone gives 240
// (4 h of a 60 s period). A noise that never crosses the gate (bounded
// uniform ±σ) would leave about 240 and flatter the throughput.
func TestDiveRecordNoiseCrossesGate(t *testing.T) {
	if testing.Short() {
		t.Skip("3.6e6-sample record")
	}
	series := diveRecord(1)
	if len(series) != 3_600_000 {
		t.Fatalf("samples = %d, want 3 600 000", len(series))
	}
	cycles := Count(nil, series, diveGateMPa)
	if n := len(cycles); n < 5_000 || n > 30_000 {
		t.Fatalf("cycles = %d, want between 5 000 and 30 000 (noise crossing the 5σ gate; swell alone gives 240)", n)
	}
}
