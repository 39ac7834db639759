// Package reports turns ledger records into what people read: text and
// JSON views now, PDF fitness-for-service summaries later. It carries the
// safety caution that every report and status view prints.
package reports

// Caution is printed on every report and status view.
const Caution = "CAUTION: these figures are an engineering aid computed from the hulltally ledger. " +
	"Acceptance of a pressure hull, above all one that carries people, rests with the classification " +
	"society or certifying authority under its rules and with qualified, licensed engineers; where this " +
	"tool and those rules differ, the rules govern. Curves and limits are the ones the operator configured " +
	"and must be checked against qualified data for the actual laminate and parts."
