package ledger

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/damage"
	"hulltally/fatigue/fitness"
	"hulltally/fatigue/inforce"
	"hulltally/fatigue/load"
	"hulltally/fatigue/rainflow"
	"hulltally/fatigue/seawater"
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

// series is one counted series of a dive.
type series struct {
	name, unit string
	gate       float64
	cycles     []rainflow.Cycle
}

func cyclesCanon(dive uuid.UUID, ss []series) []byte {
	c := newCanon("dive_cycles")
	c.uuid(dive)
	c.i64(int64(len(ss)))
	for _, s := range ss {
		c.str(s.name)
		c.str(s.unit)
		c.f64(s.gate)
		c.i64(int64(len(s.cycles)))
		for _, y := range s.cycles {
			c.f64(y.Range)
			c.f64(y.Mean)
			c.f64(y.Count)
		}
	}
	return c.b
}

func holdsCanon(dive uuid.UUID, bin float64, hs []assess.Hold) []byte {
	c := newCanon("dive_holds")
	c.uuid(dive)
	c.f64(bin)
	c.i64(int64(len(hs)))
	for _, h := range hs {
		c.f64(h.LevelMPa)
		c.f64(h.Seconds)
	}
	return c.b
}

func splitCycles(cs []rainflow.Cycle) (r, m, n []float64) {
	r, m, n = make([]float64, len(cs)), make([]float64, len(cs)), make([]float64, len(cs))
	for i, c := range cs {
		r[i], m[i], n[i] = c.Range, c.Mean, c.Count
	}
	return
}

func joinCycles(r, m, n []float64) []rainflow.Cycle {
	out := make([]rainflow.Cycle, len(r))
	for i := range r {
		out[i] = rainflow.Cycle{Range: r[i], Mean: m[i], Count: n[i]}
	}
	return out
}

func splitHolds(hs []assess.Hold) (lv, s []float64) {
	lv, s = make([]float64, len(hs)), make([]float64, len(hs))
	for i, h := range hs {
		lv[i], s[i] = h.LevelMPa, h.Seconds
	}
	return
}

// storeCounts stores a dive's counted series and holds in tx.
func storeCounts(ctx context.Context, tx pgx.Tx, dive, hull uuid.UUID, ss []series, bin float64, hs []assess.Hold) ([]chainRec, error) {
	sort.Slice(ss, func(i, j int) bool { return ss[i].name < ss[j].name })
	rows := make([][]any, len(ss))
	for i, s := range ss {
		r, m, n := splitCycles(s.cycles)
		rows[i] = []any{[16]byte(dive), [16]byte(hull), s.name, s.unit, s.gate, r, m, n}
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"dive_cycles"}, []string{"dive_id", "hull_id", "series", "unit", "gate", "ranges", "means", "counts"}, pgx.CopyFromRows(rows)); err != nil {
		return nil, fmt.Errorf("storing counted cycles: %w", err)
	}
	lv, sec := splitHolds(hs)
	if _, err := tx.Exec(ctx, "INSERT INTO dive_holds (dive_id, hull_id, bin_mpa, levels, seconds) VALUES ($1,$2,$3,$4,$5)", dive, hull, bin, lv, sec); err != nil {
		return nil, fmt.Errorf("storing time at pressure: %w", err)
	}
	return []chainRec{
		{"dive_cycles", dive.String(), cyclesCanon(dive, ss)},
		{"dive_holds", dive.String(), holdsCanon(dive, bin, hs)},
	}, nil
}

// compDamage is one component's column of an assessment: the damage of
// every assessed dive, in parallel arrays.
type compDamage struct {
	component, basis    string
	factor              float64
	curve, ruptureCurve string
	dives               []uuid.UUID
	cyclic, sustained   []float64
	// rec is what the assessment records of the component beside its
	// damage (in the assessment's config_json).
	rec componentRecord
}

// componentRecord is one component's settings as an assessment used them,
// kept in the "components" list of the assessment's config_json: the
// effective design fatigue factor and mean-stress correction with where
// they come from, the load transfer with why it was chosen, and the
// warnings on the component.
type componentRecord struct {
	Name                string   `json:"name"`
	Basis               string   `json:"transfer_basis"`
	Factor              float64  `json:"transfer_factor_mpa_per_mpa"`
	TransferDescription string   `json:"transfer_description"`
	TransferReason      string   `json:"transfer_reason"`
	DesignFatigueFactor float64  `json:"design_fatigue_factor"`
	MeanStress          string   `json:"mean_stress"`
	SettingsReason      string   `json:"settings_reason"`
	Warnings            []string `json:"warnings"`
}

// setSettings records a component's effective settings.
func (r *componentRecord) setSettings(e assess.Effective) {
	r.DesignFatigueFactor, r.MeanStress, r.SettingsReason = e.DFF, string(e.MeanStress), e.Reason
}

// withComponents returns the configuration JSON cfg with the components'
// records added as "components" (keys sorted: canonical). Records without
// settings (no dive assessed and none set) are written as they are.
func withComponents(cfg string, cols []compDamage) string {
	doc := map[string]any{}
	if err := json.Unmarshal([]byte(cfg), &doc); err != nil {
		return cfg
	}
	recs := make([]componentRecord, len(cols))
	for i := range cols {
		recs[i] = cols[i].rec
		if recs[i].Warnings == nil {
			recs[i].Warnings = []string{}
		}
	}
	doc["components"] = recs
	b, err := json.Marshal(doc)
	if err != nil {
		return cfg
	}
	return string(b)
}

// componentRecords reads the "components" list of an assessment's
// config_json, by name (empty for assessments recorded before it was
// kept).
func componentRecords(cfg string) map[string]componentRecord {
	var doc struct {
		Components []componentRecord `json:"components"`
	}
	out := map[string]componentRecord{}
	if json.Unmarshal([]byte(cfg), &doc) != nil {
		return out
	}
	for _, r := range doc.Components {
		out[r.Name] = r
	}
	return out
}

