package ledger

import (
	"fmt"
	"math"
	"strings"
)

// Finding is one data-quality finding about a dive's record: something in
// the data that makes its evidence or its damage doubtful. The fitness
// rule on data quality turns findings into a flag.
type Finding struct {
	// Code names the kind of finding: record_not_at_surface_start,
	// record_not_at_surface_end, gap_at_depth, coarse_sampling.
	Code string `json:"code"`
	// Detail says what was found, in words.
	Detail string `json:"detail"`
}

// Data-quality finding codes.
const (
	FindingCutStart = "record_not_at_surface_start"
	FindingCutEnd   = "record_not_at_surface_end"
	FindingGap      = "gap_at_depth"
	FindingCoarse   = "coarse_sampling"
	FindingBelowAtm = "pressure_below_atmospheric"
)

// belowAtmMPa is the gauge pressure below which a reading is impossible
// in the sea (an absolute pressure under half an atmosphere): a logger
// that wrote gauge values into an absolute column, or a sensor fault.
const belowAtmMPa = -0.05

// maxGapsListed bounds the gaps named one by one in a finding.
const maxGapsListed = 5

// quality watches a dive's samples as they stream past for the faults
// that make a record doubtful: a record that starts or ends away from the
// surface (cut off), gaps between samples below the surface, and sampling
// too coarse for the rainflow gate and the hold criteria; and it keeps
// the surface temperature before and after the dive, so that residual
// strain is compared only at matching temperature. Memory is bounded
// whatever the record's length.
type quality struct {
	surfTol, maxGap, maxInterval float64

	have           bool
	firstP, lastP  float64
	maxP           float64
	minP           float64
	prevT, prevP   float64
	gaps           int
	gapList        []string
	longestGapS    float64
	depthIntervals int64
	coarse         int64
	longestS       float64

	tempCol      int
	beforeSum    float64
	beforeN      int
	afterSum     float64
	afterN       int
	leftSurface  bool
	tempsPresent bool
}

func newQuality(surfTol, maxGap, maxInterval float64, tempCol int) *quality {
	return &quality{surfTol: surfTol, maxGap: maxGap, maxInterval: maxInterval, tempCol: tempCol}
}

// add takes a block's times (s from the first sample), gauge pressures and
// temperatures (nil when not logged).
func (q *quality) add(t, p, temp []float64) {
	for i := range t {
		if !q.have {
			q.have, q.firstP, q.minP = true, p[i], p[i]
		} else {
			dt := t[i] - q.prevT
			below := q.prevP > q.surfTol || p[i] > q.surfTol
			if below {
				q.depthIntervals++
				if dt > q.maxInterval {
					q.coarse++
				}
				if dt > q.longestS {
					q.longestS = dt
				}
				if dt > q.maxGap {
					q.gaps++
					q.longestGapS = math.Max(q.longestGapS, dt)
					if len(q.gapList) < maxGapsListed {
						q.gapList = append(q.gapList, fmt.Sprintf("%.0f s from %.0f s (%.3g to %.3g MPa)", dt, q.prevT, q.prevP, p[i]))
					}
				}
			}
		}
		q.prevT, q.prevP, q.lastP = t[i], p[i], p[i]
		q.maxP = math.Max(q.maxP, p[i])
		q.minP = math.Min(q.minP, p[i])
		if temp != nil {
			q.tempsPresent = true
			if p[i] > q.surfTol {
				q.leftSurface = true
				q.afterSum, q.afterN = 0, 0
				continue
			}
			if !q.leftSurface {
				q.beforeSum += temp[i]
				q.beforeN++
			} else {
				q.afterSum += temp[i]
				q.afterN++
			}
		}
	}
}

// startsCut and endsCut report a record that starts or ends away from the
// surface.
func (q *quality) startsCut() bool { return q.have && q.firstP > q.surfTol }
func (q *quality) endsCut() bool   { return q.have && q.lastP > q.surfTol }

// findings lists the data-quality findings of the record.
func (q *quality) findings() []Finding {
	out := []Finding{}
	if q.startsCut() {
		out = append(out, Finding{FindingCutStart, fmt.Sprintf("the record starts at %.3g MPa, not within %.3g MPa of the surface: the dive's first part is missing; its pressure cycle is closed to the surface and counted whole, and the unrecorded descent is charged at the dive's highest recorded pressure %.3g MPa", q.firstP, q.surfTol, q.maxP)})
	}
	if q.endsCut() {
		out = append(out, Finding{FindingCutEnd, fmt.Sprintf("the record ends at %.3g MPa, not within %.3g MPa of the surface: the dive's last part is missing; its pressure cycle is closed to the surface and counted whole, and the unrecorded ascent is charged at the dive's highest recorded pressure %.3g MPa", q.lastP, q.surfTol, q.maxP)})
	}
	if q.have && q.minP < belowAtmMPa {
		out = append(out, Finding{FindingBelowAtm, fmt.Sprintf("a reading of %.3g MPa gauge, an absolute pressure of %.3g MPa, is below what the sea allows: a gauge logger written into an absolute column, or a sensor fault; the depths and pressures of this record are doubtful", q.minP, q.minP+0.101325)})
	}
	if q.gaps > 0 {
		d := fmt.Sprintf("%d gap(s) between samples below the surface longer than %.0f s (longest %.0f s): %s", q.gaps, q.maxGap, q.longestGapS, strings.Join(q.gapList, "; "))
		if q.gaps > len(q.gapList) {
			d += ", …"
		}
		out = append(out, Finding{FindingGap, d + "; the time of each gap is charged at the higher neighbouring pressure, and anything that happened in it is unknown"})
	}
	if q.coarse > 0 && q.coarse*100 > q.depthIntervals {
		out = append(out, Finding{FindingCoarse, fmt.Sprintf("%d of %d sample intervals below the surface are longer than %.0f s (longest %.0f s): too coarse for the rainflow gate and the hold criteria; cycles and emission between samples may be missed", q.coarse, q.depthIntervals, q.maxInterval, q.longestS)})
	}
	return out
}

// surfaceTemps returns the mean surface temperature before and after the
// dive; ok is false when either side has none.
func (q *quality) surfaceTemps() (before, after float64, ok bool) {
	if !q.tempsPresent || q.beforeN == 0 || q.afterN == 0 || !q.leftSurface {
		return 0, 0, false
	}
	return q.beforeSum / float64(q.beforeN), q.afterSum / float64(q.afterN), true
}
