package reports

import (
	"context"
	"time"

	"hulltally/ledger"
	"hulltally/reports/charts"
)

// Hull chart names, as HullChartsSVG keys them.
const (
	ChartDamage     = "damage"
	ChartCycles     = "cycles"
	ChartFelicity   = "felicity"
	ChartCompliance = "compliance"
	ChartProfile    = "profile"
)

// HullChartsSVG draws a hull's charts as SVG for the web pages, from the
// same content (BuildHull) and the same drawing code as its PDF report:
// damage with the rule's limits and the projection, the rainflow
// histogram, the Felicity ratio per dive, compliance per gauge and the
// deepest recent profile (absent when there is none). A read: nothing is
// recorded.
func HullChartsSVG(ctx context.Context, l *ledger.Ledger, serial string, at time.Time) (map[string][]byte, error) {
	m, err := BuildHull(ctx, l, serial, at)
	if err != nil {
		return nil, err
	}
	hp := &m.Hulls[0]
	size := charts.Size{WidthMM: chartSize.WidthMM, HeightMM: chartSize.HeightMM, SVG: true}
	out := map[string][]byte{}
	for name, draw := range map[string]func() ([]byte, error){
		ChartDamage:     func() ([]byte, error) { return damageChart(m, hp, size) },
		ChartCycles:     func() ([]byte, error) { return charts.CycleHistogram(hp.CycleRanges, hp.CycleCounts, size) },
		ChartFelicity:   func() ([]byte, error) { return felicityChart(m, hp, size) },
		ChartCompliance: func() ([]byte, error) { return complianceChart(hp, size) },
		ChartProfile:    func() ([]byte, error) { return profileChart(hp, size) },
	} {
		b, err := draw()
		if err != nil {
			return nil, err
		}
		if b != nil {
			out[name] = b
		}
	}
	return out, nil
}
