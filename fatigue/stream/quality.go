package stream

import (
	"fmt"
	"math"
	"strings"
)

// Finding is one data-quality finding about a dive's record: something in
// the data that makes its evidence or its damage doubtful. The fitness
// rule on data quality turns findings into a flag.
type Finding struct {
	// Code names the kind of finding: one of the Finding* codes.
	Code string `json:"code"`
	// Detail says what was found, in words.
	Detail string `json:"detail"`
}

// Data-quality finding codes.
const (
	// FindingCutStart: the record starts away from the surface.
	FindingCutStart = "record_not_at_surface_start"
	// FindingCutEnd: the record ends away from the surface.
	FindingCutEnd = "record_not_at_surface_end"
	// FindingGap: a gap between samples below the surface longer than
	// the allowed gap.
	FindingGap = "gap_at_depth"
	// FindingCoarse: more than 1 % of the sample intervals below the
	// surface are longer than the allowed interval.
	FindingCoarse = "coarse_sampling"
	// FindingBelowAtm: a reading below what the sea allows.
	FindingBelowAtm = "pressure_below_atmospheric"
)

// BelowAtmosphericMPa is the gauge pressure below which a reading is
// impossible in the sea (an absolute pressure under half an atmosphere):
// a logger that wrote gauge values into an absolute column, or a sensor
// fault.
const BelowAtmosphericMPa = -0.05

// maxGapsListed bounds the gaps named one by one in a finding.
const maxGapsListed = 5

// standardAtmosphereMPa is the standard atmosphere, 101 325 Pa (ISO 2533),
// used only to word the below-atmospheric finding.
const standardAtmosphereMPa = 0.101325

// Quality watches a dive's samples as they stream past for the faults
// that make a record doubtful: a record that starts or ends away from the
// surface (cut off), gaps between samples below the surface, sampling too
// coarse for the rainflow gate and the hold criteria, and readings below
// atmospheric; and it keeps the surface temperature before and after the
// dive, so that residual strain is compared only at matching temperature.
// Memory is bounded whatever the record's length.
type Quality struct {
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

	beforeSum    float64
	beforeN      int
	afterSum     float64
	afterN       int
	leftSurface  bool
	tempsPresent bool
}

// NewQuality makes a quality watch. A sample is below the surface when its
// gauge pressure is above surfTolMPa; an interval below the surface (either
// end below) longer than maxGapS is a gap, and one longer than
// maxIntervalS is coarse.
func NewQuality(surfTolMPa, maxGapS, maxIntervalS float64) *Quality {
	return &Quality{surfTol: surfTolMPa, maxGap: maxGapS, maxInterval: maxIntervalS}
}

// Add takes a block's times (s from the first sample), gauge pressures
// (MPa) and temperatures (°C; nil when not logged).
func (q *Quality) Add(t, p, temp []float64) {
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

// StartsCut reports a record that starts away from the surface.
func (q *Quality) StartsCut() bool { return q.have && q.firstP > q.surfTol }

// EndsCut reports a record that ends away from the surface.
func (q *Quality) EndsCut() bool { return q.have && q.lastP > q.surfTol }

// MaxMPa is the highest gauge pressure seen (0 if none above 0).
func (q *Quality) MaxMPa() float64 { return q.maxP }

// Findings lists the data-quality findings of the record (never nil).
func (q *Quality) Findings() []Finding {
	out := []Finding{}
	if q.StartsCut() {
		out = append(out, Finding{FindingCutStart, fmt.Sprintf("the record starts at %.3g MPa, not within %.3g MPa of the surface: the dive's first part is missing; its pressure cycle is closed to the surface and counted whole, and the unrecorded descent is charged at the dive's highest recorded pressure %.3g MPa", q.firstP, q.surfTol, q.maxP)})
	}
	if q.EndsCut() {
		out = append(out, Finding{FindingCutEnd, fmt.Sprintf("the record ends at %.3g MPa, not within %.3g MPa of the surface: the dive's last part is missing; its pressure cycle is closed to the surface and counted whole, and the unrecorded ascent is charged at the dive's highest recorded pressure %.3g MPa", q.lastP, q.surfTol, q.maxP)})
	}
	if q.have && q.minP < BelowAtmosphericMPa {
		out = append(out, Finding{FindingBelowAtm, fmt.Sprintf("a reading of %.3g MPa gauge, an absolute pressure of %.3g MPa, is below what the sea allows: a gauge logger written into an absolute column, or a sensor fault; the depths and pressures of this record are doubtful", q.minP, q.minP+standardAtmosphereMPa)})
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

// SurfaceTemps returns the mean surface temperature (°C) before and after
// the dive; ok is false when either side has none.
func (q *Quality) SurfaceTemps() (before, after float64, ok bool) {
	if !q.tempsPresent || q.beforeN == 0 || q.afterN == 0 || !q.leftSurface {
		return 0, 0, false
	}
	return q.beforeSum / float64(q.beforeN), q.afterSum / float64(q.afterN), true
}
