package ledger

import "hulltally/fatigue/stream"

// Finding is one data-quality finding about a dive's record: something in
// the data that makes its evidence or its damage doubtful (JSON fields
// code and detail). The fitness rule on data quality turns findings into
// a flag.
type Finding = stream.Finding

// Data-quality finding codes.
const (
	FindingCutStart = stream.FindingCutStart
	FindingCutEnd   = stream.FindingCutEnd
	FindingGap      = stream.FindingGap
	FindingCoarse   = stream.FindingCoarse
	FindingBelowAtm = stream.FindingBelowAtm
)

// quality is a dive's data-quality watch (fatigue/stream's), as the
// ledger reads it once the dive is counted.
type quality struct{ q *stream.Quality }

// findings lists the data-quality findings of the record.
func (q *quality) findings() []Finding { return q.q.Findings() }

// surfaceTemps returns the mean surface temperature before and after the
// dive; ok is false when either side has none.
func (q *quality) surfaceTemps() (before, after float64, ok bool) { return q.q.SurfaceTemps() }
