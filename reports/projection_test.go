package reports

import (
	"bytes"
	"testing"

	"github.com/jung-kurt/gofpdf"

	"hulltally/ledger"
	"hulltally/reports/charts"
)

// drawnDamageChart runs hullCharts on a fresh document and returns the
// damage chart it placed, as gofpdf holds it (decoded pixels and format).
func drawnDamageChart(t *testing.T, m *Model) []byte {
	t.Helper()
	d, err := newDoc(m, "projection test", "")
	if err != nil {
		t.Fatal(err)
	}
	d.pdf.AddPage()
	if err := hullCharts(d, m, &m.Hulls[0]); err != nil {
		t.Fatal(err)
	}
	info := d.pdf.GetImageInfo("damage")
	if info == nil {
		t.Fatal("no damage chart was placed")
	}
	b, err := info.GobEncode()
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// expectedDamageChart draws the damage chart with the given projection
// straight through package charts and returns it as gofpdf holds it.
func expectedDamageChart(t *testing.T, m *Model, proj *charts.Projection) []byte {
	t.Helper()
	hp := m.Hulls[0]
	xs := make([]float64, len(hp.CumRatio))
	for i := range xs {
		xs[i] = float64(i + 1)
	}
	png, err := charts.DamageHistoryLimits(xs, hp.CumRatio, proj, 1, chartLimits(m.Basis.Limits.Damage), chartSize)
	if err != nil {
		t.Fatal(err)
	}
	pdf := gofpdf.New("P", "mm", "A4", "")
	info := pdf.RegisterImageOptionsReader("damage", gofpdf.ImageOptions{ImageType: "PNG"}, bytes.NewReader(png))
	if err := pdf.Error(); err != nil || info == nil {
		t.Fatalf("registering the expected chart: %v", err)
	}
	b, err := info.GobEncode()
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// projectionModel is the fixture with n dives whose cumulative ratio
// rises evenly to last, and remaining dives left (nil: none told).
func projectionModel(t *testing.T, n int, last float64, status string, remaining *int64, limitRatio float64) *Model {
	t.Helper()
	m := fixture(t)
	hp := &m.Hulls[0]
	hp.CumRatio = make([]float64, n)
	for i := range hp.CumRatio {
		hp.CumRatio[i] = last * float64(i+1) / float64(n)
	}
	hp.CumRatio[n-1] = last
	d := *hp.Damage
	d.RemainingDives, d.LimitRatio, d.GoverningRatio = remaining, limitRatio, ledger.Num(last)
	d.RemainingStatus = "estimated"
	if remaining == nil {
		d.RemainingStatus = "too_few_dives"
	}
	hp.Damage, hp.Status = &d, status
	return m
}

// TestDamageProjectionDrawn: the report's damage chart carries the
// projection worked out by hand from the remaining life. With a ratio of
// 0.4 after dive 60 and 300 dives left to the allowable (1.0), 0.6 is
// left: 0.6 / 300 = 0.002 per dive, reaching 1.0 at dive 60 + 300 = 360.
// The chart drawn equals, pixel for pixel, the chart drawn with that
// projection written out, and differs from one a dive out of step. A void
// life, or none told, draws no projection.
func TestDamageProjectionDrawn(t *testing.T) {
	rem := int64(300)
	m := projectionModel(t, 60, 0.4, "watch", &rem, 1)
	got := drawnDamageChart(t, m)
	want := expectedDamageChart(t, m, &charts.Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: 360})
	if !bytes.Equal(got, want) {
		t.Fatal("the damage chart is not the one with the projection from dive 60 at 0.002 per dive to dive 360")
	}
	for _, wrong := range []*charts.Projection{
		nil,
		{FromDive: 60, RatePerDive: 0.6 / 301, UntilDive: 361}, // a dive more left
		{FromDive: 60, RatePerDive: 0.6 / 299, UntilDive: 359}, // a dive fewer
		{FromDive: 59, RatePerDive: 0.002, UntilDive: 359},     // from the dive before
	} {
		if bytes.Equal(got, expectedDamageChart(t, m, wrong)) {
			t.Errorf("the chart drawn equals the one with projection %+v: the test cannot tell them apart", wrong)
		}
	}

	// The projection is drawn at most 5n + 50 dives ahead: after 10 dives
	// with 300 left it stops at dive 10 + 100 = 110, at the same rate.
	m = projectionModel(t, 10, 0.4, "watch", &rem, 1)
	if !bytes.Equal(drawnDamageChart(t, m), expectedDamageChart(t, m, &charts.Projection{FromDive: 10, RatePerDive: 0.002, UntilDive: 110})) {
		t.Error("after 10 dives: the chart is not the one projected at 0.002 per dive to dive 110")
	}

	for _, tc := range []struct {
		name, status string
		remaining    *int64
	}{
		{"hold voids the life", "hold", &rem},
		{"withdrawn voids the life", "withdrawn", &rem},
		{"no remaining life told", "watch", nil},
		{"no dives left", "watch", i64(0)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := projectionModel(t, 60, 0.4, tc.status, tc.remaining, 1)
			if !bytes.Equal(drawnDamageChart(t, m), expectedDamageChart(t, m, nil)) {
				t.Error("a projection was drawn")
			}
		})
	}
	// Void by the ledger (evidence of damage open) on a watch hull.
	m = projectionModel(t, 60, 0.4, "watch", nil, 1)
	m.Hulls[0].Damage.RemainingStatus = statusLifeVoid
	m.Hulls[0].Damage.RemainingDives = &rem // must be ignored when void
	if !bytes.Equal(drawnDamageChart(t, m), expectedDamageChart(t, m, nil)) {
		t.Error("void life: a projection was drawn")
	}
}

// TestDamageProjectionToHoldLevel: the remaining dives are projected to
// the damage rule's hold level (Damages.LimitRatio), so the rate drawn
// must be (LimitRatio − ratio) / remaining: ratio 0.4, hold at 0.8, 300
// dives left gives 0.4 / 300 per dive, the allowable (1.0) met at dive
// 60 + 0.6 / (0.4 / 300) = 510.
func TestDamageProjectionToHoldLevel(t *testing.T) {
	rem := int64(300)
	m := projectionModel(t, 60, 0.4, "watch", &rem, 0.8)
	got := drawnDamageChart(t, m)
	if bytes.Equal(got, expectedDamageChart(t, m, &charts.Projection{FromDive: 60, RatePerDive: 0.002, UntilDive: 360})) {
		t.Error("the rate is (1 − ratio) / remaining, ignoring the hold level the remaining dives are counted to")
	}
	if !bytes.Equal(got, expectedDamageChart(t, m, &charts.Projection{FromDive: 60, RatePerDive: 0.4 / 300, UntilDive: 360})) {
		t.Error("the chart is not the one projected at 0.4/300 per dive")
	}
}
