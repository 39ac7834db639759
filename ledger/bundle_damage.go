package ledger

// Damage re-computed from a bundle, without the database: VerifyBundle
// gathers, from the canonical bytes of the bundle's links, each dive's
// pressure cycles (dive_cycles, series "pressure") and time at pressure
// (dive_holds), the hull's specs (hull_revision) and every assessment
// (assessment: its configuration JSON and per-component columns of dive
// ids with cyclic and sustained damage). For each dive's newest
// assessment it computes the dive's damage again with fatigue/assess and
// the shipped curve library (configs.CurvesYAML) and compares it with the
// recorded figures within BundleDamageRelTol. Only an assessment whose
// configuration names the shipped library's SHA-256 (curves_sha256) is
// re-computed; any other is noted "not re-computed", never compared.

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"

	"crypto"

	"github.com/google/uuid"

	"hulltally/configs"
	"hulltally/fatigue/assess"
	"hulltally/fatigue/load"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/sn"
	"hulltally/ledger/logfile"
	"hulltally/ledger/spec"
)

// BundleDamageRelTol is the relative tolerance within which a re-computed
// damage figure agrees with the recorded one: the same arithmetic on the
// same float64 inputs, so only summation order may differ.
const BundleDamageRelTol = 1e-9

// BundleDamageResult is the damage of a bundle's dives computed again
// from the bundle alone and compared with its assessments.
type BundleDamageResult struct {
	// CurvesSHA256 is the SHA-256 (hex) of the shipped curve library used
	// to re-compute.
	CurvesSHA256 string `json:"curves_sha256"`
	// Assessed is the number of dives with an assessment in the bundle;
	// Recomputed of them those whose damage was computed again.
	Assessed   int `json:"dives_assessed"`
	Recomputed int `json:"dives_recomputed"`
	// NotRecomputed lists the assessed dives whose damage could not be
	// computed again, each with the reason: their figures are not
	// vouched for by the re-computation.
	NotRecomputed []BundleDamageNote `json:"not_recomputed"`
	// TransferUnchecked counts component figures whose transfer factor
	// came from a gauge calibration, which the bundle cannot re-derive
	// (the damage is re-computed with the recorded factor).
	TransferUnchecked int `json:"transfer_unchecked"`
	// Components totals, per component, the figures of the re-computed
	// dives (recorded and re-computed).
	Components []BundleComponentDamage `json:"components"`
	// Disagreements counts figures that disagree; FirstDisagreement is
	// the first of them (nil when none).
	Disagreements     int                       `json:"disagreements"`
	FirstDisagreement *BundleDamageDisagreement `json:"first_disagreement"`
	// AllAgree: at least one dive was re-computed, every assessed dive
	// was, and every figure agrees.
	AllAgree bool `json:"all_agree"`
}

// BundleDamageNote is an assessed dive not re-computed, with the reason.
type BundleDamageNote struct {
	Dive   uuid.UUID `json:"dive"`
	Reason string    `json:"reason"`
}

// BundleComponentDamage is one component's damage summed over the
// re-computed dives: cyclic (factored Miner) and sustained (Robinson)
// damage, dimensionless, as recorded and as re-computed. Total is cyclic
// plus sustained.
type BundleComponentDamage struct {
	Component           string  `json:"component"`
	RecordedCyclic      float64 `json:"recorded_cyclic"`
	RecomputedCyclic    float64 `json:"recomputed_cyclic"`
	RecordedSustained   float64 `json:"recorded_sustained"`
	RecomputedSustained float64 `json:"recomputed_sustained"`
	RecordedTotal       float64 `json:"recorded_total"`
	RecomputedTotal     float64 `json:"recomputed_total"`
	// Agree: every figure of the component agrees (per dive).
	Agree bool `json:"agree"`
}

// BundleDamageDisagreement is a recorded figure the re-computation does
// not reproduce.
type BundleDamageDisagreement struct {
	// Seq and Assessment are the assessment's link and id.
	Seq        int64     `json:"seq"`
	Assessment string    `json:"assessment"`
	Dive       uuid.UUID `json:"dive"`
	Component  string    `json:"component"`
	// Figure is "cyclic", "sustained", "transfer factor", "transfer
	// basis", "curve" or "component".
	Figure     string  `json:"figure"`
	Recorded   float64 `json:"recorded"`
	Recomputed float64 `json:"recomputed"`
	Detail     string  `json:"detail,omitempty"`
}

