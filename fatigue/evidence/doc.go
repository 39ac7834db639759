// Package evidence turns one dive's readings into the evidence of damage in
// a composite pressure hull: acoustic emission (the onset of significant
// emission, the Felicity ratio against the highest pressure the hull has
// already seen, emission during the hold at depth, the historic index and
// the severity, pooled and per channel, with sensor checks that tell a
// quiet sensor from a dead one) and strain (a data-quality check per
// gauge, compliance against a baseline, residual strain after surfacing
// at matching temperature, hysteresis between descent and ascent, creep
// during the hold).
//
// The judgements lean to the safe side: windows slide (a burst is never
// split between fixed bins), a relative test is paired with an absolute
// limit, and a figure that cannot be judged is reported as not computed
// with its reason, never as a passing value.
//
// The inputs are a dive's decimated Profile (time, gauge pressure in MPa
// and strain per gauge in microstrain, negative in compression) and its
// acoustic-emission hits. Phases splits the dive into descent, hold and
// ascent; every other measure is taken on those phases.
//
// Every constant is a field of a criterion value with a documented default;
// each default is labelled as recalled from a code of practice ("from
// memory": check the edition in force), as common practice, or as the
// operator's choice. The figures are an engineering aid: acceptance of a
// hull rests with the classification society or certifying authority.
//
// Units are SI throughout: MPa, s, microstrain (µε). The package is pure:
// no I/O, no clock, no package-level mutable state.
package evidence
