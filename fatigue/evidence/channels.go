package evidence

import (
	"fmt"
	"math"
	"sort"
)

// Kinds of sensor check.
const (
	// CheckLeadBreak is a pencil-lead break near the sensor.
	CheckLeadBreak = "lead_break"
	// CheckSensorTest is the instrument's own pulse test of the sensor.
	CheckSensorTest = "sensor_test"
)

// SensorCheck is one verification of an acoustic-emission sensor: a
// known source near it and the amplitude it read.
type SensorCheck struct {
	// Channel is the sensor channel.
	Channel int
	// TimeS is when the check was made, s from the dive's first sample
	// (negative before it).
	TimeS float64
	// Kind is CheckLeadBreak or CheckSensorTest; any other kind never
	// passes.
	Kind string
	// AmplitudeDB is the peak amplitude the sensor read, dB_AE.
	AmplitudeDB float64
}

// ChannelCriterion holds the constants of the per-channel evidence. Use
// DefaultChannelCriterion and change what the operator chooses.
type ChannelCriterion struct {
	// MinAmplitudeDB is the amplitude below which a hit is not counted,
	// dB_AE; only counted hits show a sensor alive.
	MinAmplitudeDB float64
	// HighAmplitudeDB is the amplitude at or above which a counted hit is
	// a high-amplitude hit, dB_AE.
	HighAmplitudeDB float64
	// SeverityJ is the number of largest signal strengths averaged by the
	// severity (≤ 0: DefaultSeverityJ).
	SeverityJ int
	// K is the historic index's K for N hits (nil: DefaultK).
	K func(n int) int
	// CheckMinDB is the amplitude a sensor check must reach to pass,
	// dB_AE.
	CheckMinDB float64
}

// DefaultChannelCriterion returns the per-channel constants:
//   - amplitude floor 45 dB_AE, as the onset (common practice; operator's
//     choice);
//   - high-amplitude hits at 80 dB_AE and above (operator's choice: the
//     practice for fibre-reinforced vessels counts hits above a reference
//     amplitude set for the vessel and its sensors — ASME BPVC Section V,
//     Article 11, from memory; the figure here is not recalled from it);
//   - severity over the 10 largest signal strengths and the historic
//     index's K by DefaultK (from memory, as DefaultSeverityJ and
//     DefaultK);
//   - a sensor check passes at 80 dB_AE and above: a pencil-lead break
//     close to a coupled sensor usually reads well above that (common
//     practice, from memory; operator's choice — set it from the
//     sensors' own verification record).
func DefaultChannelCriterion() ChannelCriterion {
	return ChannelCriterion{MinAmplitudeDB: 45, HighAmplitudeDB: 80, SeverityJ: DefaultSeverityJ, CheckMinDB: 80}
}

// ChannelResult is one channel's acoustic-emission evidence for a dive.
type ChannelResult struct {
	// Channel is the sensor channel.
	Channel int
	// Configured is false for a channel that is not among the configured
	// ones but has hits or checks.
	Configured bool
	// Hits is the number of hits at or above the amplitude floor, and
	// HighAmplitudeHits those at or above the high-amplitude threshold.
	Hits, HighAmplitudeHits int
	// TotalCounts is the sum of Counts over the counted hits.
	TotalCounts float64
	// HistoricIndex is the historic index over the channel's counted hits
	// (nil when not computed; HistoricReason says why).
	HistoricIndex  *float64
	HistoricReason string
	// Severity is the mean of the SeverityJ largest signal strengths of
	// the counted hits (nil with fewer hits; SeverityReason says why).
	Severity       *float64
	SeverityReason string
	// Checks is the number of sensor checks of the channel; Checked is
	// true when there is at least one, and CheckPassed when the latest
	// one passed. CheckAmplitudeDB is the latest check's amplitude (nil
	// without a check).
	Checks           int
	Checked          bool
	CheckPassed      bool
	CheckAmplitudeDB *float64
	// Present is true when the sensor gave evidence of working: its
	// latest check passed, or it has no check and counted hits. A channel
	// that is not Present is missing evidence; Reason says why.
	Present bool
	Reason  string
}