func compDamageBytes(c *canon, d *compDamage) {
	c.str(d.component)
	c.str(d.basis)
	c.f64(d.factor)
	c.str(d.curve)
	c.str(d.ruptureCurve)
	c.i64(int64(len(d.dives)))
	for i := range d.dives {
		c.uuid(d.dives[i])
		c.f64(d.cyclic[i])
		c.f64(d.sustained[i])
	}
}

// newColumns makes an assessment's empty columns for the components.
func newColumns(comps []assess.Component, capacity int) []compDamage {
	cols := make([]compDamage, len(comps))
	for i, c := range comps {
		rup := ""
		if c.Rupture != nil {
			rup = c.Rupture.Name
		}
		cols[i] = compDamage{component: c.Name, basis: string(c.Transfer.Transfer.Basis), factor: c.Transfer.Transfer.Factor,
			curve: c.Curve.Name, ruptureCurve: rup, dives: make([]uuid.UUID, 0, capacity),
			cyclic: make([]float64, 0, capacity), sustained: make([]float64, 0, capacity),
			rec: componentRecord{Name: c.Name, Basis: string(c.Transfer.Transfer.Basis), Factor: c.Transfer.Transfer.Factor,
				TransferDescription: c.Transfer.Transfer.Description, TransferReason: c.Transfer.Reason,
				Warnings: append([]string{}, c.Warnings...)}}
	}
	return cols
}

// addDive appends one dive's results (in the components' order).
func addDive(cols []compDamage, dive uuid.UUID, res []assess.Result) {
	for i, r := range res {
		c := &cols[i]
		c.rec.setSettings(r.Settings)
		c.dives = append(c.dives, dive)
		c.cyclic = append(c.cyclic, r.Damage.Cyclic)
		c.sustained = append(c.sustained, r.Damage.Sustained)
	}
}

type assessmentHead struct {
	id         uuid.UUID
	hull       uuid.UUID
	revision   int32
	kind       string
	configHash []byte
	configJSON string
	reason     string
	actor      string
	at         time.Time
}

func assessmentCanon(a *assessmentHead, cols []compDamage) []byte {
	c := newCanon("assessment")
	c.uuid(a.id)
	c.uuid(a.hull)
	c.i64(int64(a.revision))
	c.str(a.kind)
	c.bytes(a.configHash)
	c.str(a.configJSON)
	c.str(a.reason)
	c.str(a.actor)
	c.time(a.at)
	c.i64(int64(len(cols)))
	for i := range cols {
		compDamageBytes(c, &cols[i])
	}
	return c.b
}

// storeAssessment stores an assessment and its columns (sorted here by
// component, the order verify reads them in) and returns its chain record.
func storeAssessment(ctx context.Context, tx pgx.Tx, a *assessmentHead, cols []compDamage) (chainRec, error) {
	sort.Slice(cols, func(i, j int) bool { return cols[i].component < cols[j].component })
	a.configJSON = withComponents(a.configJSON, cols)
	if _, err := tx.Exec(ctx, `INSERT INTO assessments (id, hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at)
		VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9)`, a.id, a.hull, a.revision, a.kind, a.configHash, a.configJSON, a.reason, a.actor, a.at); err != nil {
		return chainRec{}, fmt.Errorf("storing assessment: %w", err)
	}
	rows := make([][]any, len(cols))
	for i := range cols {
		c := &cols[i]
		ids := make([][16]byte, len(c.dives))
		for k, d := range c.dives {
			ids[k] = d
		}
		rows[i] = []any{[16]byte(a.id), [16]byte(a.hull), c.component, c.basis, c.factor, c.curve, c.ruptureCurve, ids, c.cyclic, c.sustained}
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"assessment_damage"}, []string{"assessment_id", "hull_id", "component", "basis", "factor", "curve", "rupture_curve", "dive_ids", "cyclic", "sustained"}, pgx.CopyFromRows(rows)); err != nil {
		return chainRec{}, fmt.Errorf("storing assessment rows: %w", err)
	}
	return chainRec{"assessment", a.id.String(), assessmentCanon(a, cols)}, nil
}

// AssessOptions say who re-assesses and why.
type AssessOptions struct {
	// Hull limits the assessment to one serial; empty means every hull.
	Hull   string
	Reason string
	Actor  string
}

// AssessResult is one hull's new assessment.
type AssessResult struct {
	Hull         string    `json:"hull"`
	AssessmentID uuid.UUID `json:"assessment_id"`
	ConfigHash   string    `json:"config_hash"`
	Dives        int       `json:"dives"`
	// CountedFromRaw is the number of dives whose cycles had to be counted
	// from the raw readings first (logged before cycles were stored).
	CountedFromRaw int      `json:"counted_from_raw"`
	Previous       *Damages `json:"previous"`
	Current        *Damages `json:"current"`
}

