package ledger_test

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"runtime/debug"
	"testing"

	"hulltally/ledger"
)

// TestAssessmentRecordsSoftware: each new assessment's config_json names
// the build under "software" (module version and VCS revision, as the
// running binary reports them), and the configuration hash leaves it
// out: the same settings give the hash the ledger reports.
func TestAssessmentRecordsSoftware(t *testing.T) {
	l := newLedger(t, 0)
	ctx := context.Background()
	st := start0
	if _, err := l.LogDive(ctx, ledger.LogRequest{Hull: serial, Samples: writeFile(t, "p.csv", "t_s,pressure_mpa\n0,0\n900,20\n1800,0\n"), Start: &st}); err != nil {
		t.Fatal(err)
	}
	if _, err := l.Assess(ctx, ledger.AssessOptions{Reason: "again"}); err != nil {
		t.Fatal(err)
	}
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		t.Fatal("no build info in the test binary")
	}
	rows, err := l.Pool().Query(ctx, "SELECT config_json, encode(config_hash, 'hex') FROM assessments ORDER BY seq")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var hashes []string
	for rows.Next() {
		var js, hash string
		if err := rows.Scan(&js, &hash); err != nil {
			t.Fatal(err)
		}
		var doc struct {
			Software *ledger.Software `json:"software"`
		}
		if err := json.Unmarshal([]byte(js), &doc); err != nil {
			t.Fatal(err)
		}
		if doc.Software == nil || doc.Software.Version != bi.Main.Version || doc.Software.Module != bi.Main.Path || doc.Software.Go != bi.GoVersion {
			t.Errorf("software recorded %+v, want version %q of %q", doc.Software, bi.Main.Version, bi.Main.Path)
		}
		// The hash is SHA-256 of the canonical settings: the document
		// without "software", "curves_source" and the per-component
		// records added at storing.
		var all map[string]any
		if err := json.Unmarshal([]byte(js), &all); err != nil {
			t.Fatal(err)
		}
		delete(all, "software")
		delete(all, "curves_source")
		delete(all, "components")
		canon, err := json.Marshal(all)
		if err != nil {
			t.Fatal(err)
		}
		if sum := sha256.Sum256(canon); hex.EncodeToString(sum[:]) != hash {
			t.Errorf("config hash %s is not the hash of the settings without software %s", hash, canon)
		}
		hashes = append(hashes, hash)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	if len(hashes) != 2 || hashes[0] != hashes[1] {
		t.Fatalf("config hashes %v: want two equal (software is not hashed)", hashes)
	}
	h, err := l.Hull(ctx, serial)
	if err != nil {
		t.Fatal(err)
	}
	dmg, err := l.HullDamage(ctx, h)
	if err != nil {
		t.Fatal(err)
	}
	if dmg.ConfigHash != hashes[0] {
		t.Errorf("hull damage config hash %s, want %s", dmg.ConfigHash, hashes[0])
	}
}
