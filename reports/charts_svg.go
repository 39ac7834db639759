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

// diveProfileChart draws a dive's pressure profile against its rated
// depth's pressure (at this dive's pressure per metre).
func diveProfileChart(dv *ledger.Dive, p *ledger.Profile, size charts.Size) ([]byte, error) {
	rated := 0.0
	if dv.MaxDepthM > 0 {
		rated = dv.MaxPressureMPa * dv.RatedDepthM / dv.MaxDepthM // this dive's pressure per metre
	}
	return charts.DiveProfile(p.TimeS, p.PressureMPa, rated, size)
}

// DiveProfileSVG draws a dive's profile as SVG for the web pages, as its
// dive sheet draws it; nil when the dive has no profile on record.
func DiveProfileSVG(ctx context.Context, l *ledger.Ledger, id string) ([]byte, error) {
	var out []byte
	err := l.Snapshot(ctx, func(s *ledger.Ledger) error {
		dv, err := s.Dive(ctx, id)
		if err != nil {
			return err
		}
		p, err := s.ProfileOf(ctx, dv.ID)
		if err != nil || p == nil {
			return err
		}
		out, err = diveProfileChart(dv, p, charts.Size{WidthMM: sheetChart.WidthMM, HeightMM: sheetChart.HeightMM, SVG: true})
		return err
	})
	return out, err
}
