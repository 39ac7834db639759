// Package fitness turns what the ledger knows about a composite pressure
// hull into flags, a fitness status and a pre-dive clearance.
//
// Three steps, each a pure function of plain values:
//
//   - Evaluate applies the configured rules (ParseRules reads them from
//     configs/rules.yaml) to a hull's facts: the governing damage ratio, the
//     evidence of each dive since the last clearing event, and the time and
//     dives since the last passing inspection and proof test. Each rule
//     that trips gives a Flag with its value, threshold, basis and source.
//   - Status turns open flags and the recorded inspections, proof tests and
//     maintenance decisions into one of fit, watch, hold or withdrawn, with
//     every reason in words. A hold clears only after a passing inspection
//     or proof test later than the flag and, later still, a decision to
//     return to service by a named person with a reason; withdrawn is set
//     and lifted only by recorded decisions.
//   - Clear answers the operator's question before a dive: go or no-go for
//     the planned depth, pressure (against the collapse pressure) and
//     predicted damage, with every check listed.
//
// Every fact carries two times: when it happened (At, Start) and when the
// ledger recorded it (RecordedAt). "Later" means later in both: a dive
// whose logger clock is behind but that the ledger recorded after an
// inspection is not cleared by it, and an inspection backdated before a
// dive already recorded is not either. Flags are ordered by recording
// time, then by event time. A zero RecordedAt falls back to the event time.
//
// The package leans to the safe side throughout: a value that is missing,
// not a number or otherwise doubtful never makes a hull look better; it
// raises the rule's configured missing-data level instead. A record dated
// after "now" cannot clear anything.
//
// The figures are an engineering aid computed from the ledger. Acceptance
// of a pressure hull, above all one for human occupancy, rests with the
// classification society or certifying authority under its rules and with
// qualified, licensed engineers; where they differ, the rules govern. The
// thresholds are the ones the operator configured and must be checked
// against qualified data and the rules in force.
//
// Pure: no I/O, no clock (the time is always passed in), no package-level
// mutable state.
package fitness