func (d *BundleDamageDisagreement) String() string {
	s := fmt.Sprintf("damage re-computed from the bundle's cycles disagrees: dive %s, component %s, %s", d.Dive, d.Component, d.Figure)
	if d.Detail != "" {
		return s + ": " + d.Detail
	}
	return fmt.Sprintf("%s: recorded %.6g, re-computed %.6g", s, d.Recorded, d.Recomputed)
}

// BundleDamage verifies the bundle read from r under pub (VerifyBundle)
// and returns its re-computed damage. A bundle that does not verify is an
// error naming the problem (its damage is not re-computed, except that a
// disagreeing figure is returned with the error).
func BundleDamage(r io.Reader, pub crypto.PublicKey) (*BundleDamageResult, error) {
	res, err := VerifyBundle(r, pub)
	if err != nil {
		return nil, err
	}
	if !res.OK {
		return res.Damage, fmt.Errorf("the bundle does not verify: %s", res.Problem)
	}
	return res.Damage, nil
}

// checkHitRows checks a dive's hit rows (concatenated hitBytes) against
// the count and SHA-256 of its ae_hits record; it returns the hits.
func checkHitRows(data []byte, n int64, digest []byte) (int64, string) {
	sum := sha256.Sum256(data)
	if !bytes.Equal(sum[:], digest) {
		return 0, "the acoustic-emission hit rows do not match the SHA-256 in their record's canonical bytes (a hit was changed, added or removed)"
	}
	fs, err := decodeCanon(data)
	if err != nil {
		return 0, fmt.Sprintf("the acoustic-emission hit rows do not decode: %v", err)
	}
	const tags = "iiiffiff" // seq, t_ns, channel, amplitude, energy, counts, duration, rise
	var got int64
	for i := 0; i < len(fs); {
		if len(fs)-i < len(tags) {
			return 0, fmt.Sprintf("hit %d is cut short", got)
		}
		for j := range len(tags) {
			if fs[i+j].tag != tags[j] {
				return 0, fmt.Sprintf("hit %d is malformed", got)
			}
		}
		if fs[i].i != got {
			return 0, fmt.Sprintf("hit %d has seq %d: the hits are not in order from 0", got, fs[i].i)
		}
		i += len(tags)
		if i < len(fs) && fs[i].tag == 's' {
			if e, ok := logfile.ParseEvent(fs[i].s); !ok || e == logfile.EventHit {
				return 0, fmt.Sprintf("hit %d has an unknown event %q", got, fs[i].s)
			}
			i++
		}
		got++
	}
	if got != n {
		return 0, fmt.Sprintf("the record counts %d acoustic-emission hits; its rows hold %d", n, got)
	}
	return got, ""
}

// fieldReader reads decoded canonical fields in order, by tag.
type fieldReader struct {
	fs  []canonField
	err error
}

func (r *fieldReader) next(tag byte) canonField {
	if r.err != nil {
		return canonField{}
	}
	if len(r.fs) == 0 {
		r.err = errors.New("the record ends early")
		return canonField{}
	}
	f := r.fs[0]
	if f.tag != tag {
		r.err = fmt.Errorf("a field is %q where %q was expected", f.tag, tag)
		return canonField{}
	}
	r.fs = r.fs[1:]
	return f
}

func (r *fieldReader) str() string   { return r.next('s').s }
func (r *fieldReader) f64() float64  { return r.next('f').f }
func (r *fieldReader) i64() int64    { return r.next('i').i }
func (r *fieldReader) id() uuid.UUID { return r.next('u').u }
func (r *fieldReader) count() int    { n := r.i64(); r.checkCount(n); return int(max(n, 0)) }
func (r *fieldReader) checkCount(n int64) {
	if r.err == nil && (n < 0 || n > int64(len(r.fs))) {
		r.err = fmt.Errorf("a count %d runs past the record", n)
	}
}

// bundleCol is one component column of an assessment.
type bundleCol struct {
	component, basis string
	factor           float64
	curve, rupture   string
}

// bundleAssessment is an assessment record of the bundle.
type bundleAssessment struct {
	seq      int64
	id       uuid.UUID
	revision int64
	config   string
	cols     []bundleCol
}

// diveFigures is a dive's figures in an assessment, by column.
type diveFigures struct {
	asm               *bundleAssessment
	cyclic, sustained []float64
	recorded          []bool
}

