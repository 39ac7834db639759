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
	"hulltally/fatigue/rainflow"
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
		"hold_bin_mpa": f.HoldBinMPa, "window": f.Window, "min_dives": f.MinDives,
		"curves_source": src, "curves_sha256": fmt.Sprintf("%x", libSum),
	}
	js, err := json.Marshal(doc) // map keys are sorted: canonical
	if err != nil {
		return err
	}
	hashDoc := map[string]any{}
	for k, v := range doc {
		if k != "curves_source" {
			hashDoc[k] = v
		}
	}
	hjs, _ := json.Marshal(hashDoc)
	h := sha256.Sum256(hjs)
	env := &fatigueEnv{lib: lib, libSource: src, settings: assess.Settings{DFF: f.DesignFatigueFactor, MeanStress: ms},
		limits: damage.Limits{Allowable: f.Allowable, SustainedAllowable: f.SustainedAllowable, Combine: damage.Combination(f.Combine)},
		life:   damage.LifeOptions{Window: f.Window, MinDives: f.MinDives}, hash: h[:], json: string(js),
		gateMPa: f.GateMPa(), gateUE: f.GateUE(), binMPa: f.HoldBinMPa}
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

func componentSpecs(h *spec.Hull) []assess.ComponentSpec {
	out := make([]assess.ComponentSpec, 0, len(h.Components))
	for _, c := range h.Components {
		out = append(out, assess.ComponentSpec{Name: c.Name, Kind: c.Kind, Basis: c.Transfer.Basis, Factor: c.Transfer.FactorMPaPerMPa,
			Source: c.Transfer.Source, Curve: c.Curve, RuptureCurve: c.RuptureCurve})
	}
	return out
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
		rows[i] = []any{dive, hull, s.name, s.unit, s.gate, r, m, n}
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

// damageRow is one stored damage row.
type damageRow struct {
	dive                uuid.UUID
	component           string
	cyclic, sustained   float64
	basis               string
	factor              float64
	curve, ruptureCurve string
}

func damageRowBytes(dst []byte, r *damageRow) []byte {
	c := canon{b: dst}
	c.uuid(r.dive)
	c.str(r.component)
	c.f64(r.cyclic)
	c.f64(r.sustained)
	c.str(r.basis)
	c.f64(r.factor)
	c.str(r.curve)
	c.str(r.ruptureCurve)
	return c.b
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

func assessmentCanon(a *assessmentHead, n int64, digest []byte) []byte {
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
	c.i64(n)
	c.bytes(digest) // SHA-256 over every damage row, ordered by dive id and component
	return c.b
}

// storeAssessment stores an assessment and its rows (sorted here by dive
// id and component, the order verify reads them in) and returns its chain
// record.
func storeAssessment(ctx context.Context, tx pgx.Tx, a *assessmentHead, rows []damageRow) (chainRec, error) {
	sort.Slice(rows, func(i, j int) bool {
		if c := bytes.Compare(rows[i].dive[:], rows[j].dive[:]); c != 0 {
			return c < 0
		}
		return rows[i].component < rows[j].component
	})
	if _, err := tx.Exec(ctx, `INSERT INTO assessments (id, hull_id, hull_revision, kind, config_hash, config_json, reason, actor, recorded_at)
		VALUES ($1,$2,$3,$4,$5,$6,$7,$8,$9)`, a.id, a.hull, a.revision, a.kind, a.configHash, a.configJSON, a.reason, a.actor, a.at); err != nil {
		return chainRec{}, fmt.Errorf("storing assessment: %w", err)
	}
	digest := sha256.New()
	var buf []byte
	i := 0
	src := pgx.CopyFromFunc(func() ([]any, error) {
		if i == len(rows) {
			return nil, nil
		}
		r := &rows[i]
		i++
		buf = damageRowBytes(buf[:0], r)
		digest.Write(buf)
		return []any{a.id, a.hull, r.dive, r.component, r.cyclic, r.sustained, r.basis, r.factor, r.curve, r.ruptureCurve}, nil
	})
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"assessment_damage"}, []string{"assessment_id", "hull_id", "dive_id", "component", "cyclic", "sustained", "basis", "factor", "curve", "rupture_curve"}, src); err != nil {
		return chainRec{}, fmt.Errorf("storing assessment rows: %w", err)
	}
	return chainRec{"assessment", a.id.String(), assessmentCanon(a, int64(len(rows)), digest.Sum(nil))}, nil
}

