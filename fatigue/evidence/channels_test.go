package evidence

import (
	"math"
	"strings"
	"testing"

	"pgregory.net/rapid"
)

// rampOn returns n hits on channel ch with S_i = i (i = 1..n) in time
// order, amplitude amp and 10 counts each.
func rampOn(ch, n int, amp float64) []Hit {
	hs := make([]Hit, n)
	for i := range hs {
		hs[i] = Hit{TimeS: float64(i), Channel: ch, AmplitudeDB: amp, Energy: float64(i + 1), Counts: 10}
	}
	return hs
}

func TestChannelsPresence(t *testing.T) {
	c := DefaultChannelCriterion()
	lead := func(ch int, ts, db float64) SensorCheck {
		return SensorCheck{Channel: ch, TimeS: ts, Kind: CheckLeadBreak, AmplitudeDB: db}
	}
	type want struct {
		ch              int
		configured      bool
		hits            int
		checked, passed bool
		present         bool
		reasonHas       string
	}
	tests := []struct {
		name     string
		hits     []Hit
		channels []int
		checks   []SensorCheck
		want     []want
	}{
		// Adversarial: a header-only hits file. Every unchecked channel is
		// missing; only channel 2, whose lead break read 95 dB_AE, is
		// present.
		{"empty hits file", nil, []int{1, 2, 3}, []SensorCheck{lead(2, -600, 95)}, []want{
			{1, true, 0, false, false, false, "no sensor check"},
			{2, true, 0, true, true, true, "95 dB_AE"},
			{3, true, 0, false, false, false, "no sensor check"},
		}},
		// Adversarial: pooled emission hides a silent sensor. Channel 1 has
		// 20 hits, channel 2 none and no check: missing.
		{"silent channel beside a busy one", rampOn(1, 20, 60), []int{1, 2}, nil, []want{
			{1, true, 20, false, false, true, "20 counted hits"},
			{2, true, 0, false, false, false, "missing"},
		}},
		// A failed lead break (60 < 80 dB_AE) and no hits: missing.
		{"failed check, no hits", nil, []int{1}, []SensorCheck{lead(1, -600, 60)}, []want{
			{1, true, 0, true, false, false, "below 80"},
		}},
		// A failed latest check with hits: a decoupled sensor under-reports,
		// so it is missing too.
		{"failed check with hits", rampOn(1, 5, 60), []int{1}, []SensorCheck{lead(1, -600, 90), lead(1, 5000, 55)}, []want{
			{1, true, 5, true, false, false, "understate"},
		}},
		// Re-coupled: the later check passed.
		{"passing check after a failed one", nil, []int{1}, []SensorCheck{lead(1, -900, 55), lead(1, -600, 88)}, []want{
			{1, true, 0, true, true, true, "88 dB_AE"},
		}},
		// At equal times a failing check rules.
		{"passing and failing check at once", nil, []int{1}, []SensorCheck{lead(1, -600, 88), lead(1, -600, 50)}, []want{
			{1, true, 0, true, false, false, "below 80"},
		}},
		// An unknown kind never passes, whatever it read.
		{"unknown check kind", nil, []int{1}, []SensorCheck{{Channel: 1, TimeS: -60, Kind: "tap", AmplitudeDB: 99}}, []want{
			{1, true, 0, true, false, false, "unknown kind"},
		}},
		// Faint hits (40 dB_AE, below the 45 dB_AE floor) do not show a
		// sensor alive.
		{"only faint hits", rampOn(1, 5, 40), []int{1}, nil, []want{
			{1, true, 0, false, false, false, "missing"},
		}},
		// Hits and a check on channels not configured are reported after
		// the configured ones, in channel order; duplicates once.
		{"unknown channels", join(rampOn(9, 3, 60), rampOn(1, 2, 60)), []int{1, 1}, []SensorCheck{{Channel: 7, Kind: CheckSensorTest, AmplitudeDB: 85}}, []want{
			{1, true, 2, false, false, true, "present"},
			{7, false, 0, true, true, true, "not configured"},
			{9, false, 3, false, false, true, "not configured"},
		}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := Channels(tt.hits, tt.channels, tt.checks, c)
			if len(got) != len(tt.want) {
				t.Fatalf("%d results %+v, want %d", len(got), got, len(tt.want))
			}
			for i, w := range tt.want {
				g := got[i]
				if g.Channel != w.ch || g.Configured != w.configured || g.Hits != w.hits || g.Checked != w.checked || g.CheckPassed != w.passed || g.Present != w.present {
					t.Errorf("channel %d: %+v, want %+v", w.ch, g, w)
				}
				if !strings.Contains(g.Reason, w.reasonHas) {
					t.Errorf("channel %d: reason %q, want it to contain %q", w.ch, g.Reason, w.reasonHas)
				}
			}
		})
	}
}

