// Package demo sets up hulltally's demonstration: an invented operator, the
// Corrigan Shelf Survey Cooperative, with three composite-hull submersibles
// working an invented basin, and a season of synthetic dives for each. The
// files are written under <home>/demo and logged like any operator's
// files; a second run finds them already recorded and finishes quickly.
// Every name, place and number here is invented.
package demo

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"time"

	"gopkg.in/yaml.v3"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/ledger/files"
	"hulltally/ledger/spec"
	"hulltally/ledger/synth"
)

// Options tune the demo.
type Options struct {
	// Dir is where the demo's files go (<home>/demo).
	Dir string
	// DivesPerHull is the season's length (default 60).
	DivesPerHull int
	// SampleHz is the loggers' rate (default 0.5 Hz).
	SampleHz float64
	// Log receives progress lines.
	Log io.Writer
	// Maintenance, when set, makes the demo's maintenance records (hulls,
	// proof tests, inspections) as a person of the maintenance role, and
	// Operator logs the dives as a person of the operator role, so that
	// each record carries the name of who made it. Nil: the ledger Run is
	// given makes them, as whoever it is signed in as.
	Maintenance, Operator *ledger.Ledger
}

// Summary is what a demo run did.
type Summary struct {
	Dir        string `json:"dir"`
	Hulls      int    `json:"hulls"`
	HullsAdded int    `json:"hulls_added"`
	Dives      int    `json:"dives"`
	Logged     int    `json:"logged"`
	Duplicates int    `json:"duplicates"`
	Samples    int64  `json:"samples_logged"`
}

type hullPlan struct {
	spec              *spec.Hull
	minDepth, maxDep  float64
	lat               float64
	site              string
	pilot             string
	compliance        []synth.Gauge
	aeRate, aeOnset   float64
	aeOnsetFrac, ampl float64
	// degrade: from this fraction of the season on, the hull softens and
	// emits below its previous peak (the hull that develops damage).
	degrade float64
	// proofSamples: the season opens with a logged proof test.
	proofSamples bool
}

func f(v float64) *float64 { return &v }
func ch(v int) *int        { return &v }

