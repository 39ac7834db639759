package demo

import (
	"bytes"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"hulltally/ledger/synth"
)

// TestWriteDiveConcurrent: many writers of the same dive files at once (two
// demos started together) never collide on a temporary name: every write
// succeeds, no temporary file is left, and the files are whole.
func TestWriteDiveConcurrent(t *testing.T) {
	dir := t.TempDir()
	d := synth.Dive{Start: time.Date(2026, 3, 2, 7, 30, 0, 0, time.UTC), SampleHz: 1, Latitude: -38, MaxDepthM: 400,
		DescentMPS: 1, AscentMPS: 1, BottomS: 600, SurfaceS: 60, DepthNoiseM: 0.05,
		Gauges: []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -100, NoiseUE: 1}}, AEChannels: []int{1}, AEBottomRate: 3, AmplitudeMean: 45}
	lone := t.TempDir()
	if err := writeDive(&d, filepath.Join(lone, "d.csv"), filepath.Join(lone, "d-ae.csv"), 7); err != nil {
		t.Fatal(err)
	}
	samples, hits := filepath.Join(dir, "d.csv"), filepath.Join(dir, "d-ae.csv")
	const n = 12
	var wg sync.WaitGroup
	errs := make([]error, n)
	for i := 0; i < n; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			dd := d
			errs[i] = writeDive(&dd, samples, hits, 7)
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Fatalf("writer %d: %v", i, err)
		}
	}
	es, _ := os.ReadDir(dir)
	if len(es) != 2 {
		var names []string
		for _, e := range es {
			names = append(names, e.Name())
		}
		t.Fatalf("files left: %v", names)
	}
	for _, name := range []string{"d.csv", "d-ae.csv"} {
		a, _ := os.ReadFile(filepath.Join(dir, name))
		b, _ := os.ReadFile(filepath.Join(lone, name))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s: %d bytes, want the lone writer's %d", name, len(a), len(b))
		}
	}
}