// Assess re-assesses hulls from their stored cycles (no raw readings are
// read, except to count dives logged before cycles were stored) with the
// configuration in force, appending a new assessment per hull in one
// transaction; the earlier ones stay on record.
func (l *Ledger) Assess(ctx context.Context, o AssessOptions) ([]AssessResult, error) {
	if err := l.writable("Assess"); err != nil {
		return nil, err
	}
	if strings.TrimSpace(o.Actor) == "" {
		return nil, fmt.Errorf("assess: the actor is required")
	}
	if o.Reason == "" {
		o.Reason = "re-assessment"
	}
	var hulls []*Hull
	if o.Hull != "" {
		h, err := l.Hull(ctx, o.Hull)
		if err != nil {
			return nil, inputErr(err)
		}
		hulls = []*Hull{h}
	} else {
		var err error
		if hulls, err = l.allHulls(ctx); err != nil {
			return nil, err
		}
	}
	if len(hulls) == 0 {
		return nil, nil
	}
	ids := make([][16]byte, len(hulls))
	byID := map[uuid.UUID]int{}
	comps := make([][]assess.Component, len(hulls))
	asr := make([]*assess.Assessor, len(hulls))
	for i, h := range hulls {
		ids[i] = h.ID
		byID[h.ID] = i
		var err error
		if comps[i], err = l.resolve(h.Spec); err != nil {
			return nil, inputErr(fmt.Errorf("hull %s: %w", h.Serial, err))
		}
		if asr[i], err = assess.NewAssessor(comps[i], l.fat.settings); err != nil {
			return nil, inputErr(fmt.Errorf("hull %s: %w", h.Serial, err))
		}
	}
	prev, err := l.hullDamages(ctx, hulls)
	if err != nil {
		return nil, err
	}
	out := make([]AssessResult, len(hulls))
	// Dives logged before cycles were stored are counted from their raw
	// readings first.
	missing, err := l.hullsMissingCounts(ctx, ids)
	if err != nil {
		return nil, err
	}
	for _, id := range missing {
		i := byID[id]
		if out[i].CountedFromRaw, err = l.backfillCounts(ctx, hulls[i]); err != nil {
			return nil, fmt.Errorf("assess %s: %w", hulls[i].Serial, err)
		}
	}
	dmg := make([][]compDamage, len(hulls))
	for i := range hulls {
		dmg[i] = newColumns(comps[i], 1024)
		for k, e := range asr[i].Settings() {
			dmg[i][k].rec.setSettings(e)
		}
	}
	perDive := make([][]DiveDamage, len(hulls))
	// One goroutine reads and decodes the stored cycles, this one computes.
	type item struct {
		hull  int
		id    uuid.UUID
		start time.Time
		dive  assess.Dive
	}
	items := make(chan item, 256)
	readErr := make(chan error, 1)
	rctx, cancel := context.WithCancel(ctx)
	defer cancel()
	go func() {
		defer close(items)
		readErr <- pgx.BeginTxFunc(rctx, l.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
			if _, err := tx.Exec(rctx, "SET LOCAL work_mem = '64MB'"); err != nil {
				return err
			}
			rows, err := tx.Query(rctx, `SELECT d.hull_id, d.id, d.start_time, c.ranges, c.means, c.counts, coalesce(h.levels, '{}'), coalesce(h.seconds, '{}')
				FROM dives d JOIN dive_cycles c ON c.dive_id = d.id AND c.series = 'pressure'
				LEFT JOIN dive_holds h ON h.dive_id = d.id
				WHERE d.hull_id = ANY($1)`, ids)
			if err != nil {
				return fmt.Errorf("assess: reading cycles: %w", err)
			}
			defer rows.Close()
			var rg, mn, ct, lv, sec []float64
			var hullID uuid.UUID
			for rows.Next() {
				var it item
				if err := rows.Scan(&hullID, &it.id, &it.start, &rg, &mn, &ct, &lv, &sec); err != nil {
					return err
				}
				it.hull = byID[hullID]
				it.dive.PressureCycles = joinCyclesInto(nil, rg, mn, ct)
				it.dive.Holds = make([]assess.Hold, len(lv))
				for k := range lv {
					it.dive.Holds[k] = assess.Hold{LevelMPa: lv[k], Seconds: sec[k]}
				}
				select {
				case items <- it:
				case <-rctx.Done():
					return rctx.Err()
				}
			}
			return rows.Err()
		})
	}()
	var cerr error
	for it := range items {
		if cerr != nil {
			continue
		}
		res, err := asr[it.hull].Dive(it.dive)
		if err != nil {
			cerr = fmt.Errorf("assess %s dive %s: %w", hulls[it.hull].Serial, it.id, err)
			cancel()
			continue
		}
		addDive(dmg[it.hull], it.id, res)
		dd := DiveDamage{Dive: it.id, Start: it.start, Damage: make(map[string]damage.Damage, len(res))}
		for _, r := range res {
			dd.Damage[r.Component] = r.Damage
		}
		perDive[it.hull] = append(perDive[it.hull], dd)
	}
	if err := <-readErr; cerr == nil && err != nil {
		cerr = err
	}
	if cerr != nil {
		return nil, cerr
	}
	for i := range perDive {
		sort.Slice(perDive[i], func(a, b int) bool {
			x, y := perDive[i][a], perDive[i][b]
			if !x.Start.Equal(y.Start) {
				return x.Start.Before(y.Start)
			}
			return bytes.Compare(x.Dive[:], y.Dive[:]) < 0
		})
	}
	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, err
	}
	defer tx.Rollback(ctx)
	at := now()
	heads := make([]*assessmentHead, len(hulls))
	for i, h := range hulls {
		heads[i] = &assessmentHead{id: uuid.New(), hull: h.ID, revision: h.Revision, kind: "reassess", configHash: l.fat.hash,
			configJSON: l.fat.json, reason: o.Reason, actor: o.Actor, at: at}
		rec, err := storeAssessment(ctx, tx, heads[i], dmg[i])
		if err != nil {
			return nil, fmt.Errorf("assess %s: %w", h.Serial, err)
		}
		if _, err := appendChain(ctx, tx, h.ID, []chainRec{rec}, at); err != nil {
			return nil, err
		}
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("assess: commit: %w", err)
	}
	for i, h := range hulls {
		cur := l.newDamages(h)
		cur.PerDive = perDive[i]
		for ci, c := range comps[i] {
			m := &cur.Components[ci]
			m.Basis, m.Factor, m.Curve = string(c.Transfer.Transfer.Basis), c.Transfer.Transfer.Factor, c.Curve.Name
			if c.Rupture != nil {
				m.RuptureCurve = c.Rupture.Name
			}
			// dmg[i] is sorted by component now; find this one's record.
			for k := range dmg[i] {
				if dmg[i][k].component == c.Name {
					m.setRecord(dmg[i][k].rec)
				}
			}
		}
		cur.Assessments = prev[i].Assessments + 1
		cur.ConfigHash = fmt.Sprintf("%x", l.fat.hash)
		if err := l.finishDamages(h, cur); err != nil {
			return nil, err
		}
		out[i].Hull, out[i].AssessmentID, out[i].ConfigHash = h.Serial, heads[i].id, cur.ConfigHash
		out[i].Dives, out[i].Previous, out[i].Current = len(perDive[i]), prev[i], cur
	}
	return out, nil
}

