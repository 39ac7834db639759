package configs

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func env(m map[string]string) func(string) (string, bool) {
	return func(k string) (string, bool) { v, ok := m[k]; return v, ok }
}

func TestLayers(t *testing.T) {
	notRoot := func() bool { return false }
	c, err := Load(Options{Env: env(nil), UserHome: "/home/op", IsRoot: notRoot})
	if err != nil {
		t.Fatal(err)
	}
	if c.Home != "/home/op/.local/share/hulltally" || c.Database.URL != "" || c.Fatigue.Allowable != 0.3 || c.Fatigue.GateMPa() != 0.05 || c.Ingest.DefaultLatitude != nil {
		t.Fatalf("defaults: %+v", c)
	}
	file := filepath.Join(t.TempDir(), "c.yaml")
	os.WriteFile(file, []byte("fatigue:\n  allowable: 0.2\n  design_fatigue_factor: 2\ningest:\n  default_latitude: 12.5\n"), 0o644)
	c, err = Load(Options{File: file, Env: env(map[string]string{"HULLTALLY_FATIGUE_ALLOWABLE": "0.1", "HULLTALLY_DATABASE_URL": "postgres://x/y", "HULLTALLY_HOME": "/srv/ht"}), IsRoot: notRoot})
	if err != nil {
		t.Fatal(err)
	}
	// Environment beats the file, the file beats the defaults.
	if c.Fatigue.Allowable != 0.1 || c.Fatigue.DesignFatigueFactor != 2 || c.Database.URL != "postgres://x/y" || c.Home != "/srv/ht" || *c.Ingest.DefaultLatitude != 12.5 {
		t.Fatalf("layers: %+v", c)
	}
	c, err = Load(Options{Env: env(nil), IsRoot: func() bool { return true }})
	if err != nil || c.Home != "/var/lib/hulltally" {
		t.Fatalf("root home: %v %v", c, err)
	}
}

func TestBadValues(t *testing.T) {
	for _, tc := range []struct{ key, val, want string }{
		{"HULLTALLY_FATIGUE_DESIGN_FATIGUE_FACTOR", "0.5", "design_fatigue_factor"},
		{"HULLTALLY_FATIGUE_MEAN_STRESS", "gerber", "mean_stress"},
		{"HULLTALLY_FATIGUE_ALLOWABLE", "0", "allowable"},
		{"HULLTALLY_INGEST_DEFAULT_LATITUDE", "95", "default_latitude"},
		{"HULLTALLY_DATABASE_MAX_CONNS", "0", "max_conns"},
		{"HULLTALLY_FATIGUE_COMBINE", "multiply", "combine"},
		// Loose or nonsense values that would make a hull look better are
		// refused, never read as 0 or taken as given.
		{"HULLTALLY_EVIDENCE_MIN_AMPLITUDE_DB", "abc", "min_amplitude_db must be a number"},
		{"HULLTALLY_FATIGUE_GATE_FACTOR", "five", "gate_factor must be a number"},
		{"HULLTALLY_EVIDENCE_MIN_AMPLITUDE_DB", "141", "evidence.min_amplitude_db must lie in (0, 100], got 141"},
		{"HULLTALLY_EVIDENCE_ONSET_HITS", "1e9", "evidence.onset_hits"},
		{"HULLTALLY_EVIDENCE_ONSET_INCREMENT_FRACTION", "0.9", "evidence.onset_increment_fraction"},
		{"HULLTALLY_EVIDENCE_HOLD_SETTLE_S", "1e12", "evidence.hold_settle_s"},
		{"HULLTALLY_PROOF_TOLERANCE", "0.19", "proof.tolerance"},
		{"HULLTALLY_INGEST_SURFACE_TOLERANCE_MPA", "5", "ingest.surface_tolerance_mpa"},
		{"HULLTALLY_FATIGUE_ALLOWABLE", "3", "allowable"},
	} {
		_, err := Load(Options{Env: env(map[string]string{tc.key: tc.val}), UserHome: "/h", IsRoot: func() bool { return false }})
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s=%s: %v", tc.key, tc.val, err)
		}
	}
}

func TestShippedCurves(t *testing.T) {
	b, src, err := Fatigue{}.Curves()
	if err != nil || len(b) == 0 || !strings.Contains(src, "shipped") {
		t.Fatalf("%v %q", err, src)
	}
	if !strings.Contains(string(b), "dnv-rp-c203-d-air") {
		t.Fatal("curve D missing from the shipped library")
	}
}