func TestChannelsMeasures(t *testing.T) {
	// Channel 1: 20 hits, S_i = i: H = 26/21 and severity 15.5 (worked in
	// TestHistoricIndexAndSeverity); amplitudes 60 dB_AE except the last
	// three at 80, 85 and 90 (three high-amplitude hits at ≥ 80); 10
	// counts each: 200. Channel 2: 9 hits: neither index (N ≤ 15) nor
	// severity (9 < 10).
	ch1 := rampOn(1, 20, 60)
	ch1[17].AmplitudeDB, ch1[18].AmplitudeDB, ch1[19].AmplitudeDB = 80, 85, 90
	ch2 := rampOn(2, 9, 70)
	got := Channels(join(ch2, ch1), []int{1, 2}, nil, DefaultChannelCriterion())
	if len(got) != 2 {
		t.Fatalf("results %+v", got)
	}
	a, b := got[0], got[1]
	if a.HistoricIndex == nil || math.Abs(*a.HistoricIndex-26.0/21) > 1e-12 || a.Severity == nil || *a.Severity != 15.5 {
		t.Fatalf("channel 1 index %v severity %v, want 26/21 and 15.5", fp(a.HistoricIndex), fp(a.Severity))
	}
	if a.HighAmplitudeHits != 3 || a.TotalCounts != 200 || a.Hits != 20 {
		t.Fatalf("channel 1 %+v, want 3 high-amplitude hits, 200 counts, 20 hits", a)
	}
	if b.HistoricIndex != nil || !strings.Contains(b.HistoricReason, "not computed") || b.Severity != nil || !strings.Contains(b.SeverityReason, "fewer than 10") {
		t.Fatalf("channel 2 %+v, want index and severity not computed with reasons", b)
	}
	if b.HighAmplitudeHits != 0 || b.TotalCounts != 90 {
		t.Fatalf("channel 2 %+v, want 0 high-amplitude hits, 90 counts", b)
	}
	// A custom K and J.
	c := DefaultChannelCriterion()
	c.K, c.SeverityJ = func(int) int { return 10 }, 5
	got = Channels(ch1, []int{1}, nil, c)
	// Σ_{i=11..20} = 155; H = 20/10 · 155/210; top 5 mean (16+…+20)/5 = 18.
	if h := got[0].HistoricIndex; h == nil || math.Abs(*h-310.0/210) > 1e-12 || *got[0].Severity != 18 {
		t.Fatalf("custom K, J: %+v", got[0])
	}
}

func TestChannelsNeverPresentWithoutEvidence(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		var hits []Hit
		for range rapid.IntRange(0, 30).Draw(t, "hits") {
			hits = append(hits, Hit{Channel: rapid.IntRange(1, 6).Draw(t, "ch"), AmplitudeDB: rapid.Float64Range(30, 100).Draw(t, "amp")})
		}
		var checks []SensorCheck
		for range rapid.IntRange(0, 6).Draw(t, "checks") {
			checks = append(checks, SensorCheck{Channel: rapid.IntRange(1, 6).Draw(t, "ch"), TimeS: rapid.Float64Range(-100, 100).Draw(t, "t"),
				Kind: rapid.SampledFrom([]string{CheckLeadBreak, CheckSensorTest, "other"}).Draw(t, "kind"), AmplitudeDB: rapid.Float64Range(40, 100).Draw(t, "db")})
		}
		c := DefaultChannelCriterion()
		for _, r := range Channels(hits, []int{1, 2, 3, 4}, checks, c) {
			counted := 0
			for _, h := range hits {
				if h.Channel == r.Channel && h.AmplitudeDB >= c.MinAmplitudeDB {
					counted++
				}
			}
			if r.Hits != counted {
				t.Fatalf("channel %d: %d hits, counted %d", r.Channel, r.Hits, counted)
			}
			if r.Present && !r.CheckPassed && (r.Checked || counted == 0) {
				t.Fatalf("channel %d present without a passing check or hits: %+v", r.Channel, r)
			}
			if r.Checked && !r.CheckPassed && r.Present {
				t.Fatalf("channel %d present with a failed latest check: %+v", r.Channel, r)
			}
		}
	})
}