// damageCollector gathers from a bundle's links what re-computing its
// damage needs.
type damageCollector struct {
	specs  map[int64]string
	cycles map[uuid.UUID][]rainflow.Cycle
	holds  map[uuid.UUID][]assess.Hold
	newest map[uuid.UUID]*diveFigures
	order  []uuid.UUID
}

func newDamageCollector() *damageCollector {
	return &damageCollector{specs: map[int64]string{}, cycles: map[uuid.UUID][]rainflow.Cycle{},
		holds: map[uuid.UUID][]assess.Hold{}, newest: map[uuid.UUID]*diveFigures{}}
}

// add takes one verified link's fields; it says why they do not decode
// as their kind ("" when they do, or the kind is not one it needs).
func (c *damageCollector) add(seq int64, kind string, fields []canonField) string {
	r := &fieldReader{fs: fields[1:]}
	switch kind {
	case "hull_revision":
		r.id()
		rev := r.i64()
		if len(fields) > 13 && fields[13].tag == 's' && r.err == nil {
			c.specs[rev] = fields[13].s
		}
		return ""
	case "dive_cycles":
		dive := r.id()
		ns := r.count()
		var pressure []rainflow.Cycle
		found := false
		for range ns {
			name := r.str()
			r.str()
			r.f64()
			n := r.count()
			cs := make([]rainflow.Cycle, 0, n)
			for range n {
				cs = append(cs, rainflow.Cycle{Range: r.f64(), Mean: r.f64(), Count: r.f64()})
			}
			if name == "pressure" {
				pressure, found = cs, true
			}
		}
		if r.err != nil || len(r.fs) != 0 {
			return fmt.Sprintf("the counted cycles' canonical bytes do not decode: %v", orErr(r.err))
		}
		if found {
			c.cycles[dive] = pressure
		}
	case "dive_holds":
		dive := r.id()
		r.f64()
		n := r.count()
		hs := make([]assess.Hold, 0, n)
		for range n {
			hs = append(hs, assess.Hold{LevelMPa: r.f64(), Seconds: r.f64()})
		}
		if r.err != nil || len(r.fs) != 0 {
			return fmt.Sprintf("the time at pressure's canonical bytes do not decode: %v", orErr(r.err))
		}
		c.holds[dive] = hs
	case "assessment":
		a := &bundleAssessment{seq: seq, id: r.id()}
		r.id()
		a.revision = r.i64()
		r.str()
		r.next('b')
		a.config = r.str()
		r.str()
		r.str()
		r.next('t')
		nc := r.count()
		type fig struct{ cy, su float64 }
		per := map[uuid.UUID][]*fig{}
		var dives []uuid.UUID
		for ci := range nc {
			col := bundleCol{component: r.str(), basis: r.str(), factor: r.f64(), curve: r.str(), rupture: r.str()}
			a.cols = append(a.cols, col)
			n := r.count()
			for range n {
				d, cy, su := r.id(), r.f64(), r.f64()
				if r.err != nil {
					break
				}
				fs, ok := per[d]
				if !ok {
					fs = make([]*fig, nc)
					per[d] = fs
					dives = append(dives, d)
				}
				fs[ci] = &fig{cy, su}
			}
		}
		if r.err != nil || len(r.fs) != 0 {
			return fmt.Sprintf("the assessment's canonical bytes do not decode: %v", orErr(r.err))
		}
		for _, d := range dives {
			df := &diveFigures{asm: a, cyclic: make([]float64, nc), sustained: make([]float64, nc), recorded: make([]bool, nc)}
			for ci, f := range per[d] {
				if f != nil {
					df.cyclic[ci], df.sustained[ci], df.recorded[ci] = f.cy, f.su, true
				}
			}
			if _, seen := c.newest[d]; !seen {
				c.order = append(c.order, d)
			}
			c.newest[d] = df
		}
	}
	return ""
}

func orErr(err error) error {
	if err == nil {
		return errors.New("trailing fields")
	}
	return err
}

// assessmentConfig is what the re-computation reads of an assessment's
// configuration JSON.
type assessmentConfig struct {
	DFF          float64 `json:"design_fatigue_factor"`
	MeanStress   string  `json:"mean_stress"`
	CurvesSHA256 string  `json:"curves_sha256"`
}

// agrees: equal within BundleDamageRelTol relative (exact for zero).
func agrees(a, b float64) bool {
	if a == b {
		return true
	}
	d := math.Abs(a - b)
	return !math.IsNaN(d) && d <= BundleDamageRelTol*math.Max(math.Abs(a), math.Abs(b))
}

