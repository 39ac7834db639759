package reports

import (
	"context"
	"fmt"
	"math"
	"sort"

	"hulltally/fatigue/evidence"
	"hulltally/fatigue/seawater"
	"hulltally/ledger"
)

// maxFelicityCharts bounds the cumulative-hits charts of a hull report:
// the newest Felicity dives are drawn, the older ones counted.
const maxFelicityCharts = 6

// maxHitPoints bounds the points of one cumulative-hits series; a longer
// one is thinned evenly, its last point kept.
const maxHitPoints = 1500

// ImplosionCaution is printed with the implosion figures.
const ImplosionCaution = "The implosion figures are orders of magnitude for planning safety distances around the hull " +
	"(support vessel, divers, other vehicles, the test chamber): they are not a prediction of any event, " +
	"and they rest on the assumptions listed. Keep people away accordingly; the certifying authority's " +
	"rules on exclusion zones govern."

// implosionAtRated states the implosion hazard of the hull at its rated
// depth (the most pressure per metre, latitude 90°: the safe side), or
// says why it cannot be stated.
func implosionAtRated(h *ledger.Hull) (*ImplosionView, string) {
	p := seawater.DepthToMPa(h.Spec.RatedDepthM, 90)
	imp, err := ledger.ImplosionOf(h, p)
	if err != nil {
		return nil, fmt.Sprintf("not stated: %v", err)
	}
	iv := &ImplosionView{InternalVolumeM3: imp.InternalVolumeM3, PressureMPa: imp.PressureMPa, DepthM: imp.DepthM,
		EnergyMJ: imp.EnergyMJ, PVEnergyMJ: imp.PVEnergyMJ, WaterElasticMJ: imp.WaterElasticMJ, TNTEquivalentKg: imp.TNTEquivalentKg,
		EquivalentSphereRadiusM: imp.EquivalentSphereRadiusM, BulkModulusGPa: imp.BulkModulusGPa, EndClosure: imp.EndClosure,
		Assumptions: append([]string{}, imp.Assumptions...)}
	if t := imp.CollapseTimeMS; t > 0 && !math.IsInf(t, 0) {
		iv.CollapseTimeMS = &t
	}
	return iv, ""
}

// felicityDives fills the hull's Felicity dives: every dive not void that
// raised a flag of a Felicity rule (ruleIDs) or whose Felicity ratio is
// below 1, with its cumulative hits against pressure on the way down.
func felicityDives(ctx context.Context, l *ledger.Ledger, hp *HullPart, ruleIDs map[string]bool) error {
	level := map[string]string{}
	for _, fl := range hp.flags {
		if fl.Dive == "" || !ruleIDs[fl.Rule] {
			continue
		}
		if level[fl.Dive] != "hold" {
			level[fl.Dive] = fl.Level
		}
	}
	var sel []ledger.Dive
	for _, d := range hp.Dives {
		if d.Voided {
			continue
		}
		ev := hp.evs[d.ID]
		below := ev != nil && ev.AE != nil && ev.AE.FelicityRatio != nil && *ev.AE.FelicityRatio < 1
		if below || level[d.ID.String()] != "" {
			sel = append(sel, d)
		}
	}
	if n := len(sel) - maxFelicityCharts; n > 0 {
		hp.FelicityDivesOmitted = n
		sel = sel[n:]
	}
	for _, d := range sel {
		fd := FelicityDive{Dive: d.ID.String(), Start: d.Start, Level: level[d.ID.String()], Hits: []HitPoint{}}
		if ev := hp.evs[d.ID]; ev != nil {
			fd.PreviousMaxMPa, fd.ReferenceSource = ev.PreviousMaxMPa, ev.ReferenceSource
			if ae := ev.AE; ae != nil {
				fd.Ratio, fd.OnsetMPa, fd.Reason = ae.FelicityRatio, ae.OnsetMPa, ae.FelicityReason
			} else {
				fd.Reason = "no acoustic-emission data for this dive: Felicity ratio not evaluated"
			}
		} else {
			fd.Reason = "no evidence on record for this dive: Felicity ratio not evaluated"
		}
		hits, err := diveHits(ctx, l, d)
		if err != nil {
			return err
		}
		fd.Hits = hits
		hp.FelicityDives = append(hp.FelicityDives, fd)
	}
	return nil
}

