package ledger_test

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"

	"hulltally/ledger"
)

// BenchmarkAssessProcess runs `hulltally assess` as a whole process on a
// fleet of 100 000 dives (400 hulls × 250, written with COPY as in
// BenchmarkReassessFleet) and reports its wall time and the process's peak
// resident memory (the goal: under 128 MB):
//
//	go test -run XXX -bench AssessProcess -benchtime 2x -timeout 30m ./ledger/
func BenchmarkAssessProcess(b *testing.B) {
	const hulls, dives = 400, 250
	ctx := context.Background()
	dir := b.TempDir()
	bin := filepath.Join(dir, "hulltally")
	if out, err := exec.Command("go", "build", "-o", bin, "../cmd/hulltally").CombinedOutput(); err != nil {
		b.Fatalf("building hulltally: %v\n%s", err, out)
	}
	cfg := testConfig(b)
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		b.Fatal(err)
	}
	defer l.Close()
	copyFleet(b, l, "AP", hulls, func(int) int { return dives })
	if _, err := l.Pool().Exec(ctx, "ANALYZE"); err != nil {
		b.Fatal(err)
	}
	var peakKB int64
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		c := exec.Command(bin, "assess", "--reason", "benchmark", "--json")
		c.Env = append(os.Environ(), "HULLTALLY_DATABASE_URL="+cfg.Database.URL, "HULLTALLY_HOME="+dir)
		if out, err := c.CombinedOutput(); err != nil {
			b.Fatalf("assess: %v\n%s", err, out[:min(len(out), 2000)])
		}
		if ru, ok := c.ProcessState.SysUsage().(*syscall.Rusage); ok {
			peakKB = max(peakKB, ru.Maxrss) // KiB on Linux
		}
	}
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N), "s/fleet")
	b.ReportMetric(float64(peakKB)/1024, "peak-RSS-MB")
}
