package ledger

import (
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"strings"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/load"
	"hulltally/fatigue/sn"
	"hulltally/ledger/spec"
)

// fatigueEnv is the resolved fatigue configuration of this ledger.
type fatigueEnv struct {
	lib       *sn.Library
	libSource string
	settings  assess.Settings
	limits    damage.Limits
	life      damage.LifeOptions
	hash      []byte
	json      string
	gateMPa   float64
	gateUE    float64
	binMPa    float64
	maxBins   int
}

func (l *Ledger) loadFatigue() error {
	f := l.cfg.Fatigue
	data, src, err := f.Curves()
	if err != nil {
		return err
	}
	lib, err := sn.ParseLibrary(data)
	if err != nil {
		return fmt.Errorf("curve library %s: %w", src, err)
	}
	ms, err := sn.ParseMeanStress(f.MeanStress)
	if err != nil {
		return err
	}
	libSum := sha256.Sum256(data)
	doc := map[string]any{
		"design_fatigue_factor": f.DesignFatigueFactor, "mean_stress": f.MeanStress, "allowable": f.Allowable,
		"combine": f.Combine, "sustained_allowable": f.SustainedAllowable, "gate_mpa": f.GateMPa(), "gate_ue": f.GateUE(),
		"hold_bin_mpa": f.HoldBinMPa, "hold_max_bins": f.HoldMaxBins, "window": f.Window, "min_dives": f.MinDives,
		"curves_source": src, "curves_sha256": fmt.Sprintf("%x", libSum),
		// Which build computed the figures: recorded, not hashed.
		"software": software(),
	}
	js, err := json.Marshal(doc) // map keys are sorted: canonical
	if err != nil {
		return err
	}
	hashDoc := map[string]any{}
	for k, v := range doc {
		if k != "curves_source" && k != "software" {
			hashDoc[k] = v
		}
	}
	hjs, _ := json.Marshal(hashDoc)
	h := sha256.Sum256(hjs)
	env := &fatigueEnv{lib: lib, libSource: src, settings: assess.Settings{DFF: f.DesignFatigueFactor, MeanStress: ms},
		limits: damage.Limits{Allowable: f.Allowable, SustainedAllowable: f.SustainedAllowable, Combine: damage.Combination(f.Combine)},
		life:   damage.LifeOptions{Window: f.Window, MinDives: f.MinDives}, hash: h[:], json: string(js),
		gateMPa: f.GateMPa(), gateUE: f.GateUE(), binMPa: f.HoldBinMPa, maxBins: f.HoldMaxBins}
	if env.limits.Combine == damage.CombineAdd {
		env.limits.SustainedAllowable = 0
	}
	if err := env.limits.Validate(); err != nil {
		return fmt.Errorf("fatigue limits: %w", err)
	}
	l.fat = env
	return nil
}

// checkCurves says whether every curve a spec names is in the library.
func (l *Ledger) checkCurves(h *spec.Hull) error {
	var errs []string
	for _, c := range h.Components {
		if _, err := l.fat.lib.Curve(c.Curve); err != nil {
			errs = append(errs, fmt.Sprintf("component %s: %v", c.Name, err))
		}
		if c.RuptureCurve != "" {
			if _, err := l.fat.lib.Rupture(c.RuptureCurve); err != nil {
				errs = append(errs, fmt.Sprintf("component %s: %v", c.Name, err))
			}
		}
	}
	if len(errs) > 0 {
		curves, rup := l.fat.lib.Names()
		return fmt.Errorf("hull spec %s: %s (library %s has curves %s; rupture curves %s)", h.Serial, strings.Join(errs, "; "), l.fat.libSource, strings.Join(curves, ", "), strings.Join(rup, ", "))
	}
	return nil
}

// componentSpecs turns a hull spec's components into the assessment's:
// each with its own mean-stress correction and design fatigue factor (the
// global ones apply where the spec gives none), and a component with
// transfer basis gauge with its calibration from the proof test the
// spec carries (spec.Hull.Proof), or the reason it has none.
func componentSpecs(h *spec.Hull) []assess.ComponentSpec {
	out := make([]assess.ComponentSpec, 0, len(h.Components))
	for _, c := range h.Components {
		cs := assess.ComponentSpec{Name: c.Name, Kind: c.Kind, Basis: c.Transfer.Basis, Factor: c.Transfer.FactorMPaPerMPa,
			Source: c.Transfer.Source, Curve: c.Curve, RuptureCurve: c.RuptureCurve, MeanStress: sn.MeanStress(c.MeanStress)}
		if c.DesignFatigueFactor != nil {
			cs.DFF = *c.DesignFatigueFactor
		}
		if c.Transfer.Basis == "gauge" {
			cs.Calibration, cs.NoCalibration = gaugeCalibration(h, c)
		}
		out = append(out, cs)
	}
	return out
}