// diveHits reads a dive's hits and profile from the ledger and returns
// its cumulative hits against pressure on the way down; empty when the
// dive has no profile or no hits.
func diveHits(ctx context.Context, l *ledger.Ledger, d ledger.Dive) ([]HitPoint, error) {
	if d.AEHits == 0 {
		return []HitPoint{}, nil
	}
	prof, err := l.ProfileOf(ctx, d.ID)
	if err != nil {
		return nil, fmt.Errorf("profile of dive %s: %w", d.ID, err)
	}
	if prof == nil {
		return []HitPoint{}, nil
	}
	hits, checks, err := l.HitsOf(ctx, d.ID)
	if err != nil {
		return nil, fmt.Errorf("hits of dive %s: %w", d.ID, err)
	}
	return hitPoints(prof, hits, checks, l.SurfaceToleranceMPa()), nil
}

// hitPoints is the cumulative number of hits against pressure from the
// first sample to the peak: every hit, and every sensor check made under
// load (above surfaceMPa, the configured surface tolerance), which the ledger counts as emission too
// (a test pulse counted as emission can only make the hull look worse).
func hitPoints(prof *ledger.Profile, hits []evidence.Hit, checks []evidence.SensorCheck, surfaceMPa float64) []HitPoint {
	n := min(len(prof.TimeS), len(prof.PressureMPa))
	out := []HitPoint{}
	if n == 0 {
		return out
	}
	p := evidence.Profile{TimeS: prof.TimeS[:n], Pressure: prof.PressureMPa[:n]}
	peak := 0
	for i := 1; i < n; i++ {
		if p.Pressure[i] > p.Pressure[peak] {
			peak = i
		}
	}
	tPeak := p.TimeS[peak]
	all := append([]evidence.Hit(nil), hits...)
	if len(checks) > 0 {
		as := make([]evidence.Hit, len(checks))
		for i, c := range checks {
			as[i] = evidence.Hit{TimeS: c.TimeS, Channel: c.Channel, AmplitudeDB: c.AmplitudeDB}
		}
		for i, pr := range evidence.PressureAt(p, as) {
			if pr > surfaceMPa {
				all = append(all, as[i])
			}
		}
	}
	sort.SliceStable(all, func(i, j int) bool { return all[i].TimeS < all[j].TimeS })
	k := sort.Search(len(all), func(i int) bool { return all[i].TimeS > tPeak })
	all = all[:k]
	for i, pr := range evidence.PressureAt(p, all) {
		out = append(out, HitPoint{PressureMPa: pr, Cumulative: float64(i + 1)})
	}
	if len(out) > maxHitPoints {
		step := float64(len(out)) / maxHitPoints
		thin := make([]HitPoint, 0, maxHitPoints+1)
		for f := 0.0; int(f) < len(out)-1; f += step {
			thin = append(thin, out[int(f)])
		}
		out = append(thin, out[len(out)-1])
	}
	return out
}

// channelViews turns the evidence's channels into the dive sheet's rows.
func channelViews(cs []ledger.ChannelEv) []ChannelView {
	var out []ChannelView
	for _, c := range cs {
		out = append(out, ChannelView{Channel: c.Channel, Hits: c.Hits, HistoricIndex: c.HistoricIndex, Severity: c.Severity,
			HighAmplitudeHits: c.HighAmplitudeHits, TotalCounts: c.TotalCounts, HistoricIndexTooFew: c.HistoricIndexTooFew,
			SeverityTooFew: c.SeverityTooFew, Present: c.Present, Checked: c.Checked, Reason: c.Notes})
	}
	return out
}
