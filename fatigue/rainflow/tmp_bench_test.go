package rainflow
import "testing"
func BenchmarkTPOnly(b *testing.B) {
	series := randomWalk(10_000_000, 1)
	var buf [blockLen]float64
	n := 0
	for b.Loop() {
		sc := scanner{gate: 0.05}
		for s := series; len(s) > 0; {
			m := min(len(s), blockLen)
			n += sc.scan(s[:m], buf[:])
			s = s[m:]
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(series)), "ns/sample")
	b.ReportMetric(float64(n/b.N), "tps")
}
func BenchmarkPushOnly(b *testing.B) {
	series := randomWalk(10_000_000, 1)
	tps := TurningPoints(nil, series, 0.05)
	var stack []float64
	var cyc []Cycle
	stack, cyc = push(stack[:0], tps, cyc[:0])
	for b.Loop() {
		stack, cyc = push(stack[:0], tps, cyc[:0])
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(series)), "ns/sample")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(tps)), "ns/tp")
	b.ReportMetric(float64(len(cyc)), "cyc")
}