// gaugeCalibration is the load transfer of component c calibrated from
// the strain gauges on it at the proof test h.Proof, by the biaxial
// plane-stress law of an isotropic wall (load.NewBiaxialGauge) with the
// component's modulus_gpa and poisson_ratio: on a cylinder its hoop and
// axial gauges, on a sphere its hoop and meridional gauges (one
// direction alone stands for both: the membrane stress of a sphere is
// equal in every direction). The gauges of one direction are averaged.
// Of the two in-plane factors the larger in magnitude is used, never the
// smaller. Without a calibration it returns the reason ("" when no proof
// test with strain is recorded).
func gaugeCalibration(h *spec.Hull, c spec.Component) (*load.Transfer, string) {
	if c.ModulusGPa == nil || c.PoissonRatio == nil {
		return nil, "the hull spec gives no modulus_gpa and poisson_ratio for the component"
	}
	p := h.Proof
	if p == nil {
		return nil, ""
	}
	// mean averages the compliances of the component's gauges in one
	// direction that the test measured.
	var notes []string
	mean := func(dir string) (float64, bool) {
		gs := h.StrainGaugesOn(c.Name, dir)
		var sum float64
		var used, missing []string
		for _, g := range gs {
			if v, ok := p.ComplianceUEPerMPa[g]; ok && !math.IsNaN(v) && !math.IsInf(v, 0) {
				sum += v
				used = append(used, g)
			} else {
				missing = append(missing, g)
			}
		}
		if len(missing) > 0 && len(used) > 0 {
			notes = append(notes, fmt.Sprintf("%s gauge %s has no compliance at that test and is left out", dir, strings.Join(missing, ", ")))
		}
		if len(used) == 0 {
			if len(gs) > 0 {
				notes = append(notes, fmt.Sprintf("the test measured no compliance on the %s gauge %s", dir, strings.Join(gs, ", ")))
			}
			return 0, false
		}
		m := sum / float64(len(used))
		notes = append(notes, fmt.Sprintf("%s %s %.6g µε/MPa", dir, strings.Join(used, "+"), m))
		return m, true
	}
	var c1, c2 float64
	var d1, d2 string
	if h.Shape == "sphere" {
		hoop, okH := mean("hoop")
		mer, okM := mean("meridional")
		switch {
		case okH && okM:
			c1, c2, d1, d2 = hoop, mer, "hoop", "meridional"
		case okH:
			c1, c2, d1, d2 = hoop, hoop, "hoop", "meridional (taken equal to hoop on a sphere)"
		case okM:
			c1, c2, d1, d2 = mer, mer, "meridional", "hoop (taken equal to meridional on a sphere)"
		default:
			return nil, fmt.Sprintf("%s: no hoop or meridional compliance of the component (%s)", p.Source, strings.Join(notes, "; "))
		}
	} else {
		hoop, okH := mean("hoop")
		axial, okA := mean("axial")
		if !okH || !okA {
			return nil, fmt.Sprintf("%s: a biaxial calibration needs a hoop and an axial compliance of the component (%s)", p.Source, strings.Join(notes, "; "))
		}
		c1, c2, d1, d2 = hoop, axial, "hoop", "axial"
	}
	e, nu := *c.ModulusGPa, *c.PoissonRatio
	desc := p.Source + ", " + strings.Join(notes, ", ")
	a, err := load.NewBiaxialGauge(e, nu, c1, c2, desc+"; "+d1+" direction governs")
	if err != nil {
		return nil, fmt.Sprintf("%s: %v", p.Source, err)
	}
	b, err := load.NewBiaxialGauge(e, nu, c2, c1, desc+"; "+d2+" direction governs")
	if err != nil {
		return nil, fmt.Sprintf("%s: %v", p.Source, err)
	}
	if math.Abs(b.Factor) > math.Abs(a.Factor) {
		return &b, ""
	}
	return &a, ""
}

func (l *Ledger) resolve(h *spec.Hull) ([]assess.Component, error) {
	g := assess.Geometry{Shape: h.Shape, InnerRadiusM: h.InnerRadiusM, WallM: h.WallThicknessM}
	return assess.Resolve(g, componentSpecs(h), l.fat.lib)
}
