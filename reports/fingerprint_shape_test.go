package reports

import (
	"encoding/json"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/ledger"
)

// TestMaintenanceEarlierShape: the maintenance records' JSON gained
// recorded_by as its last field; their earlier shape, which reports
// issued before hashed, is that JSON without it, byte for byte, and is
// what the earlier fingerprint strips back to.
func TestMaintenanceEarlierShape(t *testing.T) {
	at := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	dive := uuid.New()
	m := &ledger.Maintenance{
		Inspections: []ledger.Inspection{{ID: uuid.New(), At: at, Method: "visual", Findings: "none", Result: "pass", Actor: "k.osei", RecordedAt: at, RecordedBy: "k.osei"}},
		ProofTests: []ledger.ProofTest{
			{ID: uuid.New(), At: at, PressureMPa: 50, Result: "pass", Notes: "yard", Actor: "k.osei", RecordedAt: at, RecordedBy: "k.osei", Baseline: map[string]float64{"hoop1": -118}},
			{ID: uuid.New(), At: at, PressureMPa: 50, Result: "pass", Actor: "k.osei", DiveID: &dive, RecordedAt: at, RecordedBy: "k.osei"},
		},
		Decisions: []ledger.Decision{{ID: uuid.New(), At: at, Kind: "withdraw", Actor: "k.osei", Reason: "crack", RecordedAt: at, RecordedBy: "k.osei"}},
	}
	full, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	// The earlier shape, written out field by field as the records had it.
	type inspection struct {
		ID         uuid.UUID `json:"id"`
		At         time.Time `json:"at"`
		Method     string    `json:"method"`
		Findings   string    `json:"findings"`
		Result     string    `json:"result"`
		Actor      string    `json:"actor"`
		RecordedAt time.Time `json:"recorded_at"`
	}
	type proofTest struct {
		ID          uuid.UUID          `json:"id"`
		At          time.Time          `json:"at"`
		PressureMPa float64            `json:"pressure_mpa"`
		Result      string             `json:"result"`
		Notes       string             `json:"notes"`
		Actor       string             `json:"actor"`
		DiveID      *uuid.UUID         `json:"dive_id,omitempty"`
		Baseline    map[string]float64 `json:"baseline_compliance_ue_per_mpa"`
		RecordedAt  time.Time          `json:"recorded_at"`
	}
	type decision struct {
		ID         uuid.UUID `json:"id"`
		At         time.Time `json:"at"`
		Kind       string    `json:"kind"`
		Actor      string    `json:"actor"`
		Reason     string    `json:"reason"`
		RecordedAt time.Time `json:"recorded_at"`
	}
	earlier := struct {
		Inspections []inspection `json:"inspections"`
		ProofTests  []proofTest  `json:"proof_tests"`
		Decisions   []decision   `json:"decisions"`
	}{}
	for _, x := range m.Inspections {
		earlier.Inspections = append(earlier.Inspections, inspection{x.ID, x.At, x.Method, x.Findings, x.Result, x.Actor, x.RecordedAt})
	}
	for _, x := range m.ProofTests {
		earlier.ProofTests = append(earlier.ProofTests, proofTest{x.ID, x.At, x.PressureMPa, x.Result, x.Notes, x.Actor, x.DiveID, x.Baseline, x.RecordedAt})
	}
	for _, x := range m.Decisions {
		earlier.Decisions = append(earlier.Decisions, decision{x.ID, x.At, x.Kind, x.Actor, x.Reason, x.RecordedAt})
	}
	want, err := json.Marshal(earlier)
	if err != nil {
		t.Fatal(err)
	}
	if got := endingRecordedBy.ReplaceAll(full, []byte("}")); string(got) != string(want) {
		t.Fatalf("the earlier shape moved:\n got %s\nwant %s", got, want)
	}
}

// TestEarlierShapeStripsOnlyTheNewFields: the earlier fingerprint leaves
// out the recorded_by that ends a correction's or a void's JSON (fields
// added after reports were first issued), never a dive's own recorded_by
// (hashed since dives carry it), and nothing else.
func TestEarlierShapeStripsOnlyTheNewFields(t *testing.T) {
	by := "k.osei"
	d := ledger.Dive{ID: uuid.New(), Hull: "EX", RecordedBy: &by,
		Corrections: []ledger.Correction{{ID: uuid.New(), Field: "site", Value: `a "quoted", site}`, Reason: "typo", Actor: "o\"dd", RecordedBy: "o\"dd"}},
		Void:        &ledger.Void{ID: uuid.New(), Reason: "wrong hull", Actor: "k.osei", RecordedBy: "k.osei"}}
	b, err := json.Marshal(d)
	if err != nil {
		t.Fatal(err)
	}
	old := string(endingRecordedBy.ReplaceAll(b, []byte("}")))
	want := strings.Replace(strings.Replace(string(b), `,"recorded_by":"o\"dd"}`, "}", 1), `,"recorded_by":"k.osei"}`, "}", 1)
	if old != want {
		t.Fatalf("stripped\n%s\nwant\n%s", old, want)
	}
	if !strings.Contains(old, `"recorded_by":"k.osei","`) {
		t.Fatalf("the dive's own recorded_by was stripped: %s", old)
	}
}