// result re-computes every assessed dive's damage and compares.
func (c *damageCollector) result() *BundleDamageResult {
	libSum := sha256.Sum256(configs.CurvesYAML)
	out := &BundleDamageResult{CurvesSHA256: hex.EncodeToString(libSum[:]), NotRecomputed: []BundleDamageNote{}, Components: []BundleComponentDamage{}}
	lib, libErr := sn.ParseLibrary(configs.CurvesYAML)
	comps := map[string]*BundleComponentDamage{}
	disagree := func(x BundleDamageDisagreement) {
		out.Disagreements++
		if out.FirstDisagreement == nil {
			out.FirstDisagreement = &x
		}
		if cd := comps[x.Component]; cd != nil {
			cd.Agree = false
		}
	}
	for _, dive := range c.order {
		df := c.newest[dive]
		a := df.asm
		out.Assessed++
		note := func(format string, args ...any) {
			out.NotRecomputed = append(out.NotRecomputed, BundleDamageNote{Dive: dive, Reason: "not re-computed: " + fmt.Sprintf(format, args...)})
		}
		var cfg assessmentConfig
		if err := json.Unmarshal([]byte(a.config), &cfg); err != nil {
			note("assessment %s's configuration does not read: %v", a.id, err)
			continue
		}
		switch {
		case libErr != nil:
			note("the shipped curve library does not read: %v", libErr)
			continue
		case cfg.CurvesSHA256 == "":
			note("assessment %s does not name its curve library's SHA-256", a.id)
			continue
		case cfg.CurvesSHA256 != out.CurvesSHA256:
			note("the assessment used another curve library (SHA-256 %s; the shipped one is %s)", cfg.CurvesSHA256, out.CurvesSHA256)
			continue
		}
		ms, err := sn.ParseMeanStress(cfg.MeanStress)
		if err != nil {
			note("assessment %s: %v", a.id, err)
			continue
		}
		sj, ok := c.specs[a.revision]
		if !ok {
			note("the bundle holds no hull revision %d record, whose spec the assessment used", a.revision)
			continue
		}
		var h spec.Hull
		if err := json.Unmarshal([]byte(sj), &h); err != nil {
			note("the spec of hull revision %d does not read: %v", a.revision, err)
			continue
		}
		cycles, okC := c.cycles[dive]
		holds, okH := c.holds[dive]
		if !okC || !okH {
			note("the bundle holds no counted pressure cycles or time at pressure of the dive")
			continue
		}
		base := BundleDamageDisagreement{Seq: a.seq, Assessment: a.id.String(), Dive: dive}
		specComps := map[string]spec.Component{}
		for _, sc := range h.Components {
			specComps[sc.Name] = sc
		}
		ac := make([]assess.Component, 0, len(a.cols))
		bad := false
		for ci, col := range a.cols {
			x := base
			x.Component = col.component
			if comps[col.component] == nil {
				comps[col.component] = &BundleComponentDamage{Component: col.component, Agree: true}
			}
			sc, ok := specComps[col.component]
			if !ok {
				x.Figure, x.Detail = "component", fmt.Sprintf("the hull spec of revision %d has no such component", a.revision)
				disagree(x)
				bad = true
				continue
			}
			if !df.recorded[ci] {
				x.Figure, x.Detail = "component", "the dive's newest assessment records no figure for the component"
				disagree(x)
				bad = true
				continue
			}
			if col.curve != sc.Curve || col.rupture != sc.RuptureCurve {
				x.Figure, x.Detail = "curve", fmt.Sprintf("the assessment used curves %q and %q; the spec names %q and %q", col.curve, col.rupture, sc.Curve, sc.RuptureCurve)
				disagree(x)
				bad = true
				continue
			}
			if why, want := c.checkTransfer(&h, sc, col); why != "" {
				x.Figure, x.Detail, x.Recorded, x.Recomputed = "transfer factor", why, col.factor, want
				disagree(x)
				bad = true
				continue
			} else if col.basis == string(load.BasisGauge) {
				out.TransferUnchecked++
			}
			curve, err := lib.Curve(col.curve)
			if err != nil {
				x.Figure, x.Detail = "curve", err.Error()
				disagree(x)
				bad = true
				continue
			}
			comp := assess.Component{Name: col.component, Curve: curve,
				Transfer: load.Choice{Transfer: load.Transfer{Basis: load.Basis(col.basis), Factor: col.factor}},
				Own:      assess.Settings{MeanStress: sn.MeanStress(sc.MeanStress)}}
			if sc.DesignFatigueFactor != nil {
				comp.Own.DFF = *sc.DesignFatigueFactor
			}
			if col.rupture != "" {
				rup, err := lib.Rupture(col.rupture)
				if err != nil {
					x.Figure, x.Detail = "curve", err.Error()
					disagree(x)
					bad = true
					continue
				}
				comp.Rupture = &rup
			}
			ac = append(ac, comp)
		}
		if bad {
			continue
		}
		res, err := assess.DiveDamage(assess.Dive{PressureCycles: cycles, Holds: holds}, ac, assess.Settings{DFF: cfg.DFF, MeanStress: ms})
		if err != nil {
			note("%v", err)
			continue
		}
		out.Recomputed++
		for ci, r := range res {
			col := a.cols[ci]
			cd := comps[col.component]
			cd.RecordedCyclic += df.cyclic[ci]
			cd.RecomputedCyclic += r.Damage.Cyclic
			cd.RecordedSustained += df.sustained[ci]
			cd.RecomputedSustained += r.Damage.Sustained
			for _, f := range []struct {
				name     string
				rec, got float64
			}{{"cyclic damage", df.cyclic[ci], r.Damage.Cyclic}, {"sustained damage", df.sustained[ci], r.Damage.Sustained}} {
				if !agrees(f.rec, f.got) {
					x := base
					x.Component, x.Figure, x.Recorded, x.Recomputed = col.component, f.name, f.rec, f.got
					disagree(x)
				}
			}
		}
	}
	names := make([]string, 0, len(comps))
	for n := range comps {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		cd := comps[n]
		cd.RecordedTotal = cd.RecordedCyclic + cd.RecordedSustained
		cd.RecomputedTotal = cd.RecomputedCyclic + cd.RecomputedSustained
		out.Components = append(out.Components, *cd)
	}
	out.AllAgree = out.Recomputed > 0 && out.Recomputed == out.Assessed && out.Disagreements == 0
	return out
}