// fleet is the invented fleet.
func fleet() []hullPlan {
	return []hullPlan{
		{
			spec: &spec.Hull{
				Serial: "CSC-ORN-01", Name: "Ornell", MaterialSystem: "carbon/epoxy filament-wound cylinder, titanium end rings",
				Shape: "cylinder", InnerRadiusM: 0.55, WallThicknessM: 0.10, LengthM: 2.2, RatedDepthM: 4000,
				DesignPressureMPa: 44, ProofPressureMPa: 50, CollapsePressureMPa: 90,
				Components: []spec.Component{
					{Name: "laminate", Kind: "laminate_cylinder", Transfer: spec.Transfer{Basis: "lame"}, Curve: "carbon-epoxy-cc-illustrative", RuptureCurve: "carbon-epoxy-rupture-compression-illustrative"},
					{Name: "end-ring-fwd", Kind: "end_ring", Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: f(-9.5), Source: "demo design analysis ORN-FE-03 (invented)"}, Curve: "ti-6al-4v-machined-illustrative"},
				},
				Gauges: []spec.Gauge{
					{Name: "hoop1", Kind: "strain", Component: "laminate", Position: "mid-length 0 deg", Direction: "hoop"},
					{Name: "hoop2", Kind: "strain", Component: "laminate", Position: "mid-length 180 deg", Direction: "hoop"},
					{Name: "axial1", Kind: "strain", Component: "laminate", Position: "mid-length 90 deg", Direction: "axial"},
					{Name: "ae-fwd", Kind: "ae", Channel: ch(1)},
					{Name: "ae-aft", Kind: "ae", Channel: ch(2)},
				},
			},
			minDepth: 1800, maxDep: 3850, lat: -38.2, site: "Corrigan Shelf, north wall (invented)", pilot: "R. Okonkwo-Lind",
			compliance: []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -118, Hysteresis: 0.01, NoiseUE: 1.5}, {Name: "hoop2", ComplianceUEPerMPa: -121, Hysteresis: 0.01, NoiseUE: 1.5}, {Name: "axial1", ComplianceUEPerMPa: -52, Hysteresis: 0.008, NoiseUE: 1.5}},
			aeRate:     3, aeOnset: 0, aeOnsetFrac: 1, ampl: 45, degrade: 2.0 / 3,
		},
		{
			spec: &spec.Hull{
				Serial: "CSC-VES-02", Name: "Vessa", MaterialSystem: "carbon/epoxy filament-wound cylinder, titanium end rings",
				Shape: "cylinder", InnerRadiusM: 0.40, WallThicknessM: 0.11, LengthM: 1.8, RatedDepthM: 6000,
				DesignPressureMPa: 66, ProofPressureMPa: 75, CollapsePressureMPa: 135,
				Components: []spec.Component{
					{Name: "laminate", Kind: "laminate_cylinder", Transfer: spec.Transfer{Basis: "lame"}, Curve: "carbon-epoxy-cc-illustrative", RuptureCurve: "carbon-epoxy-rupture-compression-illustrative"},
					{Name: "hatch-seat", Kind: "hatch_seat", Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: f(-7.2), Source: "demo design analysis VES-FE-11 (invented)"}, Curve: "ti-6al-4v-machined-illustrative",
						PriorDamage: &spec.Prior{Cyclic: 0.155, Source: "carried over from the hull's earlier service log, 2019-2025 (invented)"}},
				},
				Gauges: []spec.Gauge{
					{Name: "hoop1", Kind: "strain", Component: "laminate", Position: "mid-length 0 deg", Direction: "hoop"},
					{Name: "axial1", Kind: "strain", Component: "laminate", Position: "mid-length 90 deg", Direction: "axial"},
					{Name: "ae-1", Kind: "ae", Channel: ch(1)},
				},
			},
			minDepth: 3500, maxDep: 5900, lat: -38.9, site: "Corrigan Deep, east basin (invented)", pilot: "T. Marsh-Ivanova",
			compliance: []synth.Gauge{{Name: "hoop1", ComplianceUEPerMPa: -96, Hysteresis: 0.012, NoiseUE: 1.5}, {Name: "axial1", ComplianceUEPerMPa: -41, Hysteresis: 0.01, NoiseUE: 1.5}},
			aeRate:     4, aeOnset: 0, aeOnsetFrac: 1, ampl: 47,
		},
		{
			spec: &spec.Hull{
				Serial: "CSC-QUI-03", Name: "Quillon", MaterialSystem: "glass/epoxy sphere, steel hatch ring",
				Shape: "sphere", InnerRadiusM: 0.80, WallThicknessM: 0.07, RatedDepthM: 1000,
				DesignPressureMPa: 11, ProofPressureMPa: 12.5, CollapsePressureMPa: 24,
				Components: []spec.Component{
					{Name: "laminate", Kind: "laminate_sphere", Transfer: spec.Transfer{Basis: "lame"}, Curve: "glass-epoxy-cc-illustrative", RuptureCurve: "glass-epoxy-rupture-compression-illustrative"},
					{Name: "hatch-ring", Kind: "hatch_seat", Transfer: spec.Transfer{Basis: "designer", FactorMPaPerMPa: f(-11.0), Source: "demo design analysis QUI-FE-02 (invented)"}, Curve: "dnv-rp-c203-d-seawater-cp"},
				},
				Gauges: []spec.Gauge{
					{Name: "merid1", Kind: "strain", Component: "laminate", Position: "equator 0 deg", Direction: "meridional"},
					{Name: "ae-1", Kind: "ae", Channel: ch(1)},
				},
			},
			minDepth: 300, maxDep: 960, lat: -37.6, site: "Corrigan Shelf, south terraces (invented)", pilot: "J. Aldana-Voss",
			compliance: []synth.Gauge{{Name: "merid1", ComplianceUEPerMPa: -410, Hysteresis: 0.015, NoiseUE: 2}},
			aeRate:     2, aeOnset: 0, aeOnsetFrac: 1, ampl: 44, proofSamples: true,
		},
	}
}

