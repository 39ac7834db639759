package synth

import (
	"bytes"
	"io"
	"testing"
	"time"

	"hulltally/ledger/logfile"
)

func dive() Dive {
	return Dive{Start: time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC), SampleHz: 1, Latitude: 45, MaxDepthM: 1200,
		DescentMPS: 1, AscentMPS: 1, BottomS: 1800, SurfaceS: 60, Stops: 1, StopS: 60, WanderM: 5, DepthNoiseM: 0.05,
		Gauges: []Gauge{{Name: "hoop1", ComplianceUEPerMPa: -100, Hysteresis: 0.01, NoiseUE: 1}}, TempC: true,
		AEChannels: []int{1, 2}, AEBottomRate: 20, AEOnsetFrac: 1, AmplitudeMean: 45}
}

func TestDeterministicAndParsable(t *testing.T) {
	d := dive()
	var a, ah, b, bh bytes.Buffer
	ra, err := d.Write(&a, &ah, 7)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.Write(&b, &bh, 7); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) || !bytes.Equal(ah.Bytes(), bh.Bytes()) {
		t.Fatal("the same seed gave different files")
	}
	sr, err := logfile.NewSampleReader(&a, "synth", logfile.SampleOptions{})
	if err != nil {
		t.Fatal(err)
	}
	blk := sr.NewBlock()
	maxDepth := 0.0
	for {
		err := sr.ReadBlock(blk)
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		for _, z := range blk.Cols[1].Value {
			maxDepth = max(maxDepth, z)
		}
	}
	// Descent at 1 m/s with one stop, 30 min on the bottom with a few
	// metres of wander and centimetre noise: the deepest sample is near the
	// planned depth.
	if sr.Rows() != int64(ra.Samples) || maxDepth < 1195 || maxDepth > 1221 {
		t.Fatalf("rows %d (want %d), deepest %v", sr.Rows(), ra.Samples, maxDepth)
	}
	hr, err := logfile.NewHitReader(&ah, "hits", nil)
	if err != nil {
		t.Fatal(err)
	}
	var h logfile.Hit
	n := 0
	for hr.Next(&h) == nil {
		n++
	}
	if n != ra.Hits || n == 0 {
		t.Fatalf("%d hits parsed, %d written", n, ra.Hits)
	}
}
