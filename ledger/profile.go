package ledger

import (
	"context"
	"math"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// maxProfilePoints bounds a dive's decimated profile, whatever its length.
const maxProfilePoints = 20000

// profileAcc builds a dive's decimated profile while the samples stream
// past: means over windows of step seconds (1 s to start with; when the
// profile is full, neighbouring points are merged and the step doubles),
// so its size is bounded by maxProfilePoints for any dive.
type profileAcc struct {
	step    float64
	gauges  []string
	winEnd  float64
	n       float64
	st, sp  float64
	se      []float64
	TimeS   []float64
	Press   []float64
	Strain  [][]float64 // per gauge
	weights []float64
}

func newProfileAcc(gauges []string) *profileAcc {
	return &profileAcc{step: 1, gauges: gauges, se: make([]float64, len(gauges)), Strain: make([][]float64, len(gauges)), winEnd: math.Inf(-1)}
}

// add adds samples: times (s from the dive's first sample), pressures and
// per gauge strains.
func (a *profileAcc) add(t, p []float64, strains [][]float64) {
	for i := range t {
		if t[i] >= a.winEnd {
			a.flush()
			a.winEnd = (math.Floor(t[i]/a.step) + 1) * a.step
		}
		a.n++
		a.st += t[i]
		a.sp += p[i]
		for g := range a.se {
			a.se[g] += strains[g][i]
		}
	}
}

func (a *profileAcc) flush() {
	if a.n == 0 {
		return
	}
	a.TimeS = append(a.TimeS, a.st/a.n)
	a.Press = append(a.Press, a.sp/a.n)
	for g := range a.se {
		a.Strain[g] = append(a.Strain[g], a.se[g]/a.n)
		a.se[g] = 0
	}
	a.weights = append(a.weights, a.n)
	a.n, a.st, a.sp = 0, 0, 0
	if len(a.TimeS) >= maxProfilePoints {
		a.halve()
	}
}

// halve merges neighbouring points (weighted means) and doubles the step.
func (a *profileAcc) halve() {
	k := 0
	for i := 0; i+1 < len(a.TimeS); i += 2 {
		w0, w1 := a.weights[i], a.weights[i+1]
		w := w0 + w1
		a.TimeS[k] = (a.TimeS[i]*w0 + a.TimeS[i+1]*w1) / w
		a.Press[k] = (a.Press[i]*w0 + a.Press[i+1]*w1) / w
		for g := range a.Strain {
			a.Strain[g][k] = (a.Strain[g][i]*w0 + a.Strain[g][i+1]*w1) / w
		}
		a.weights[k] = w
		k++
	}
	if len(a.TimeS)%2 == 1 {
		last := len(a.TimeS) - 1
		a.TimeS[k], a.Press[k], a.weights[k] = a.TimeS[last], a.Press[last], a.weights[last]
		for g := range a.Strain {
			a.Strain[g][k] = a.Strain[g][last]
		}
		k++
	}
	a.TimeS, a.Press, a.weights = a.TimeS[:k], a.Press[:k], a.weights[:k]
	for g := range a.Strain {
		a.Strain[g] = a.Strain[g][:k]
	}
	a.step *= 2
}

// finish closes the last window.
func (a *profileAcc) finish() { a.flush() }

// Profile is a dive's stored decimated profile.
type Profile struct {
	TimeS       []float64
	PressureMPa []float64
	// Strain per gauge, µε.
	Strain map[string][]float64
}

// ProfileOf returns a dive's decimated profile (nil for dives logged
// before profiles were kept).
func (l *Ledger) ProfileOf(ctx context.Context, dive uuid.UUID) (*Profile, error) {
	p, err := loadProfile(ctx, l.db, dive)
	if err == pgx.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	out := &Profile{TimeS: p.TimeS, PressureMPa: p.Press, Strain: map[string][]float64{}}
	for i, g := range p.gauges {
		out.Strain[g] = p.Strain[i]
	}
	return out, nil
}

// HullCycles returns every pressure cycle of a hull's dives (range, count
// pairs), for the histogram of its load.
func (l *Ledger) HullCycles(ctx context.Context, hull uuid.UUID) (ranges, counts []float64, err error) {
	rows, err := l.db.Query(ctx, "SELECT ranges, counts FROM dive_cycles WHERE hull_id = $1 AND series = 'pressure'", hull)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var r, c []float64
		if err := rows.Scan(&r, &c); err != nil {
			return nil, nil, err
		}
		ranges, counts = append(ranges, r...), append(counts, c...)
	}
	return ranges, counts, rows.Err()
}
