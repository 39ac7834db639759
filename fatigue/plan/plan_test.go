package plan

import (
	"reflect"
	"testing"

	"hulltally/fatigue/assess"
	"hulltally/fatigue/rainflow"
)

// Expected values are worked by hand: scale = target/peak, holds at or
// above 0.95 × peak stretched by max(1, planned s / recorded bottom s).
func TestPredict(t *testing.T) {
	deep := Recent{ID: "aaaaaaaa-1111", PeakMPa: 20,
		Cycles: []rainflow.Cycle{{Range: 20, Mean: 10, Count: 1}, {Range: 2, Mean: 19, Count: 0.5}},
		Holds:  []assess.Hold{{LevelMPa: 10, Seconds: 300}, {LevelMPa: 19, Seconds: 600}, {LevelMPa: 20, Seconds: 600}}}
	shallow := Recent{ID: "bbbbbbbb-2222", PeakMPa: 5, Cycles: []rainflow.Cycle{{Range: 5, Mean: 2.5, Count: 1}},
		Holds: []assess.Hold{{LevelMPa: 5, Seconds: 1200}}}
	tests := []struct {
		name      string
		recent    []Recent
		target    float64
		bottomMin float64
		designMin float64
		want      assess.Dive
		wantBasis string
	}{{
		// 30 MPa from the 20 MPa dive: ×1.5; bottom 19 and 20 MPa
		// (≥ 19 = 0.95×20) hold 1200 s; planned 60 min = 3600 s: ×3.
		name: "nearest dive scaled up, bottom stretched", recent: []Recent{shallow, deep}, target: 30, bottomMin: 60,
		want: assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 30, Mean: 15, Count: 1}, {Range: 3, Mean: 28.5, Count: 0.5}},
			Holds: []assess.Hold{{LevelMPa: 15, Seconds: 300}, {LevelMPa: 28.5, Seconds: 1800}, {LevelMPa: 30, Seconds: 1800}}},
		wantBasis: "dive aaaaaaaa (peak 20.000 MPa) scaled ×1.500 to 30.000 MPa (planned depth at latitude 90°), time at depth ×3.00",
	}, {
		// Adversarial: a plan with less bottom time than the typical dive
		// is predicted at the typical dive's time (×1, not ×0.5).
		name: "short plan never shortens time at depth", recent: []Recent{shallow}, target: 5, bottomMin: 10,
		want:      assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 5, Mean: 2.5, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 5, Seconds: 1200}}},
		wantBasis: "dive bbbbbbbb (peak 5.000 MPa) scaled ×1.000 to 5.000 MPa (planned depth at latitude 90°), time at depth ×1.00",
	}, {
		// A dive without a positive peak is no basis; with none left the
		// plan is one full cycle and the planned minutes at the target.
		name: "no usable dive", recent: []Recent{{ID: "cccccccc", PeakMPa: 0}}, target: 12, bottomMin: 45,
		want:      assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 12, Mean: 6, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 12, Seconds: 2700}}},
		wantBasis: "no dive on record with a pressure peak: one cycle to 12.000 MPa held for 45 min",
	}, {
		// Adversarial: no dive on record and no bottom time given (0) is
		// not a bounce: the design dive's bottom time (30 min here) is held.
		name: "no dive on record, no bottom time", recent: nil, target: 12, bottomMin: 0, designMin: 30,
		want:      assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 12, Mean: 6, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 12, Seconds: 1800}}},
		wantBasis: "no dive on record with a pressure peak: one cycle to 12.000 MPa held for 30 min (the design dive's bottom time, as the plan gave less: 0 min)",
	}, {
		// Nor is a short plan: 10 min planned, 30 min held.
		name: "no dive on record, short plan", recent: nil, target: 12, bottomMin: 10, designMin: 30,
		want:      assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 12, Mean: 6, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 12, Seconds: 1800}}},
		wantBasis: "no dive on record with a pressure peak: one cycle to 12.000 MPa held for 30 min (the design dive's bottom time, as the plan gave less: 10 min)",
	}, {
		// Adversarial: the nearest dive shows no time near its peak (only
		// a hold at 2 of its 5 MPa): its holds are kept, scaled, and the
		// plan's 600 min (more than the design's 30) held at the target —
		// not dropped as a bounce.
		name: "dive without time at depth", recent: []Recent{{ID: "dddddddd-3333", PeakMPa: 5, Cycles: []rainflow.Cycle{{Range: 5, Mean: 2.5, Count: 1}},
			Holds: []assess.Hold{{LevelMPa: 2, Seconds: 300}}}}, target: 10, bottomMin: 600, designMin: 30,
		want: assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 10, Mean: 5, Count: 1}},
			Holds: []assess.Hold{{LevelMPa: 4, Seconds: 300}, {LevelMPa: 10, Seconds: 36000}}},
		wantBasis: "dive dddddddd (peak 5.000 MPa) scaled ×2.000 to 10.000 MPa (planned depth at latitude 90°); it shows no time at depth, so the target is held for 600 min",
	}, {
		// Equal distance (4 and 6 around 5): the newer (first) wins.
		name: "tie goes to the newer dive", recent: []Recent{{ID: "new", PeakMPa: 4, Cycles: []rainflow.Cycle{{Range: 4, Mean: 2, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 4, Seconds: 60}}},
			{ID: "old", PeakMPa: 6, Cycles: []rainflow.Cycle{{Range: 6, Mean: 3, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 6, Seconds: 60}}}}, target: 5, bottomMin: 0,
		want:      assess.Dive{PressureCycles: []rainflow.Cycle{{Range: 5, Mean: 2.5, Count: 1}}, Holds: []assess.Hold{{LevelMPa: 5, Seconds: 60}}},
		wantBasis: "dive new (peak 4.000 MPa) scaled ×1.250 to 5.000 MPa (planned depth at latitude 90°), time at depth ×1.00",
	}}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, basis := Predict(tc.recent, tc.target, tc.bottomMin, tc.designMin)
			if !reflect.DeepEqual(got, tc.want) {
				t.Errorf("predicted %+v, want %+v", got, tc.want)
			}
			if basis != tc.wantBasis {
				t.Errorf("basis %q, want %q", basis, tc.wantBasis)
			}
		})
	}
}
