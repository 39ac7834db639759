package configs

import _ "embed"

// RulesYAML is the shipped fitness rule set (rules.yaml), to be parsed by
// fatigue/fitness.ParseRules. Every threshold in it is either labelled the
// operator's choice or cites the document it was taken from; those marked
// "from memory" must be checked against the edition in force, the
// per-channel acoustic-emission thresholds (severity, total counts) are
// placeholders in the instrument's units to be set from the hull's
// qualification, and the classification society or certifying authority
// sets the actual limits and intervals.
//
//go:embed rules.yaml
var RulesYAML []byte
