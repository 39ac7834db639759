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
// is not predicted as a bounce. The same hold is added to the chosen
// dive's load when that dive shows no time at depth.
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
		return d, fmt.Sprintf("no dive on record with a pressure peak: one cycle to %.3f MPa held for %s", targetMPa, heldText(held, bottomMin))
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
	if holdS == 0 {
		// The dive shows no time near its peak (its time at pressure
		// missing, or a record of a sample or two): its holds say nothing
		// of how long a dive stays down, so the plan's bottom time, never
		// less than the design dive's, is held at the target, as with no
		// dive on record.
		held := math.Max(bottomMin, designMin)
		for _, hl := range b.Holds {
			d.Holds = append(d.Holds, assess.Hold{LevelMPa: hl.LevelMPa * s, Seconds: hl.Seconds})
		}
		d.Holds = append(d.Holds, assess.Hold{LevelMPa: targetMPa, Seconds: held * 60})
		return d, fmt.Sprintf("dive %s (peak %.3f MPa) scaled ×%.3f to %.3f MPa (planned depth at latitude 90°); it shows no time at depth, so the target is held for %s", diveRef(b.ID), b.PeakMPa, s, targetMPa, heldText(held, bottomMin))
	}
	ts := 1.0
	if bottomMin > 0 {
		ts = math.Max(1, bottomMin*60/holdS) // never less time at depth than the typical dive
	}
	for _, hl := range b.Holds {
		sec := hl.Seconds
		if hl.LevelMPa >= BottomFraction*b.PeakMPa {
			sec *= ts
		}
		d.Holds = append(d.Holds, assess.Hold{LevelMPa: hl.LevelMPa * s, Seconds: sec})
	}
	return d, fmt.Sprintf("dive %s (peak %.3f MPa) scaled ×%.3f to %.3f MPa (planned depth at latitude 90°), time at depth ×%.2f", diveRef(b.ID), b.PeakMPa, s, targetMPa, ts)
}

// diveRef is a dive's id as the basis names it: its first 8 characters.
func diveRef(id string) string {
	if len(id) > 8 {
		return id[:8]
	}
	return id
}

// heldText says how long the target is held: the plan's minutes, or the
// design dive's where the plan gave less.
func heldText(held, bottomMin float64) string {
	if held > bottomMin {
		return fmt.Sprintf("%.0f min (the design dive's bottom time, as the plan gave less: %.0f min)", held, bottomMin)
	}
	return fmt.Sprintf("%.0f min", held)
}

// Scale returns the cycle with its range and mean multiplied by s and
// its count unchanged.
func Scale(c rainflow.Cycle, s float64) rainflow.Cycle {
	return rainflow.Cycle{Range: c.Range * s, Mean: c.Mean * s, Count: c.Count}
}