// hullsMissingCounts lists the hulls that have dives without stored cycles.
func (l *Ledger) hullsMissingCounts(ctx context.Context, ids [][16]byte) ([]uuid.UUID, error) {
	rows, err := l.db.Query(ctx, `SELECT DISTINCT d.hull_id FROM dives d LEFT JOIN dive_cycles c ON c.dive_id = d.id AND c.series = 'pressure'
		WHERE d.hull_id = ANY($1) AND c.dive_id IS NULL`, ids)
	if err != nil {
		return nil, fmt.Errorf("looking for dives without counted cycles: %w", err)
	}
	defer rows.Close()
	var out []uuid.UUID
	for rows.Next() {
		var id uuid.UUID
		if err := rows.Scan(&id); err != nil {
			return nil, err
		}
		out = append(out, id)
	}
	return out, rows.Err()
}

func joinCyclesInto(dst []rainflow.Cycle, r, m, n []float64) []rainflow.Cycle {
	for i := range r {
		dst = append(dst, rainflow.Cycle{Range: r[i], Mean: m[i], Count: n[i]})
	}
	return dst
}

// allHulls returns every hull with its spec in force, by serial.
func (l *Ledger) allHulls(ctx context.Context) ([]*Hull, error) {
	rows, err := l.db.Query(ctx, `SELECT DISTINCT ON (h.serial COLLATE "C") h.id, h.serial, h.recorded_at, r.revision, r.spec_json, r.recorded_at, r.reason, r.actor
		FROM hulls h JOIN hull_revisions r ON r.hull_id = h.id
		ORDER BY h.serial COLLATE "C", r.revision DESC`)
	if err != nil {
		return nil, fmt.Errorf("listing hulls: %w", err)
	}
	defer rows.Close()
	var out []*Hull
	for rows.Next() {
		h := &Hull{}
		var js string
		if err := rows.Scan(&h.ID, &h.Serial, &h.RecordedAt, &h.Revision, &js, &h.RevisedAt, &h.Reason, &h.Actor); err != nil {
			return nil, err
		}
		h.Spec = new(spec.Hull)
		if err := json.Unmarshal([]byte(js), h.Spec); err != nil {
			return nil, fmt.Errorf("hull %s: stored spec: %w", h.Serial, err)
		}
		out = append(out, h)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows.Close()
	for _, h := range out {
		if err := attachProof(ctx, l.db, h); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// Num is a damage figure that prints +Inf (a static overload) as the
// string "inf" in JSON instead of failing.
type Num float64

// MarshalJSON implements json.Marshaler.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsInf(f, 0) || math.IsNaN(f) {
		// Not a number a reader can use: null, and the record beside it
		// says why (an overload, a value not established).
		return []byte(`null`), nil
	}
	return json.Marshal(f)
}

// ComponentDamage is a component's cumulative damage.
type ComponentDamage struct {
	Name            string  `json:"name"`
	CyclicDamage    Num     `json:"cyclic_damage"`
	SustainedDamage Num     `json:"sustained_damage"`
	Allowable       float64 `json:"allowable"`
	// Ratio is the damage against the allowable (1 = allowable reached).
	Ratio Num `json:"ratio"`
	// ProofTests is the damage charged for proof tests recorded without
	// samples (included in the totals), nil when there are none.
	ProofTests *ProofDamage `json:"proof_tests,omitempty"`
	// Basis, Factor and Curve are what the newest assessment used.
	Basis        string  `json:"transfer_basis"`
	Factor       float64 `json:"transfer_factor_mpa_per_mpa"`
	Curve        string  `json:"curve"`
	RuptureCurve string  `json:"rupture_curve,omitempty"`
	// TransferDescription states the load transfer's basis in words (for
	// a gauge calibration: the proof test, the gauges, E and ν), and
	// TransferReason why that basis was used (for a fallback from gauge:
	// why no calibration was available).
	TransferDescription string `json:"transfer_description,omitempty"`
	TransferReason      string `json:"transfer_reason,omitempty"`
	// DesignFatigueFactor and MeanStress are the effective design fatigue
	// factor and mean-stress correction of this component in the newest
	// assessment used (the component's own from the hull spec, or the
	// global one), SettingsReason where each comes from; the factor is
	// null when that assessment did not record it (recorded before the
	// settings were kept per component), and SettingsReason says so.
	DesignFatigueFactor *float64 `json:"design_fatigue_factor"`
	MeanStress          string   `json:"mean_stress"`
	SettingsReason      string   `json:"settings_reason"`
	// Warnings are remarks on the component that do not stop the
	// assessment (a curve in air for an immersed part, a gauge
	// calibration far from the designer's factor).
	Warnings []string `json:"warnings"`
	// Unassessed counts dives with no damage for this component.
	Unassessed int `json:"unassessed_dives"`
	// Prior is damage carried over from an earlier record (in the totals).
	Prior *PriorDamage `json:"prior_damage,omitempty"`
}

// setRecord shows the settings an assessment recorded for the component.
func (c *ComponentDamage) setRecord(r componentRecord) {
	c.TransferDescription, c.TransferReason = r.TransferDescription, r.TransferReason
	c.Warnings = append([]string{}, r.Warnings...)
	if r.SettingsReason == "" {
		c.DesignFatigueFactor, c.MeanStress = nil, ""
		c.SettingsReason = "not recorded: the assessment in force predates per-component settings (run hulltally assess)"
		return
	}
	f := r.DesignFatigueFactor
	c.DesignFatigueFactor, c.MeanStress, c.SettingsReason = &f, r.MeanStress, r.SettingsReason
}

// PriorDamage is damage carried over from an earlier record.
type PriorDamage struct {
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Source    string `json:"source"`
}

// Damages are a hull's cumulative damage and remaining life.
type Damages struct {
	DiveCount       int               `json:"dive_count"`
	Components      []ComponentDamage `json:"components"`
	Governing       string            `json:"governing_component"`
	GoverningRatio  Num               `json:"governing_ratio"`
	RemainingDives  *int64            `json:"remaining_dives"`
	RemainingStatus string            `json:"remaining_status"`
	RemainingReason string            `json:"remaining_reason"`
	// RemainingMoreThan is true when RemainingDives is the horizon and the
	// life left is more than that.
	RemainingMoreThan bool `json:"remaining_more_than"`
	// RemainingBasis says which figure governs: recent_mean, design_dive,
	// qualified_cycles or current_damage.
	RemainingBasis string `json:"remaining_basis,omitempty"`
	// RemainingAtRecentMean and RemainingAtDesignDive are the two
	// projections (null when not evaluated); the smaller is shown.
	RemainingAtRecentMean *int64 `json:"remaining_at_recent_mean"`
	RemainingAtDesignDive *int64 `json:"remaining_at_design_dive"`
	// RemainingAtRecentMeanMoreThan and RemainingAtDesignDiveMoreThan are
	// true when that projection is the horizon and the life it gives is
	// more than that.
	RemainingAtRecentMeanMoreThan bool `json:"remaining_at_recent_mean_more_than"`
	RemainingAtDesignDiveMoreThan bool `json:"remaining_at_design_dive_more_than"`
	// LimitRatio is the ratio of the allowable the life is projected to
	// (the damage rule's hold level).
	LimitRatio float64 `json:"remaining_limit_ratio"`
	// DesignDive describes the design dive of the projection.
	DesignDive          string  `json:"design_dive,omitempty"`
	ConfigHash          string  `json:"config_hash,omitempty"`
	Assessments         int     `json:"assessments"`
	Combine             string  `json:"combine"`
	DesignFatigueFactor float64 `json:"design_fatigue_factor"`
	MeanStress          string  `json:"mean_stress"`
	// proofTests are the pressures of the hull's proof tests recorded
	// without samples: each is charged as one cycle to its pressure with
	// proof.hold_min at it (read by hullDamages, summed by
	// finishDamages).
	proofTests []float64
	// PerDive is each dive's damage in dive order (for reports), by
	// component name.
	PerDive []DiveDamage `json:"-"`
}

// DiveDamage is one dive's damage per component in the assessment in force.
type DiveDamage struct {
	Dive   uuid.UUID
	Start  time.Time
	Damage map[string]damage.Damage
}

// HullDamage sums the assessment in force of every dive of the hull.
func (l *Ledger) HullDamage(ctx context.Context, h *Hull) (*Damages, error) {
	ds, err := l.hullDamages(ctx, []*Hull{h})
	if err != nil {
		return nil, err
	}
	return ds[0], nil
}

// hullDamages is HullDamage for several hulls with one query each for
// the damage rows and the assessment counts.
func (l *Ledger) hullDamages(ctx context.Context, hulls []*Hull) ([]*Damages, error) {
	ids := make([][16]byte, len(hulls))
	byID := map[uuid.UUID]int{}
	out := make([]*Damages, len(hulls))
	for i, h := range hulls {
		ids[i] = h.ID
		byID[h.ID] = i
		out[i] = l.newDamages(h)
	}
	prows, err := l.db.Query(ctx, `SELECT hull_id, pressure_mpa FROM proof_tests WHERE hull_id = ANY($1) AND dive_id IS NULL ORDER BY hull_id, at`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading proof tests: %w", err)
	}
	for prows.Next() {
		var hullID uuid.UUID
		var p float64
		if err := prows.Scan(&hullID, &p); err != nil {
			prows.Close()
			return nil, err
		}
		out[byID[hullID]].proofTests = append(out[byID[hullID]].proofTests, p)
	}
	prows.Close()
	if err := prows.Err(); err != nil {
		return nil, err
	}
	rows, err := l.db.Query(ctx, `SELECT hull_id, id, start_time FROM dives d WHERE hull_id = ANY($1) AND `+notVoided+` ORDER BY hull_id, start_time, id`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading dives: %w", err)
	}
	for rows.Next() {
		var hullID, id uuid.UUID
		var start time.Time
		if err := rows.Scan(&hullID, &id, &start); err != nil {
			rows.Close()
			return nil, err
		}
		i := byID[hullID]
		out[i].PerDive = append(out[i].PerDive, DiveDamage{Dive: id, Start: start, Damage: map[string]damage.Damage{}})
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	// Newest assessment first: a dive takes its damage from the newest
	// assessment that covers it.
	rows, err = l.db.Query(ctx, `SELECT a.hull_id, a.seq, a.id, ad.component, ad.basis, ad.factor, ad.curve, ad.rupture_curve, ad.dive_ids, ad.cyclic, ad.sustained
		FROM assessments a JOIN assessment_damage ad ON ad.assessment_id = a.id
		WHERE a.hull_id = ANY($1) ORDER BY a.hull_id, a.seq DESC, ad.component`, ids)
	if err != nil {
		return nil, fmt.Errorf("reading damage: %w", err)
	}
	claimers := make([]*inforce.Claimer[uuid.UUID], len(hulls))
	for i := range claimers {
		ids := make([]uuid.UUID, len(out[i].PerDive))
		for p := range out[i].PerDive {
			ids[p] = out[i].PerDive[p].Dive
		}
		comps := make([]string, len(out[i].Components))
		for k := range out[i].Components {
			comps[k] = out[i].Components[k].Name
		}
		claimers[i] = inforce.New(ids, comps)
	}
	var group []compDamage
	groupHull, groupSeq := -1, int64(-1)
	var groupID uuid.UUID
	// recFrom is the assessment each shown component's settings come from.
	var recFrom []recRef
	flush := func() {
		if groupHull < 0 {
			return
		}
		o := out[groupHull]
		cols := make([]inforce.Column[uuid.UUID], len(group))
		for n, g := range group {
			cols[n] = inforce.Column[uuid.UUID]{Component: g.component, Dives: g.dives, Cyclic: g.cyclic, Sustained: g.sustained}
		}
		used := claimers[groupHull].Claim(cols)
		for n, g := range group {
			k := -1
			for j := range o.Components {
				if o.Components[j].Name == g.component {
					k = j
				}
			}
			if k < 0 || !used[n] {
				continue
			}
			if o.Components[k].Basis == "" {
				c := &o.Components[k]
				c.Basis, c.Factor, c.Curve, c.RuptureCurve = g.basis, g.factor, g.curve, g.ruptureCurve
				recFrom = append(recFrom, recRef{groupHull, k, groupID})
			}
		}
		group = group[:0]
	}
	for rows.Next() {
		var hullID, aID uuid.UUID
		var seq int64
		var g compDamage
		var dives [][16]byte
		if err := rows.Scan(&hullID, &seq, &aID, &g.component, &g.basis, &g.factor, &g.curve, &g.ruptureCurve, &dives, &g.cyclic, &g.sustained); err != nil {
			rows.Close()
			return nil, err
		}
		i := byID[hullID]
		if i != groupHull || seq != groupSeq {
			flush()
			groupHull, groupSeq, groupID = i, seq, aID
		}
		g.dives = make([]uuid.UUID, len(dives))
		for k, d := range dives {
			g.dives[k] = d
		}
		group = append(group, g)
	}
	flush()
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	for i := range out {
		for p, dm := range claimers[i].Damage() {
			out[i].PerDive[p].Damage = dm
		}
	}
	if err := l.showRecords(ctx, out, recFrom); err != nil {
		return nil, err
	}
	rows, err = l.db.Query(ctx, `SELECT DISTINCT ON (hull_id) hull_id, count(*) OVER (PARTITION BY hull_id), config_hash
		FROM assessments WHERE hull_id = ANY($1) ORDER BY hull_id, seq DESC`, ids)
	if err != nil {
		return nil, err
	}
	for rows.Next() {
		var hullID uuid.UUID
		var n int
		var hash []byte
		if err := rows.Scan(&hullID, &n, &hash); err != nil {
			rows.Close()
			return nil, err
		}
		o := out[byID[hullID]]
		o.Assessments, o.ConfigHash = n, fmt.Sprintf("%x", hash)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	for i, h := range hulls {
		if err := l.finishDamages(h, out[i]); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// recRef names the assessment a shown component's figures come from:
// out[hull].Components[comp] from assessment id.
type recRef struct {
	hull, comp int
	id         uuid.UUID
}

// showRecords sets each referenced component's settings from the records
// of the assessment it was shown from (one query for all of them).
func (l *Ledger) showRecords(ctx context.Context, out []*Damages, refs []recRef) error {
	var ids [][16]byte
	seen := map[uuid.UUID]bool{}
	for _, r := range refs {
		if !seen[r.id] {
			seen[r.id] = true
			ids = append(ids, r.id)
		}
	}
	if len(ids) == 0 {
		return nil
	}
	rows, err := l.db.Query(ctx, "SELECT id, config_json FROM assessments WHERE id = ANY($1)", ids)
	if err != nil {
		return fmt.Errorf("reading assessment settings: %w", err)
	}
	recs := map[uuid.UUID]map[string]componentRecord{}
	for rows.Next() {
		var id uuid.UUID
		var js string
		if err := rows.Scan(&id, &js); err != nil {
			rows.Close()
			return err
		}
		recs[id] = componentRecords(js)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	for _, r := range refs {
		c := &out[r.hull].Components[r.comp]
		c.setRecord(recs[r.id][c.Name])
	}
	return nil
}

func (l *Ledger) newDamages(h *Hull) *Damages {
	d := &Damages{Combine: string(l.fat.limits.Combination()), DesignFatigueFactor: l.fat.settings.DFF, MeanStress: string(l.fat.settings.MeanStress)}
	for _, c := range h.Spec.Components {
		cd := ComponentDamage{Name: c.Name, Allowable: l.fat.limits.Allowable, Curve: c.Curve, RuptureCurve: c.RuptureCurve, Warnings: []string{}}
		// Until an assessment is shown, the settings that would apply.
		own := assess.Settings{MeanStress: sn.MeanStress(c.MeanStress)}
		if c.DesignFatigueFactor != nil {
			own.DFF = *c.DesignFatigueFactor
		}
		if e, err := assess.EffectiveSettings(l.fat.settings, own); err == nil {
			f := e.DFF
			cd.DesignFatigueFactor, cd.MeanStress, cd.SettingsReason = &f, string(e.MeanStress), e.Reason+" (no assessment yet: the settings that apply)"
		} else {
			cd.SettingsReason = "not evaluated: " + err.Error()
		}
		d.Components = append(d.Components, cd)
	}
	return d
}

// finishDamages sums PerDive into the totals and the remaining life.
func (l *Ledger) finishDamages(h *Hull, out *Damages) error {
	out.DiveCount = len(out.PerDive)
	proof, err := l.proofTestDamage(h, out.proofTests)
	if err != nil {
		return fmt.Errorf("damage of %s: %w", h.Serial, err)
	}
	dh := damage.Hull{}
	for i, c := range out.Components {
		dc := damage.Component{Name: c.Name, Limits: l.fat.limits}
		if pd := h.Spec.Components[i].PriorDamage; pd != nil {
			dc.Prior = damage.Damage{Cyclic: pd.Cyclic, Sustained: pd.Sustained}
			out.Components[i].Prior = &PriorDamage{Cyclic: Num(pd.Cyclic), Sustained: Num(pd.Sustained), Source: pd.Source}
		}
		if pt, ok := proof[c.Name]; ok {
			dc.Prior = dc.Prior.Add(pt)
			out.Components[i].ProofTests = &ProofDamage{Count: len(out.proofTests), Cyclic: Num(pt.Cyclic), Sustained: Num(pt.Sustained),
				Basis: fmt.Sprintf("%d proof test(s) recorded without samples, each charged as one cycle to its recorded pressure with %.0f min at it (proof.hold_min)", len(out.proofTests), l.cfg.Proof.HoldMin)}
		}
		dh.Components = append(dh.Components, dc)
	}
	for _, d := range out.PerDive {
		dd := damage.Dive{ID: d.Dive.String(), Damage: make(map[string]damage.Damage, len(out.Components))}
		for i := range out.Components {
			c := &out.Components[i]
			v, ok := d.Damage[c.Name]
			if !ok {
				c.Unassessed++
			}
			dd.Damage[c.Name] = v
		}
		dh.Dives = append(dh.Dives, dd)
	}
	tot, err := dh.Totals()
	if err != nil {
		return fmt.Errorf("damage of %s: %w", h.Serial, err)
	}
	for i, t := range tot.Components {
		c := &out.Components[i]
		c.CyclicDamage, c.SustainedDamage, c.Ratio = Num(t.Total.Cyclic), Num(t.Total.Sustained), Num(t.Ratio)
	}
	out.Governing, out.GoverningRatio = tot.Governing, Num(tot.Ratio)
	opt := l.fat.life
	opt.LimitRatio = l.damageHoldLevel()
	opt.Horizon = l.cfg.Fatigue.LifeHorizon
	opt.QualifiedCycles, opt.CyclesUsed = h.Spec.QualifiedPressureCycles, float64(len(out.PerDive))
	dd, ddText, err := l.designDive(h)
	if err != nil {
		return fmt.Errorf("remaining life of %s: %w", h.Serial, err)
	}
	opt.DesignDive, out.DesignDive = dd, ddText
	life, err := dh.RemainingLife(opt)
	if err != nil {
		return fmt.Errorf("remaining life of %s: %w", h.Serial, err)
	}
	out.RemainingStatus, out.RemainingReason, out.LimitRatio = string(life.Status), life.Reason, life.LimitRatio
	out.RemainingBasis = string(life.Basis)
	if p := life.AtRecentMean; p != nil {
		v := p.Dives
		out.RemainingAtRecentMean, out.RemainingAtRecentMeanMoreThan = &v, p.Beyond
	}
	if p := life.AtDesignDive; p != nil {
		v := p.Dives
		out.RemainingAtDesignDive, out.RemainingAtDesignDiveMoreThan = &v, p.Beyond
	}
	unassessed := 0
	for _, c := range out.Components {
		unassessed = max(unassessed, c.Unassessed)
	}
	switch {
	case unassessed > 0:
		// Never give a number the ledger cannot back.
		out.RemainingStatus = "incomplete"
		out.RemainingReason = fmt.Sprintf("%d dives have no damage assessment for every component (run hulltally assess); %s", unassessed, life.Reason)
	case life.Status == damage.LifeEstimated || life.Status == damage.LifeExhausted || life.Status == damage.LifeBeyondHorizon:
		d := life.Dives
		out.RemainingDives = &d
		out.RemainingMoreThan = life.Status == damage.LifeBeyondHorizon
	}
	return nil
}

// Cycle is one counted cycle for output.
type Cycle struct {
	RangeMPa float64 `json:"range_mpa"`
	MeanMPa  float64 `json:"mean_mpa"`
	Count    float64 `json:"count"`
}

// DiveCycles returns the rainflow cycles of gauge pressure of a dive.
func (l *Ledger) DiveCycles(ctx context.Context, dive uuid.UUID) ([]Cycle, error) {
	var r, m, n []float64
	err := l.db.QueryRow(ctx, "SELECT ranges, means, counts FROM dive_cycles WHERE dive_id = $1 AND series = 'pressure'", dive).Scan(&r, &m, &n)
	if err == pgx.ErrNoRows {
		return []Cycle{}, nil
	}
	if err != nil {
		return nil, err
	}
	out := make([]Cycle, len(r))
	for i := range r {
		out[i] = Cycle{RangeMPa: r[i], MeanMPa: m[i], Count: n[i]}
	}
	return out, nil
}

// DiveComponentDamage is one component's damage from one dive.
type DiveComponentDamage struct {
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Basis     string `json:"transfer_basis"`
	Curve     string `json:"curve"`
	// Factor is the load transfer factor used, MPa of stress per MPa of
	// gauge pressure (negative in compression).
	Factor float64 `json:"transfer_factor_mpa_per_mpa"`
	// TransferReason says why that basis was used.
	TransferReason string `json:"transfer_reason,omitempty"`
	// DesignFatigueFactor and MeanStress are the effective settings of
	// the component in that assessment (null and empty when it did not
	// record them).
	DesignFatigueFactor *float64 `json:"design_fatigue_factor"`
	MeanStress          string   `json:"mean_stress,omitempty"`
}

// DiveDamageOf returns the dive's damage per component in the assessment
// in force (the newest that covers the dive).
func (l *Ledger) DiveDamageOf(ctx context.Context, dive uuid.UUID) (map[string]DiveComponentDamage, error) {
	rows, err := l.db.Query(ctx, `
		SELECT a.seq, ad.component, ad.cyclic[array_position(ad.dive_ids, $1)], ad.sustained[array_position(ad.dive_ids, $1)], ad.basis, ad.curve, ad.factor, a.config_json
		FROM assessment_damage ad JOIN assessments a ON a.id = ad.assessment_id
		WHERE ad.hull_id = (SELECT hull_id FROM dives WHERE id = $1) AND $1 = ANY(ad.dive_ids)
		ORDER BY a.seq DESC`, dive)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]DiveComponentDamage{}
	newest := int64(-1)
	for rows.Next() {
		var seq int64
		var name string
		var d DiveComponentDamage
		var cy, su float64
		var cfg string
		if err := rows.Scan(&seq, &name, &cy, &su, &d.Basis, &d.Curve, &d.Factor, &cfg); err != nil {
			return nil, err
		}
		if newest >= 0 && seq != newest {
			break
		}
		newest = seq
		d.Cyclic, d.Sustained = Num(cy), Num(su)
		if r, ok := componentRecords(cfg)[name]; ok {
			d.TransferReason = r.TransferReason
			if r.SettingsReason != "" {
				f := r.DesignFatigueFactor
				d.DesignFatigueFactor, d.MeanStress = &f, r.MeanStress
			}
		}
		out[name] = d
	}
	return out, rows.Err()
}

// DiveLoad is what a dive cost the hull: its counted pressure cycles and
// its damage per component in the assessment in force.
type DiveLoad struct {
	PressureCycles []Cycle                        `json:"pressure_cycles"`
	Damage         map[string]DiveComponentDamage `json:"damage"`
}

// LoadOf returns a dive's cycles and damage.
func (l *Ledger) LoadOf(ctx context.Context, dive uuid.UUID) (*DiveLoad, error) {
	c, err := l.DiveCycles(ctx, dive)
	if err != nil {
		return nil, fmt.Errorf("cycles of dive %s: %w", dive, err)
	}
	d, err := l.DiveDamageOf(ctx, dive)
	if err != nil {
		return nil, fmt.Errorf("damage of dive %s: %w", dive, err)
	}
	return &DiveLoad{PressureCycles: c, Damage: d}, nil
}

// damageHoldLevel is the hold level of the damage rule in force (the
// ratio of the allowable the remaining life is projected to); 1 when no
// rule on damage has a hold level.
func (l *Ledger) damageHoldLevel() float64 {
	lvl := 1.0
	if l.rulesSet == nil {
		return lvl
	}
	for _, r := range l.rulesSet.Rules {
		if r.Measure == fitness.MeasureDamageRatio && r.Hold != nil && r.Hold.At > 0 && r.Hold.At < lvl {
			lvl = r.Hold.At
		}
	}
	return lvl
}

// designDive is the damage per component of one design dive: from the
// surface to the rated depth's pressure (at latitude 90°, the most
// pressure per metre) and back, with the configured bottom time at it.
func (l *Ledger) designDive(h *Hull) (map[string]damage.Damage, string, error) {
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, "", err
	}
	p := seawater.DepthToMPa(h.Spec.RatedDepthM, 90)
	bt := l.cfg.Fatigue.DesignBottomTimeMin
	d := assess.Dive{PressureCycles: joinCycles([]float64{p}, []float64{p / 2}, []float64{1}),
		Holds: []assess.Hold{{LevelMPa: p, Seconds: bt * 60}}}
	res, err := assess.DiveDamage(d, comps, l.fat.settings)
	if err != nil {
		return nil, "", err
	}
	out := make(map[string]damage.Damage, len(res))
	for _, r := range res {
		out[r.Component] = r.Damage
	}
	return out, fmt.Sprintf("one cycle to the rated depth %.0f m (%.3f MPa at latitude 90°) with %.0f min at it", h.Spec.RatedDepthM, p, bt), nil
}

// ProofDamage is the damage charged for proof tests recorded without
// samples.
type ProofDamage struct {
	Count     int    `json:"count"`
	Cyclic    Num    `json:"cyclic"`
	Sustained Num    `json:"sustained"`
	Basis     string `json:"basis"`
}

// proofTestDamage charges each proof test recorded without samples as one
// cycle from the surface to its recorded pressure with proof.hold_min at
// it, per component: a proof test is a load the hull carried, passed or
// failed, and without its samples it is charged as a plain profile.
func (l *Ledger) proofTestDamage(h *Hull, pressures []float64) (map[string]damage.Damage, error) {
	if len(pressures) == 0 {
		return nil, nil
	}
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, err
	}
	out := map[string]damage.Damage{}
	for _, p := range pressures {
		d := assess.Dive{PressureCycles: joinCycles([]float64{p}, []float64{p / 2}, []float64{1}),
			Holds: []assess.Hold{{LevelMPa: p, Seconds: l.cfg.Proof.HoldMin * 60}}}
		res, err := assess.DiveDamage(d, comps, l.fat.settings)
		if err != nil {
			return nil, err
		}
		for _, r := range res {
			out[r.Component] = out[r.Component].Add(r.Damage)
		}
	}
	return out, nil
}