func resultRows(dive uuid.UUID, comps []assess.Component, res []assess.Result) []damageRow {
	rows := make([]damageRow, len(res))
	for i, r := range res {
		rup := ""
		if comps[i].Rupture != nil {
			rup = comps[i].Rupture.Name
		}
		rows[i] = damageRow{dive: dive, component: r.Component, cyclic: r.Damage.Cyclic, sustained: r.Damage.Sustained,
			basis: string(r.Basis), factor: r.Factor, curve: comps[i].Curve.Name, ruptureCurve: rup}
	}
	return rows
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
// read) with the configuration in force, appending a new assessment per
// hull; the earlier ones stay on record.
func (l *Ledger) Assess(ctx context.Context, o AssessOptions) ([]AssessResult, error) {
	if strings.TrimSpace(o.Actor) == "" {
		return nil, fmt.Errorf("assess: the actor is required")
	}
	if o.Reason == "" {
		o.Reason = "re-assessment"
	}
	var serials []string
	if o.Hull != "" {
		serials = []string{o.Hull}
	} else {
		hs, err := l.Hulls(ctx)
		if err != nil {
			return nil, err
		}
		for _, h := range hs {
			serials = append(serials, h.Serial)
		}
	}
	var out []AssessResult
	for _, s := range serials {
		r, err := l.assessHull(ctx, s, o)
		if err != nil {
			return nil, err
		}
		out = append(out, *r)
	}
	return out, nil
}

func (l *Ledger) assessHull(ctx context.Context, serial string, o AssessOptions) (*AssessResult, error) {
	h, err := l.Hull(ctx, serial)
	if err != nil {
		return nil, inputErr(err)
	}
	comps, err := l.resolve(h.Spec)
	if err != nil {
		return nil, inputErr(fmt.Errorf("hull %s: %w", serial, err))
	}
	prev, err := l.HullDamage(ctx, h)
	if err != nil {
		return nil, err
	}
	counted, err := l.backfillCounts(ctx, h)
	if err != nil {
		return nil, fmt.Errorf("assess %s: %w", serial, err)
	}
	rows, err := l.pool.Query(ctx, `SELECT d.id, c.ranges, c.means, c.counts, coalesce(h.levels, '{}'), coalesce(h.seconds, '{}')
		FROM dives d JOIN dive_cycles c ON c.dive_id = d.id AND c.series = 'pressure'
		LEFT JOIN dive_holds h ON h.dive_id = d.id
		WHERE d.hull_id = $1`, h.ID)
	if err != nil {
		return nil, fmt.Errorf("assess %s: reading cycles: %w", serial, err)
	}
	var dmg []damageRow
	var buf []damage.Cycle
	n := 0
	var rg, mn, ct, lv, sec []float64
	var id uuid.UUID
	for rows.Next() {
		if err := rows.Scan(&id, &rg, &mn, &ct, &lv, &sec); err != nil {
			rows.Close()
			return nil, err
		}
		d := assess.Dive{PressureCycles: joinCycles(rg, mn, ct)}
		for i := range lv {
			d.Holds = append(d.Holds, assess.Hold{LevelMPa: lv[i], Seconds: sec[i]})
		}
		var res []assess.Result
		res, buf, err = assess.DiveDamage(d, comps, l.fat.settings, buf)
		if err != nil {
			rows.Close()
			return nil, fmt.Errorf("assess %s dive %s: %w", serial, id, err)
		}
		dmg = append(dmg, resultRows(id, comps, res)...)
		n++
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, err
	}
	tx, err := l.pool.Begin(ctx)
	if err != nil {
		return nil, err
	}
	defer tx.Rollback(ctx)
	a := &assessmentHead{id: uuid.New(), hull: h.ID, revision: h.Revision, kind: "reassess", configHash: l.fat.hash,
		configJSON: l.fat.json, reason: o.Reason, actor: o.Actor, at: now()}
	rec, err := storeAssessment(ctx, tx, a, dmg)
	if err != nil {
		return nil, err
	}
	if _, err := appendChain(ctx, tx, h.ID, []chainRec{rec}, a.at); err != nil {
		return nil, err
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("assess %s: commit: %w", serial, err)
	}
	cur, err := l.HullDamage(ctx, h)
	if err != nil {
		return nil, err
	}
	return &AssessResult{Hull: serial, AssessmentID: a.id, ConfigHash: fmt.Sprintf("%x", a.configHash), Dives: n, CountedFromRaw: counted, Previous: prev, Current: cur}, nil
}

// Num is a damage figure that prints +Inf (a static overload) as the
// string "inf" in JSON instead of failing.
type Num float64

// MarshalJSON implements json.Marshaler.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	switch {
	case math.IsInf(f, 1):
		return []byte(`"inf"`), nil
	case math.IsNaN(f):
		return []byte(`"nan"`), nil
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
	// Basis, Factor and Curve are what the newest assessment used.
	Basis        string  `json:"transfer_basis"`
	Factor       float64 `json:"transfer_factor_mpa_per_mpa"`
	Curve        string  `json:"curve"`
	RuptureCurve string  `json:"rupture_curve,omitempty"`
	// Unassessed counts dives with no damage for this component.
	Unassessed int `json:"unassessed_dives"`
}

