package sn

import (
	"fmt"
	"math"
	"strings"
)

// MeanStress names the mean-stress correction, for configuration and for
// the report, which must name the choice.
type MeanStress string

// The mean-stress corrections.
const (
	// MeanStressNone applies no correction: the range (power law) or the
	// peak magnitude (log-linear) is used as it is.
	MeanStressNone MeanStress = "none"
	// MeanStressGoodman is the linear Goodman-type constant-life relation
	// on both signs: S_a,eq = S_a/(1 − |S_m|/S_u), S_u compressive for a
	// compressive mean and tensile for a tensile mean.
	MeanStressGoodman MeanStress = "goodman"
)

// ParseMeanStress returns the correction named by s (none or goodman).
func ParseMeanStress(s string) (MeanStress, error) {
	switch m := MeanStress(strings.TrimSpace(s)); m {
	case MeanStressNone, MeanStressGoodman:
		return m, nil
	}
	return "", fmt.Errorf("mean-stress correction %q: want none or goodman", s)
}

// EquivalentAmplitude returns the fully reversed stress amplitude of equal
// life for a cycle of amplitude (≥ 0) and mean (signed, compression
// negative), in MPa, by the linear Goodman-type relation
//
//	S_a,eq = S_a / (1 − |S_m|/S_u)
//
// with S_u = st.CompressiveMPa for S_m < 0 and st.TensileMPa for S_m > 0.
// |S_m| ≥ S_u is a static failure and returns +Inf (never a finite value
// in the hull's favour).
func EquivalentAmplitude(amplitude, mean float64, st Strengths) (float64, error) {
	if !finite(amplitude) || amplitude < 0 {
		return 0, fmt.Errorf("goodman: amplitude %v MPa must be a non-negative finite number", amplitude)
	}
	if !finite(mean) {
		return 0, fmt.Errorf("goodman: mean %v MPa must be a finite number", mean)
	}
	if err := st.Validate(); err != nil {
		return 0, fmt.Errorf("goodman: %w", err)
	}
	su := st.TensileMPa
	if mean < 0 {
		su = st.CompressiveMPa
	}
	f := 1 - math.Abs(mean)/su
	if f <= 0 {
		return math.Inf(1), nil
	}
	return amplitude / f, nil
}