// Run sets up the fleet, writes missing dive files and logs every file.
func Run(ctx context.Context, l *ledger.Ledger, o Options) (*Summary, error) {
	if o.DivesPerHull <= 0 {
		o.DivesPerHull = 60
	}
	if o.SampleHz <= 0 {
		o.SampleHz = 0.5
	}
	if o.Log == nil {
		o.Log = io.Discard
	}
	maint, ops := cmp.Or(o.Maintenance, l), cmp.Or(o.Operator, l)
	sum := &Summary{Dir: o.Dir}
	season := time.Date(2026, 3, 2, 7, 30, 0, 0, time.UTC)
	for hi, hp := range fleet() {
		sum.Hulls++
		hdir := filepath.Join(o.Dir, hp.spec.Serial)
		if err := os.MkdirAll(hdir, 0o755); err != nil {
			return nil, fmt.Errorf("demo: %w", err)
		}
		specFile := filepath.Join(o.Dir, hp.spec.Serial+".yaml")
		y, err := yaml.Marshal(hp.spec)
		if err != nil {
			return nil, err
		}
		text := append([]byte("# invented demo hull\n"), y...)
		if err := files.WriteAtomic(specFile, func(w io.Writer) error { _, err := w.Write(text); return err }, 0o644); err != nil {
			return nil, fmt.Errorf("demo: %w", err)
		}
		_, err = maint.AddHull(ctx, hp.spec, ledger.AddHullOptions{Reason: "demo fleet"})
		switch {
		case err == nil:
			sum.HullsAdded++
		case errors.Is(err, ledger.ErrHullExists):
		default:
			return nil, err
		}
		plan := rand.New(rand.NewPCG(uint64(hi+1), 2026))
		day := season.Add(time.Duration(hi) * 3 * time.Hour)
		rec, err := l.Hull(ctx, hp.spec.Serial)
		if err != nil {
			return nil, err
		}
		m, err := l.MaintenanceOf(ctx, rec)
		if err != nil {
			return nil, err
		}
		// The season opens with the hull's proof test.
		if len(m.ProofTests) == 0 {
			if err := proofTest(ctx, maint, hp, hdir, day.Add(-24*time.Hour), o.SampleHz); err != nil {
				return nil, err
			}
		}
		for i := 0; i < o.DivesPerHull; i++ {
			day = day.Add(time.Duration(36+plan.IntN(48)) * time.Hour)
			depth := hp.minDepth + (hp.maxDep-hp.minDepth)*plan.Float64()
			d := synth.Dive{
				Start: day, SampleHz: o.SampleHz, Latitude: hp.lat, MaxDepthM: float64(int(depth)),
				DescentMPS: 0.6 + 0.4*plan.Float64(), AscentMPS: 0.7 + 0.4*plan.Float64(),
				BottomS: 3600 * (1 + 2*plan.Float64()), SurfaceS: 300, Stops: 1 + plan.IntN(2), StopS: 120 + 180*plan.Float64(),
				WanderM: 5 + 15*plan.Float64(), DepthNoiseM: 0.05, Gauges: hp.compliance, TempC: true,
				AEChannels: hp.spec.AEChannels(), AEBottomRate: hp.aeRate, AEOnsetFrac: hp.aeOnsetFrac, AEOnsetRate: hp.aeOnset, AmplitudeMean: hp.ampl,
				AEHoldDecayS: 40, SensorChecks: true,
			}
			if hp.degrade > 0 && float64(i) >= hp.degrade*float64(o.DivesPerHull) {
				// Damage develops: the laminate softens a little more each
				// dive and emits from 60 % of the dive's depth on.
				k := float64(i) - hp.degrade*float64(o.DivesPerHull) + 1
				d.Gauges = make([]synth.Gauge, len(hp.compliance))
				for g, gg := range hp.compliance {
					gg.ComplianceUEPerMPa *= 1 + 0.004*k
					gg.ResidualUE = -3 * k
					d.Gauges[g] = gg
				}
				d.AEOnsetFrac, d.AEOnsetRate = 0.6, 150
				d.AEHoldDecayS = 0 // and the emission at depth goes on
			}
			base := filepath.Join(hdir, fmt.Sprintf("dive-%03d", i+1))
			samples, hits := base+".csv", base+"-ae.csv"
			if !exists(samples) || !exists(hits) {
				if err := writeDive(&d, samples, hits, uint64(hi*1000+i)); err != nil {
					return nil, err
				}
			}
			lat := hp.lat
			r, err := ops.LogDive(ctx, ledger.LogRequest{Hull: hp.spec.Serial, Samples: samples, AE: hits, Latitude: &lat, Site: hp.site, Operator: hp.pilot})
			if err != nil {
				return nil, fmt.Errorf("demo: %w", err)
			}
			sum.Dives++
			if r.Duplicate {
				sum.Duplicates++
			} else {
				sum.Logged++
				sum.Samples += r.Samples
			}
			// The mid-season inspection.
			if i == o.DivesPerHull/2 && len(m.Inspections) == 0 {
				_, err := maint.RecordInspection(ctx, hp.spec.Serial, ledger.Inspection{At: r.End.Add(6 * time.Hour), Method: "visual and ultrasonic (invented)",
					Findings: "no indications", Result: "pass"})
				if err != nil {
					return nil, fmt.Errorf("demo: %w", err)
				}
			}
		}
		if maint != l || ops != l {
			// A person may not write the fleet summary (migration 014):
			// the owner notes the hull after the people's records.
			if err := l.NoteHull(ctx, hp.spec.Serial); err != nil {
				return nil, fmt.Errorf("demo: %w", err)
			}
		}
		fmt.Fprintf(o.Log, "demo: %s %s: %d dives in %s\n", hp.spec.Serial, hp.spec.Name, o.DivesPerHull, hdir)
	}
	return sum, nil
}

