package ledger

import (
	"context"
	"encoding/json"
	"fmt"
	"sort"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"hulltally/fatigue/assess"
)

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
	return chainRec{kind: "assessment", key: a.id.String(), canon: assessmentCanon(a, cols)}, nil
}
