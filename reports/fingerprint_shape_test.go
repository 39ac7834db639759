package reports

import (
	"encoding/json"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"

	"hulltally/ledger"
)

// TestFingerprintKeepsItsShape: the maintenance records' JSON gained
// recorded_by; the report fingerprint must hash them exactly as before
// (else every report issued before would stop verifying). The frozen
// shape is the records' JSON without that field, byte for byte.
func TestFingerprintKeepsItsShape(t *testing.T) {
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
	if !strings.Contains(string(full), `"recorded_by":"k.osei"`) {
		t.Fatalf("the records' JSON lacks recorded_by: %s", full)
	}
	frozen, err := json.Marshal(fingerprintedOf(m))
	if err != nil {
		t.Fatal(err)
	}
	if want := strings.ReplaceAll(string(full), `,"recorded_by":"k.osei"`, ""); string(frozen) != want {
		t.Fatalf("the fingerprint's shape moved:\n got %s\nwant %s", frozen, want)
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
