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

// diveRecord returns a 100 Hz pressure record in MPa of one deep dive: a
// 1 h linear descent from 0 to 40 MPa, 4 h at 40 MPa with a ±0.2 MPa swell
// of 60 s period, a 1 h linear ascent and 4 h at the surface, with uniform
// sensor noise of ±0.01 MPa throughout (3.6e6 samples).
func diveRecord(seed uint64) []float64 {
	const (
		hz    = 100
		hour  = 3600 * hz
		depth = 40.0
	)
	r := rand.New(rand.NewPCG(seed, 0xd17e))
	s := make([]float64, 0, 10*hour)
	noise := func() float64 { return 0.01 * (2*r.Float64() - 1) }
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

// benchSum is the baseline of the same run: one pass summing the array,
// the least any counter must do (read every sample once).
func benchSum(b *testing.B, series []float64) {
	var total float64
	for b.Loop() {
		s0, s1, s2, s3 := 0.0, 0.0, 0.0, 0.0
		i := 0
		for ; i+4 <= len(series); i += 4 {
			s0 += series[i]
			s1 += series[i+1]
			s2 += series[i+2]
			s3 += series[i+3]
		}
		for ; i < len(series); i++ {
			s0 += series[i]
		}
		total = s0 + s1 + s2 + s3
	}
	ns := float64(b.Elapsed().Nanoseconds()) / (float64(b.N) * float64(len(series)))
	b.ReportMetric(ns, "ns/sample")
	b.ReportMetric(1e3/ns, "Msamples/s")
	_ = total
}

// BenchmarkDiveRecord counts a smooth 10 h, 100 Hz record of one deep dive
// with a gate of 0.05 MPa.
func BenchmarkDiveRecord(b *testing.B) {
	series := diveRecord(1)
	b.Run("batch", func(b *testing.B) { benchCount(b, series, 0.05, false) })
	b.Run("stream", func(b *testing.B) { benchCount(b, series, 0.05, true) })
	b.Run("sum-baseline", func(b *testing.B) { benchSum(b, series) })
}