// Channels gives the acoustic-emission evidence of each configured
// channel on its own (not pooled), in the order given (duplicates once),
// followed by any other channel with hits or checks, in channel order.
// A channel is missing evidence (Present false) when:
//   - its latest sensor check failed (amplitude below c.CheckMinDB, not a
//     number, or of an unknown kind): a dead or decoupled sensor, whose
//     hits, if any, understate the emission;
//   - it has no check and no counted hit in the dive: it may have heard
//     nothing because it could not hear.
//
// An empty hits record thus leaves every unchecked channel missing.
func Channels(hits []Hit, channels []int, checks []SensorCheck, c ChannelCriterion) []ChannelResult {
	j := c.SeverityJ
	if j <= 0 {
		j = DefaultSeverityJ
	}
	k := c.K
	if k == nil {
		k = DefaultK
	}
	byCh := map[int][]Hit{}
	for _, h := range hits {
		if h.AmplitudeDB >= c.MinAmplitudeDB {
			byCh[h.Channel] = append(byCh[h.Channel], h)
		}
	}
	chk := map[int][]SensorCheck{}
	for _, s := range checks {
		chk[s.Channel] = append(chk[s.Channel], s)
	}
	var order []int
	seen := map[int]bool{}
	for _, ch := range channels {
		if !seen[ch] {
			seen[ch] = true
			order = append(order, ch)
		}
	}
	nConf := len(order)
	var extra []int
	for ch := range byCh {
		if !seen[ch] {
			seen[ch] = true
			extra = append(extra, ch)
		}
	}
	for ch := range chk {
		if !seen[ch] {
			seen[ch] = true
			extra = append(extra, ch)
		}
	}
	sort.Ints(extra)
	order = append(order, extra...)

	out := make([]ChannelResult, 0, len(order))
	for i, ch := range order {
		r := ChannelResult{Channel: ch, Configured: i < nConf}
		hs := byCh[ch]
		r.Hits = len(hs)
		for _, h := range hs {
			if h.AmplitudeDB >= c.HighAmplitudeDB {
				r.HighAmplitudeHits++
			}
			r.TotalCounts += h.Counts
		}
		if v, ok := HistoricIndex(hs, k); ok {
			r.HistoricIndex = &v
		} else {
			r.HistoricReason = fmt.Sprintf("historic index not computed: %d hits give K = %d (needs 0 ≤ K < N and a positive summed signal strength)", len(hs), k(len(hs)))
		}
		if v, ok := Severity(hs, j); ok {
			r.Severity = &v
		} else {
			r.SeverityReason = fmt.Sprintf("severity not computed: %d hits, fewer than %d", len(hs), j)
		}
		cs := chk[ch]
		r.Checks, r.Checked = len(cs), len(cs) > 0
		var why string
		if len(cs) > 0 {
			latest := cs[0]
			for _, s := range cs[1:] {
				// The later check rules; at equal times a failing one.
				if s.TimeS > latest.TimeS || (s.TimeS == latest.TimeS && !checkPasses(s, c.CheckMinDB)) {
					latest = s
				}
			}
			a := latest.AmplitudeDB
			r.CheckAmplitudeDB = &a
			r.CheckPassed = checkPasses(latest, c.CheckMinDB)
			why = checkWords(latest, c.CheckMinDB)
		}
		switch {
		case r.Checked && !r.CheckPassed:
			r.Reason = fmt.Sprintf("missing: %s: a dead or decoupled sensor (%d counted hits, which may understate the emission)", why, r.Hits)
		case r.Checked:
			r.Present = true
			r.Reason = fmt.Sprintf("present: %s; %d counted hits", why, r.Hits)
		case r.Hits > 0:
			r.Present = true
			r.Reason = fmt.Sprintf("present: %d counted hits at or above %g dB_AE; no sensor check", r.Hits, c.MinAmplitudeDB)
		default:
			r.Reason = fmt.Sprintf("missing: no hit at or above %g dB_AE and no sensor check: the sensor may be dead or decoupled", c.MinAmplitudeDB)
		}
		if !r.Configured {
			r.Reason = "channel not configured; " + r.Reason
		}
		out = append(out, r)
	}
	return out
}

// checkPasses reports whether a sensor check of a known kind reached minDB.
func checkPasses(s SensorCheck, minDB float64) bool {
	return (s.Kind == CheckLeadBreak || s.Kind == CheckSensorTest) && s.AmplitudeDB >= minDB && !math.IsInf(s.AmplitudeDB, 0)
}

// checkWords describes a sensor check's outcome.
func checkWords(s SensorCheck, minDB float64) string {
	switch {
	case s.Kind != CheckLeadBreak && s.Kind != CheckSensorTest:
		return fmt.Sprintf("latest sensor check at %.4g s is of unknown kind %q", s.TimeS, s.Kind)
	case checkPasses(s, minDB):
		return fmt.Sprintf("latest %s at %.4g s read %.4g dB_AE, at least %g", s.Kind, s.TimeS, s.AmplitudeDB, minDB)
	default:
		return fmt.Sprintf("latest %s at %.4g s read %.4g dB_AE, below %g", s.Kind, s.TimeS, s.AmplitudeDB, minDB)
	}
}