// checkTransfer says why the transfer an assessment recorded for a
// component is not the one its spec gives (with the expected factor), ""
// when it is or cannot be checked (a gauge calibration). A spec with a
// designer's factor is assessed with it (or a gauge calibration), never
// with Lamé; one without, with the shell's Lamé factor.
func (c *damageCollector) checkTransfer(h *spec.Hull, sc spec.Component, col bundleCol) (string, float64) {
	switch load.Basis(col.basis) {
	case load.BasisGauge:
		if sc.Transfer.Basis != "gauge" {
			return fmt.Sprintf("the assessment used a gauge calibration; the spec asks for %s", sc.Transfer.Basis), math.NaN()
		}
		return "", col.factor
	case load.BasisDesigner:
		if sc.Transfer.FactorMPaPerMPa == nil {
			return "the assessment used a designer's factor; the spec gives none", math.NaN()
		}
		if f := *sc.Transfer.FactorMPaPerMPa; !agrees(f, col.factor) {
			return fmt.Sprintf("recorded %.6g MPa/MPa, the spec's designer's factor is %.6g MPa/MPa", col.factor, f), f
		}
		return "", col.factor
	case load.BasisLame:
		if sc.Transfer.FactorMPaPerMPa != nil {
			return fmt.Sprintf("the assessment used Lamé; the spec gives a designer's factor %.6g MPa/MPa", *sc.Transfer.FactorMPaPerMPa), *sc.Transfer.FactorMPaPerMPa
		}
		lc := load.CylinderHoopInner
		if h.Shape == "sphere" {
			lc = load.SphereHoopInner
		}
		t, err := load.NewLame(lc, h.InnerRadiusM, h.InnerRadiusM+h.WallThicknessM)
		if err != nil {
			return fmt.Sprintf("the spec's Lamé factor does not compute: %v", err), math.NaN()
		}
		if !agrees(t.Factor, col.factor) {
			return fmt.Sprintf("recorded %.6g MPa/MPa, the spec's Lamé factor is %.6g MPa/MPa", col.factor, t.Factor), t.Factor
		}
		return "", col.factor
	}
	return fmt.Sprintf("unknown transfer basis %q", col.basis), math.NaN()
}