// Damages are a hull's cumulative damage and remaining life.
type Damages struct {
	DiveCount           int               `json:"dive_count"`
	Components          []ComponentDamage `json:"components"`
	Governing           string            `json:"governing_component"`
	GoverningRatio      Num               `json:"governing_ratio"`
	RemainingDives      *int64            `json:"remaining_dives"`
	RemainingStatus     string            `json:"remaining_status"`
	RemainingReason     string            `json:"remaining_reason"`
	ConfigHash          string            `json:"config_hash,omitempty"`
	Assessments         int               `json:"assessments"`
	Combine             string            `json:"combine"`
	DesignFatigueFactor float64           `json:"design_fatigue_factor"`
	MeanStress          string            `json:"mean_stress"`
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
	rows, err := l.pool.Query(ctx, `
		WITH latest AS (
			SELECT DISTINCT ON (ad.dive_id) ad.dive_id, a.id
			FROM assessment_damage ad JOIN assessments a ON a.id = ad.assessment_id
			WHERE ad.hull_id = $1
			ORDER BY ad.dive_id, a.seq DESC)
		SELECT d.id, d.start_time, ad.component, ad.cyclic, ad.sustained, ad.basis, ad.factor, ad.curve, ad.rupture_curve
		FROM dives d
		LEFT JOIN latest l ON l.dive_id = d.id
		LEFT JOIN assessment_damage ad ON ad.assessment_id = l.id AND ad.dive_id = d.id
		WHERE d.hull_id = $1
		ORDER BY d.start_time, d.id`, h.ID)
	if err != nil {
		return nil, fmt.Errorf("reading damage of %s: %w", h.Serial, err)
	}
	defer rows.Close()
	out := &Damages{Combine: string(l.fat.limits.Combination()), DesignFatigueFactor: l.fat.settings.DFF, MeanStress: string(l.fat.settings.MeanStress)}
	idx := map[string]int{}
	for i, c := range h.Spec.Components {
		idx[c.Name] = i
		out.Components = append(out.Components, ComponentDamage{Name: c.Name, Allowable: l.fat.limits.Allowable, Curve: c.Curve, RuptureCurve: c.RuptureCurve})
	}
	var cur *DiveDamage
	for rows.Next() {
		var id uuid.UUID
		var start time.Time
		var comp, basis, curve, rup *string
		var cy, su, factor *float64
		if err := rows.Scan(&id, &start, &comp, &cy, &su, &basis, &factor, &curve, &rup); err != nil {
			return nil, err
		}
		if cur == nil || cur.Dive != id {
			out.PerDive = append(out.PerDive, DiveDamage{Dive: id, Start: start, Damage: map[string]damage.Damage{}})
			cur = &out.PerDive[len(out.PerDive)-1]
		}
		if comp == nil {
			continue
		}
		k, ok := idx[*comp]
		if !ok {
			continue // a component no longer in the spec
		}
		cur.Damage[*comp] = damage.Damage{Cyclic: *cy, Sustained: *su}
		c := &out.Components[k]
		c.Basis, c.Factor, c.Curve, c.RuptureCurve = *basis, *factor, *curve, *rup
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	out.DiveCount = len(out.PerDive)
	dh := damage.Hull{}
	for _, c := range out.Components {
		dh.Components = append(dh.Components, damage.Component{Name: c.Name, Limits: l.fat.limits})
	}
	for _, d := range out.PerDive {
		dd := damage.Dive{ID: d.Dive.String(), Damage: map[string]damage.Damage{}}
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
		return nil, fmt.Errorf("damage of %s: %w", h.Serial, err)
	}
	for i, t := range tot.Components {
		c := &out.Components[i]
		c.CyclicDamage, c.SustainedDamage, c.Ratio = Num(t.Total.Cyclic), Num(t.Total.Sustained), Num(t.Ratio)
	}
	out.Governing, out.GoverningRatio = tot.Governing, Num(tot.Ratio)
	life, err := dh.RemainingLife(l.fat.life)
	if err != nil {
		return nil, fmt.Errorf("remaining life of %s: %w", h.Serial, err)
	}
	out.RemainingStatus, out.RemainingReason = string(life.Status), life.Reason
	unassessed := 0
	for _, c := range out.Components {
		unassessed = max(unassessed, c.Unassessed)
	}
	switch {
	case unassessed > 0:
		// Never give a number the ledger cannot back.
		out.RemainingStatus = "incomplete"
		out.RemainingReason = fmt.Sprintf("%d dives have no damage assessment for every component (run hulltally assess); %s", unassessed, life.Reason)
	case life.Status == damage.LifeEstimated || life.Status == damage.LifeExhausted:
		d := life.Dives
		out.RemainingDives = &d
	}
	if err := l.pool.QueryRow(ctx, "SELECT count(*) FROM assessments WHERE hull_id = $1", h.ID).Scan(&out.Assessments); err != nil {
		return nil, err
	}
	var hash []byte
	err = l.pool.QueryRow(ctx, "SELECT config_hash FROM assessments WHERE hull_id = $1 ORDER BY seq DESC LIMIT 1", h.ID).Scan(&hash)
	if err == nil {
		out.ConfigHash = fmt.Sprintf("%x", hash)
	}
	return out, nil
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
	err := l.pool.QueryRow(ctx, "SELECT ranges, means, counts FROM dive_cycles WHERE dive_id = $1 AND series = 'pressure'", dive).Scan(&r, &m, &n)
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
}

// DiveDamageOf returns the dive's damage per component in the assessment
// in force.
func (l *Ledger) DiveDamageOf(ctx context.Context, dive uuid.UUID) (map[string]DiveComponentDamage, error) {
	rows, err := l.pool.Query(ctx, `
		SELECT ad.component, ad.cyclic, ad.sustained, ad.basis, ad.curve FROM assessment_damage ad
		WHERE ad.dive_id = $1 AND ad.assessment_id = (
			SELECT a.id FROM assessments a JOIN assessment_damage x ON x.assessment_id = a.id
			WHERE x.dive_id = $1 ORDER BY a.seq DESC LIMIT 1)`, dive)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]DiveComponentDamage{}
	for rows.Next() {
		var name string
		var d DiveComponentDamage
		var cy, su float64
		if err := rows.Scan(&name, &cy, &su, &d.Basis, &d.Curve); err != nil {
			return nil, err
		}
		d.Cyclic, d.Sustained = Num(cy), Num(su)
		out[name] = d
	}
	return out, rows.Err()
}
