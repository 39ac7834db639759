// Package plan predicts the load of a planned dive from the hull's
// recent dives: the recorded dive whose peak is nearest the planned
// pressure, scaled to it, with at least as much time at depth as planned.
// It is pure: recorded loads in, a predicted load and the words of its
// basis out.
package plan

import (
	"fmt"
	"math"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// BottomFraction is the fraction of a dive's peak pressure at or above
// which a hold counts as time at depth (the bottom of the dive) and is
// stretched to the planned bottom time.
const BottomFraction = 0.95

// Recent is one recent dive's recorded load.
type Recent struct {
	// ID names the dive in the basis text (its first 8 characters).
	ID string
	// PeakMPa is the dive's peak gauge pressure, MPa; a dive without a
	// positive peak is skipped.
	PeakMPa float64
	// Cycles are the dive's rainflow cycles of gauge pressure, MPa.
	Cycles []rainflow.Cycle
	// Holds are the dive's times at pressure.
	Holds []assess.Hold
}

// Predict returns the predicted load of a dive to targetMPa (gauge
// pressure at the planned depth) with bottomMin minutes at depth, and the
// basis of the prediction in words.
//
// recent are the hull's recent dives, newest first. The dive whose peak
// is nearest targetMPa is chosen (the newer on a tie); its cycles and
// hold levels are scaled by targetMPa/peak, and its time at depth (holds
// at or above BottomFraction of its peak) is stretched to the planned
// bottom time, never shrunk: a plan shorter than the typical dive is
// predicted at the typical dive's time. With no usable dive on record the
// prediction is one cycle from the surface to targetMPa (mean half of
// it) held there for bottomMin minutes, never less than designMin (the
// design dive's bottom time): with no record of how long this hull's
// dives stay down, a plan without a bottom time (0) or with a short one
// is not predicted as a bounce.
func Predict(recent []Recent, targetMPa, bottomMin, designMin float64) (assess.Dive, string) {
	best := -1
	for i, r := range recent {
		if !(r.PeakMPa > 0) {
			continue
		}
		if best < 0 || math.Abs(r.PeakMPa-targetMPa) < math.Abs(recent[best].PeakMPa-targetMPa) {
			best = i
		}
	}
	var d assess.Dive
	if best < 0 {
		held := math.Max(bottomMin, designMin)
		d = assess.Dive{PressureCycles: []rainflow.Cycle{{Range: targetMPa, Mean: targetMPa / 2, Count: 1}},
			Holds: []assess.Hold{{LevelMPa: targetMPa, Seconds: held * 60}}}
		if held > bottomMin {
			return d, fmt.Sprintf("no dives on record: one cycle to %.3f MPa and %.0f min at it (the design dive's bottom time, as the plan gave less: %.0f min)", targetMPa, held, bottomMin)
		}
		return d, fmt.Sprintf("no dives on record: one cycle to %.3f MPa and %.0f min at it", targetMPa, held)
	}
	b := recent[best]
	s := targetMPa / b.PeakMPa
	for _, c := range b.Cycles {
		d.PressureCycles = append(d.PressureCycles, Scale(c, s))
	}
	holdS := 0.0
	for _, hl := range b.Holds {
		if hl.LevelMPa >= BottomFraction*b.PeakMPa {
			holdS += hl.Seconds
		}
	}
	ts := 1.0
	if bottomMin > 0 && holdS > 0 {
		ts = math.Max(1, bottomMin*60/holdS) // never less time at depth than the typical dive
	}
	for _, hl := range b.Holds {
		sec := hl.Seconds
		if hl.LevelMPa >= BottomFraction*b.PeakMPa {
			sec *= ts
		}
		d.Holds = append(d.Holds, assess.Hold{LevelMPa: hl.LevelMPa * s, Seconds: sec})
	}
	id := b.ID
	if len(id) > 8 {
		id = id[:8]
	}
	return d, fmt.Sprintf("dive %s (peak %.3f MPa) scaled ×%.3f to %.3f MPa (planned depth at latitude 90°), time at depth ×%.2f", id, b.PeakMPa, s, targetMPa, ts)
}

// Scale returns the cycle with its range and mean multiplied by s and
// its count unchanged.
func Scale(c rainflow.Cycle, s float64) rainflow.Cycle {
	return rainflow.Cycle{Range: c.Range * s, Mean: c.Mean * s, Count: c.Count}
}