// proofTest records the hull's proof test at the opening of the season:
// with a logged samples file for the hull that has one, else from its
// certificate.
func proofTest(ctx context.Context, l *ledger.Ledger, hp hullPlan, dir string, at time.Time, hz float64) error {
	p := ledger.ProofTest{At: at, PressureMPa: hp.spec.ProofPressureMPa, Result: "pass",
		Notes: "proof test at the opening of the season (invented)"}
	var req ledger.LogRequest
	if hp.proofSamples {
		depth := seawater.MPaToDepth(hp.spec.ProofPressureMPa, hp.lat)
		d := synth.Dive{Start: at, SampleHz: hz, Latitude: hp.lat, MaxDepthM: depth, DescentMPS: 0.5, AscentMPS: 0.5,
			BottomS: 1800, SurfaceS: 300, Stops: 1, StopS: 300, DepthNoiseM: 0.05, Gauges: hp.compliance, TempC: true,
			AEChannels: hp.spec.AEChannels(), AEBottomRate: hp.aeRate, AEOnsetFrac: 1, AmplitudeMean: hp.ampl, AEHoldDecayS: 40, SensorChecks: true}
		samples, hits := filepath.Join(dir, "proof-test.csv"), filepath.Join(dir, "proof-test-ae.csv")
		if !exists(samples) || !exists(hits) {
			if err := writeDive(&d, samples, hits, 999); err != nil {
				return err
			}
		}
		lat := hp.lat
		req = ledger.LogRequest{Hull: hp.spec.Serial, Samples: samples, AE: hits, Latitude: &lat, Site: "proof test tank (invented)", Operator: "yard test crew (invented)"}
		p.At, p.PressureMPa = time.Time{}, 0 // from the samples
	} else {
		p.Notes = "proof test certificate of the yard (invented); no samples on record"
	}
	if _, err := l.ProofTestWithSamples(ctx, hp.spec.Serial, p, req); err != nil {
		return fmt.Errorf("demo: proof test of %s: %w", hp.spec.Serial, err)
	}
	return nil
}

// writeDive writes a dive's two files, each to a temporary file with a
// unique name in its folder, renamed into place only once both are whole:
// concurrent demos never collide on a temporary name, and a reader never
// sees half a file (the content is the same for the same seed, so the
// last rename wins with identical bytes).
func writeDive(d *synth.Dive, samples, hits string, seed uint64) error {
	sf, err := files.NewAtomic(samples, 0o644)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	defer sf.Abort()
	hf, err := files.NewAtomic(hits, 0o644)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	defer hf.Abort()
	if _, err := d.Write(sf, hf, seed); err != nil {
		return fmt.Errorf("demo: writing %s: %w", samples, err)
	}
	if err := sf.Commit(); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	if err := hf.Commit(); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	return nil
}

func exists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
