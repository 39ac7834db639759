package configs

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"gopkg.in/yaml.v3"
)

func env(m map[string]string) func(string) (string, bool) {
	return func(k string) (string, bool) { v, ok := m[k]; return v, ok }
}

// environ lists m as os.Environ would.
func environ(m map[string]string) func() []string {
	return func() []string {
		var out []string
		for k, v := range m {
			out = append(out, k+"="+v)
		}
		return out
	}
}

func notRoot() bool { return false }

// writeFile writes body to a fresh file and returns its path.
func writeFile(t *testing.T, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "c.yaml")
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// layerCase is one configuration fault, put in one layer.
type layerCase struct {
	name  string
	layer string // embedded, file or env
	body  string // YAML for embedded and file layers
	vars  map[string]string
	kind  error    // ErrUnknownKey, ErrBadValue, ErrBadFile
	key   string   // Error.Key wanted ("" to skip)
	sugg  string   // Error.Suggestion wanted ("" to skip)
	want  []string // substrings of the message
}

// loadLayer loads tc's fault in its layer on top of the shipped
// configuration.
func loadLayer(t *testing.T, tc layerCase) (*Config, string, error) {
	t.Helper()
	o := Options{Env: env(tc.vars), Environ: environ(tc.vars), UserHome: "/h", IsRoot: notRoot}
	switch tc.layer {
	case "file":
		o.File = writeFile(t, tc.body)
		c, err := Load(o)
		return c, o.File, err
	case "env":
		c, err := Load(o)
		return c, "", err
	}
	t.Fatalf("no layer %q", tc.layer)
	return nil, "", nil
}

func checkRefused(t *testing.T, tc layerCase, c *Config, err error, where string) {
	t.Helper()
	if err == nil {
		t.Fatalf("loaded silently: %+v", c)
	}
	msg := err.Error()
	if !errors.Is(err, tc.kind) {
		t.Errorf("errors.Is(%v) false: %v", tc.kind, err)
	}
	var ce *Error
	if !errors.As(err, &ce) {
		t.Fatalf("not a *configs.Error: %T %v", err, err)
	}
	if tc.key != "" && ce.Key != tc.key {
		t.Errorf("Key = %q, want %q (%v)", ce.Key, tc.key, err)
	}
	if tc.sugg != "" && ce.Suggestion != tc.sugg {
		t.Errorf("Suggestion = %q, want %q (%v)", ce.Suggestion, tc.sugg, err)
	}
	if where != "" && !strings.Contains(msg, where) {
		t.Errorf("message does not name %q: %s", where, msg)
	}
	for _, w := range tc.want {
		if !strings.Contains(msg, w) {
			t.Errorf("message does not contain %q: %s", w, msg)
		}
	}
}

// TestMisspeltKeysRefused: a misspelt or misplaced key in any layer
// must never load silently with the default in its place (a misspelt
// fatigue.allowable of 0.05 would leave 0.3 in force: six times the
// damage the operator meant to allow).
func TestMisspeltKeysRefused(t *testing.T) {
	for _, tc := range []layerCase{
		{name: "misspelt key", layer: "file", body: "fatigue:\n  alowable: 0.05\n", kind: ErrUnknownKey,
			key: "fatigue.alowable", sugg: "fatigue.allowable", want: []string{"line 2", "unknown key fatigue.alowable", "did you mean fatigue.allowable?"}},
		{name: "key outside its section", layer: "file", body: "allowable: 0.05\n", kind: ErrUnknownKey,
			key: "allowable", sugg: "fatigue.allowable", want: []string{"line 1", "did you mean fatigue.allowable?"}},
		{name: "key in the wrong section", layer: "file", body: "evidence:\n  allowable: 0.05\n", kind: ErrUnknownKey,
			key: "evidence.allowable", sugg: "fatigue.allowable"},
		{name: "unindented key", layer: "file", body: "fatigue:\nallowable: 0.05\n", kind: ErrUnknownKey,
			key: "allowable", sugg: "fatigue.allowable"},
		{name: "misspelt section", layer: "file", body: "fatigu:\n  allowable: 0.05\n", kind: ErrUnknownKey,
			key: "fatigu", sugg: "fatigue"},
		{name: "upper-case section", layer: "file", body: "Fatigue:\n  allowable: 0.05\n", kind: ErrUnknownKey,
			key: "Fatigue", sugg: "fatigue"},
		{name: "upper-case key", layer: "file", body: "fatigue:\n  Allowable: 0.05\n", kind: ErrUnknownKey,
			key: "fatigue.Allowable", sugg: "fatigue.allowable"},
		{name: "merge key", layer: "file", body: "base: &b\n  allowable: 0.05\nfatigue:\n  <<: *b\n", kind: ErrUnknownKey},
		{name: "one bad among good", layer: "file", body: "fatigue:\n  window: 5\n  min_dive: 5\n", kind: ErrUnknownKey,
			key: "fatigue.min_dive", sugg: "fatigue.min_dives", want: []string{"line 3"}},
		{name: "misspelt variable", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_ALOWABLE": "0.05"}, kind: ErrUnknownKey,
			sugg: "HULLTALLY_FATIGUE_ALLOWABLE", want: []string{"environment variable HULLTALLY_FATIGUE_ALOWABLE", "did you mean HULLTALLY_FATIGUE_ALLOWABLE?"}},
		{name: "variable without section", layer: "env", vars: map[string]string{"HULLTALLY_ALLOWABLE": "0.05"}, kind: ErrUnknownKey,
			sugg: "HULLTALLY_FATIGUE_ALLOWABLE"},
		{name: "lower-case variable", layer: "env", vars: map[string]string{"hulltally_fatigue_allowable": "0.05"}, kind: ErrUnknownKey,
			sugg: "HULLTALLY_FATIGUE_ALLOWABLE", want: []string{"hulltally_fatigue_allowable"}},
		{name: "dot in variable", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE.ALLOWABLE": "0.05"}, kind: ErrUnknownKey,
			sugg: "HULLTALLY_FATIGUE_ALLOWABLE"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, file, err := loadLayer(t, tc)
			checkRefused(t, tc, c, err, file)
		})
	}
}

// TestEmbeddedLayerRefused: the embedded file is checked like any other.
func TestEmbeddedLayerRefused(t *testing.T) {
	for _, tc := range []layerCase{
		{name: "misspelt key", body: "fatigue:\n  alowable: 0.05\n", kind: ErrUnknownKey, key: "fatigue.alowable", sugg: "fatigue.allowable"},
		{name: "NaN", body: "ingest:\n  default_latitude: .nan\n", kind: ErrBadValue, key: "ingest.default_latitude"},
		{name: "out of range", body: "fatigue:\n  allowable: 2\n", kind: ErrBadValue, key: "fatigue.allowable", want: []string{"(0, 1]"}},
		{name: "not a mapping", body: "- 1\n", kind: ErrBadFile},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := load(Options{Env: env(nil), UserHome: "/h", IsRoot: notRoot}, []byte(tc.body))
			checkRefused(t, tc, c, err, "embedded configs/hulltally.yaml")
		})
	}
}

// TestEveryMisspellingRefused: one letter dropped from any key, in a
// file or a variable, is refused, and the key meant is suggested.
func TestEveryMisspellingRefused(t *testing.T) {
	for _, k := range Keys() {
		sec, leaf, nested := strings.Cut(k.Name, ".")
		if !nested {
			sec, leaf = "", k.Name
		}
		for i := range len(leaf) {
			bad := leaf[:i] + leaf[i+1:]
			body := fmt.Sprintf("%s: %q\n", bad, k.Default)
			badKey := bad
			if nested {
				body = fmt.Sprintf("%s:\n  %s: %q\n", sec, bad, k.Default)
				badKey = sec + "." + bad
			}
			if _, known := keyIndex()[badKey]; known {
				continue
			}
			_, err := Load(Options{File: writeFile(t, body), Env: env(nil), UserHome: "/h", IsRoot: notRoot})
			var ce *Error
			if !errors.As(err, &ce) || !errors.Is(err, ErrUnknownKey) || ce.Key != badKey || ce.Suggestion != k.Name {
				t.Errorf("%s misspelt %s: %v", k.Name, badKey, err)
			}
			name := EnvName(badKey)
			vars := map[string]string{name: k.Default}
			_, err = Load(Options{Env: env(vars), Environ: environ(vars), UserHome: "/h", IsRoot: notRoot})
			if !errors.As(err, &ce) || !errors.Is(err, ErrUnknownKey) || ce.Var != name || ce.Suggestion != EnvName(k.Name) {
				t.Errorf("%s misspelt %s: %v", k.Name, name, err)
			}
		}
	}
}

func keyIndex() map[string]Key {
	m := map[string]Key{}
	for _, k := range Keys() {
		m[k.Name] = k
	}
	return m
}

// TestBadValues: malformed and out-of-range values are refused in every
// layer, naming the key (and the variable), never read as 0 or clamped.
func TestBadValues(t *testing.T) {
	for _, tc := range []layerCase{
		{name: "word for a number", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_GATE_FACTOR": "five"}, kind: ErrBadValue,
			key: "fatigue.gate_factor", want: []string{"environment variable HULLTALLY_FATIGUE_GATE_FACTOR", `fatigue.gate_factor must be a number, got "five"`}},
		{name: "empty number", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_ALLOWABLE": ""}, kind: ErrBadValue,
			key: "fatigue.allowable", want: []string{"HULLTALLY_FATIGUE_ALLOWABLE", "no value"}},
		{name: "NaN latitude from env", layer: "env", vars: map[string]string{"HULLTALLY_INGEST_DEFAULT_LATITUDE": "NaN"}, kind: ErrBadValue,
			key: "ingest.default_latitude", want: []string{"finite"}},
		{name: "NaN latitude in file", layer: "file", body: "ingest:\n  default_latitude: NaN\n", kind: ErrBadValue,
			key: "ingest.default_latitude", want: []string{"line 2", "finite", "[-90, 90]"}},
		{name: "YAML .nan", layer: "file", body: "fatigue:\n  allowable: .nan\n", kind: ErrBadValue, key: "fatigue.allowable"},
		{name: "Inf gate", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_DESIGN_FATIGUE_FACTOR": "-Inf"}, kind: ErrBadValue,
			key: "fatigue.design_fatigue_factor"},
		{name: "overflow", layer: "file", body: "fatigue:\n  life_horizon: 1e400\n", kind: ErrBadValue, key: "fatigue.life_horizon"},
		{name: "fraction for a count", layer: "file", body: "evidence:\n  hold_windows: 2.5\n", kind: ErrBadValue,
			key: "evidence.hold_windows", want: []string{"whole number in [2, 100]"}},
		{name: "number given no value", layer: "file", body: "fatigue:\n  allowable:\n", kind: ErrBadValue,
			key: "fatigue.allowable", want: []string{"no value"}},
		{name: "number given a list", layer: "file", body: "fatigue:\n  allowable: [0.05]\n", kind: ErrBadValue, key: "fatigue.allowable"},
		{name: "number given a section", layer: "file", body: "fatigue:\n  allowable:\n    value: 0.05\n", kind: ErrBadValue, key: "fatigue.allowable"},
		{name: "section given a value", layer: "file", body: "fatigue: 0.05\n", kind: ErrBadValue, key: "fatigue"},
		{name: "key twice", layer: "file", body: "fatigue:\n  allowable: 0.5\n  allowable: 0.05\n", kind: ErrBadValue,
			key: "fatigue.allowable", want: []string{"twice", "line 2"}},
		{name: "section twice", layer: "file", body: "fatigue:\n  window: 5\nfatigue:\n  allowable: 0.05\n", kind: ErrBadValue, key: "fatigue"},
		{name: "flat and nested", layer: "file", body: "fatigue.allowable: 0.5\nfatigue:\n  allowable: 0.05\n", kind: ErrBadValue, key: "fatigue.allowable"},
		{name: "choice in other case", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_MEAN_STRESS": "Goodman"}, kind: ErrBadValue,
			key: "fatigue.mean_stress", want: []string{"goodman, none"}},
		{name: "no earliest time", layer: "file", body: "ingest:\n  earliest_time:\n", kind: ErrBadValue, key: "ingest.earliest_time"},
		{name: "range named", layer: "env", vars: map[string]string{"HULLTALLY_EVIDENCE_MIN_AMPLITUDE_DB": "141"}, kind: ErrBadValue,
			key: "evidence.min_amplitude_db", want: []string{"evidence.min_amplitude_db must lie in (0, 100], got 141"}},
		{name: "allowable above one", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_ALLOWABLE": "3"}, kind: ErrBadValue,
			key: "fatigue.allowable", want: []string{"(0, 1]"}},
		{name: "allowable zero", layer: "file", body: "fatigue:\n  allowable: 0\n", kind: ErrBadValue, key: "fatigue.allowable"},
		{name: "design factor below one", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_DESIGN_FATIGUE_FACTOR": "0.5"}, kind: ErrBadValue,
			key: "fatigue.design_fatigue_factor", want: []string{"[1, 1000]"}},
		{name: "huge gate factor", layer: "env", vars: map[string]string{"HULLTALLY_FATIGUE_GATE_FACTOR": "1e6"}, kind: ErrBadValue, key: "fatigue.gate_factor"},
		{name: "sustained allowable above one", layer: "file", body: "fatigue:\n  combine: separate\n  sustained_allowable: 5\n", kind: ErrBadValue,
			key: "fatigue.sustained_allowable"},
		{name: "interval above gap", layer: "file", body: "ingest:\n  max_gap_s: 5\n  max_interval_s: 10\n", kind: ErrBadValue,
			key: "ingest.max_interval_s", want: []string{"must not exceed ingest.max_gap_s"}},
		{name: "pool of zero", layer: "env", vars: map[string]string{"HULLTALLY_DATABASE_MAX_CONNS": "0"}, kind: ErrBadValue, key: "database.max_conns"},
		{name: "bad earliest time", layer: "env", vars: map[string]string{"HULLTALLY_INGEST_EARLIEST_TIME": "1990-01-01"}, kind: ErrBadValue,
			key: "ingest.earliest_time"},
		{name: "onset window", layer: "env", vars: map[string]string{"HULLTALLY_EVIDENCE_ONSET_INCREMENT_FRACTION": "0.9"}, kind: ErrBadValue,
			key: "evidence.onset_increment_fraction"},
		{name: "proof tolerance", layer: "env", vars: map[string]string{"HULLTALLY_PROOF_TOLERANCE": "0.19"}, kind: ErrBadValue, key: "proof.tolerance"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, file, err := loadLayer(t, tc)
			checkRefused(t, tc, c, err, file)
		})
	}
}

// TestBadFileValueNotHiddenByEnv: a bad value in the file is refused
// even when a variable overrides it.
func TestBadFileValueNotHiddenByEnv(t *testing.T) {
	vars := map[string]string{"HULLTALLY_FATIGUE_ALLOWABLE": "0.1"}
	_, err := Load(Options{File: writeFile(t, "fatigue:\n  allowable: five\n"), Env: env(vars), Environ: environ(vars), UserHome: "/h", IsRoot: notRoot})
	if !errors.Is(err, ErrBadValue) {
		t.Fatalf("got %v", err)
	}
}

// TestNonFiniteEverywhere: NaN, ±Inf and out-of-range numbers are refused
// for every numeric key in the file and the environment, and the range
// is accepted at its inclusive ends.
func TestNonFiniteEverywhere(t *testing.T) {
	for _, k := range Keys() {
		if k.Kind != KindFloat && k.Kind != KindInt && k.Kind != KindOptionalFloat {
			continue
		}
		sec, leaf, _ := strings.Cut(k.Name, ".")
		bad := []string{"NaN", "nan", "Inf", "-Inf", "+Infinity", ".inf", "-.inf", ".nan", "1e400", "x", "0x", fmtNum(k.Max * 1.5), fmtNum(k.Max + 1)}
		if k.MinOpen {
			bad = append(bad, fmtNum(k.Min))
		}
		bad = append(bad, fmtNum(k.Min-1), fmtNum(k.Min-math.Abs(k.Min)-0.5))
		for _, val := range bad {
			_, err := Load(Options{File: writeFile(t, fmt.Sprintf("%s:\n  %s: %s\n", sec, leaf, val)), Env: env(nil), UserHome: "/h", IsRoot: notRoot})
			var ce *Error
			if !errors.As(err, &ce) || ce.Key != k.Name || !errors.Is(err, ErrBadValue) {
				t.Errorf("file %s: %s: %v", k.Name, val, err)
			}
			name := EnvName(k.Name)
			_, err = Load(Options{Env: env(map[string]string{name: val}), UserHome: "/h", IsRoot: notRoot})
			if !errors.As(err, &ce) || ce.Key != k.Name || ce.Var != name || !strings.Contains(err.Error(), k.rangeText()) {
				t.Errorf("env %s=%s: %v", name, val, err)
			}
		}
		good := []string{fmtNum(k.Max)}
		if !k.MinOpen && k.Name != "ingest.max_interval_s" {
			good = append(good, fmtNum(k.Min))
		}
		for _, val := range good {
			if k.Name == "ingest.max_interval_s" {
				continue // bounded by ingest.max_gap_s too
			}
			if _, err := Load(Options{Env: env(map[string]string{EnvName(k.Name): val}), UserHome: "/h", IsRoot: notRoot}); err != nil {
				t.Errorf("%s=%s refused: %v", k.Name, val, err)
			}
		}
	}
}

// TestConfigFileKinds: --config must name a regular file of at most
// MaxFileBytes; a device or FIFO is refused at once, without reading.
func TestConfigFileKinds(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "fifo")
	if runtime.GOOS != "windows" {
		if err := syscall.Mkfifo(fifo, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	big := filepath.Join(dir, "big.yaml")
	os.WriteFile(big, bytes.Repeat([]byte("# padding\n"), MaxFileBytes/10+1), 0o644)
	for _, tc := range []struct{ name, path, want string }{
		{"device", "/dev/zero", "not a regular file"},
		{"fifo", fifo, "not a regular file"},
		{"folder", dir, "not a regular file"},
		{"missing", filepath.Join(dir, "none.yaml"), "no such file"},
		{"too large", big, "more than 1048576 bytes"},
		{"two documents", writeFile(t, "fatigue:\n  allowable: 0.2\n---\nfatigue:\n  allowable: 0.9\n"), "more than one YAML document"},
		{"a list", writeFile(t, "- fatigue\n"), "must be a mapping"},
		{"not YAML", writeFile(t, "fatigue: [\n"), "not valid YAML"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if tc.path == "/dev/zero" || tc.path == fifo {
				if _, err := os.Stat(tc.path); err != nil {
					t.Skip(err)
				}
			}
			done := make(chan error, 1)
			go func() {
				_, err := Load(Options{File: tc.path, Env: env(nil), UserHome: "/h", IsRoot: notRoot})
				done <- err
			}()
			select {
			case err := <-done:
				var ce *Error
				if !errors.Is(err, ErrBadFile) || !errors.As(err, &ce) || ce.File != tc.path || !strings.Contains(err.Error(), tc.want) {
					t.Fatalf("got %v, want ErrBadFile naming %s with %q", err, tc.path, tc.want)
				}
			case <-time.After(5 * time.Second):
				t.Fatal("Load blocked on the file")
			}
		})
	}
	// An empty file (or only comments) sets nothing.
	c, err := Load(Options{File: writeFile(t, "# nothing\n"), Env: env(nil), UserHome: "/h", IsRoot: notRoot})
	if err != nil || c.Fatigue.Allowable != 0.3 {
		t.Fatalf("empty file: %v", err)
	}
	// The curve library and rule set files are read the same way.
	if _, _, err := (Fatigue{CurvesFile: "/dev/zero"}).Curves(); err == nil || !strings.Contains(err.Error(), "not a regular file") {
		t.Errorf("curves_file /dev/zero: %v", err)
	}
	if _, _, err := (&Config{RulesFile: dir}).Rules(); err == nil || !strings.Contains(err.Error(), "not a regular file") {
		t.Errorf("rules_file folder: %v", err)
	}
}

func TestLayers(t *testing.T) {
	c, err := Load(Options{Env: env(nil), UserHome: "/home/op", IsRoot: notRoot})
	if err != nil {
		t.Fatal(err)
	}
	if c.Home != "/home/op/.local/share/hulltally" || c.Database.URL != "" || c.Fatigue.Allowable != 0.3 || c.Fatigue.GateMPa() != 0.05 || c.Ingest.DefaultLatitude != nil {
		t.Fatalf("defaults: %+v", c)
	}
	file := writeFile(t, "fatigue:\n  allowable: 0.2\n  design_fatigue_factor: 2\ningest:\n  default_latitude: 12.5\n")
	vars := map[string]string{"HULLTALLY_FATIGUE_ALLOWABLE": "0.1", "HULLTALLY_DATABASE_URL": "postgres://x/y", "HULLTALLY_HOME": "/srv/ht",
		// Variables of the test suites are not configuration keys.
		"HULLTALLY_TEST_DATABASE_URL": "postgres://t", "HULLTALLY_REPORT_DUMP": "/tmp", "HULLTALLY_CHARTS_DIR": "/tmp", "PATH": "/bin"}
	c, err = Load(Options{File: file, Env: env(vars), Environ: environ(vars), IsRoot: notRoot})
	if err != nil {
		t.Fatal(err)
	}
	// Environment beats the file, the file beats the defaults.
	if c.Fatigue.Allowable != 0.1 || c.Fatigue.DesignFatigueFactor != 2 || c.Database.URL != "postgres://x/y" || c.Home != "/srv/ht" || *c.Ingest.DefaultLatitude != 12.5 {
		t.Fatalf("layers: %+v", c)
	}
	wantSrc := []string{"built-in defaults", "embedded configs/hulltally.yaml", file, "$HULLTALLY_HOME", "$HULLTALLY_DATABASE_URL", "$HULLTALLY_FATIGUE_ALLOWABLE"}
	if !reflect.DeepEqual(c.Source, wantSrc) {
		t.Errorf("Source = %q, want %q", c.Source, wantSrc)
	}
	c, err = Load(Options{Env: env(nil), IsRoot: func() bool { return true }})
	if err != nil || c.Home != "/var/lib/hulltally" {
		t.Fatalf("root home: %v %v", c, err)
	}
}

// TestEveryKeyWired: each key, set through its variable and through a
// file, changes exactly its own setting.
func TestEveryKeyWired(t *testing.T) {
	base, err := Load(Options{Env: env(nil), UserHome: "/h", IsRoot: notRoot})
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range Keys() {
		var val string
		switch k.Kind {
		case KindText:
			val = "/x"
		case KindTime:
			val = "2000-01-02T03:04:05Z"
		case KindChoice:
			val = k.Choices[len(k.Choices)-1]
			if val == k.Default {
				val = k.Choices[0]
			}
		case KindOptionalFloat:
			val = "45.5"
		default:
			def, _ := strconv.ParseFloat(k.Default, 64)
			n := (k.Min + def) / 2
			if k.Kind == KindInt {
				n = math.Floor(n)
			}
			if n == def || (k.MinOpen && n == k.Min) {
				n = def + 1
			}
			val = fmtNum(n)
		}
		sec, leaf, _ := strings.Cut(k.Name, ".")
		body := fmt.Sprintf("%s: %q\n", k.Name, val)
		if leaf != "" {
			body = fmt.Sprintf("%s:\n  %s: %q\n", sec, leaf, val)
		}
		for _, o := range []Options{
			{Env: env(map[string]string{EnvName(k.Name): val})},
			{Env: env(nil), File: writeFile(t, body)},
		} {
			o.UserHome, o.IsRoot = "/h", notRoot
			c, err := Load(o)
			if err != nil {
				t.Errorf("%s=%s: %v", k.Name, val, err)
				continue
			}
			c.Source = base.Source
			if reflect.DeepEqual(c, base) {
				t.Errorf("%s=%s changed nothing", k.Name, val)
			}
			k.set(c, mustParse(t, k, k.Default))
			if k.Name == "ingest.default_latitude" {
				c.Ingest.DefaultLatitude = nil
			}
			if k.Name == "home" {
				c.Home = base.Home
			}
			if !reflect.DeepEqual(c, base) {
				t.Errorf("%s=%s changed more than itself: %+v", k.Name, val, c)
			}
		}
	}
}

func mustParse(t *testing.T, k Key, raw string) value {
	t.Helper()
	v, err := k.parse(raw, false)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// TestEmbeddedStatesEveryKey: the embedded hulltally.yaml states every
// key of the table, once, with the table's default.
func TestEmbeddedStatesEveryKey(t *testing.T) {
	var top map[string]any
	if err := yaml.Unmarshal(defaultYAML, &top); err != nil {
		t.Fatal(err)
	}
	flat := map[string]string{}
	for sec, v := range top {
		m, ok := v.(map[string]any)
		if !ok {
			flat[sec] = fmt.Sprint(v)
			continue
		}
		for leaf, x := range m {
			flat[sec+"."+leaf] = fmt.Sprint(x)
		}
	}
	keys := Keys()
	if len(flat) != len(keys) {
		t.Errorf("embedded file has %d keys, table %d", len(flat), len(keys))
	}
	for _, k := range keys {
		raw, ok := flat[k.Name]
		if !ok {
			t.Errorf("%s missing from the embedded file", k.Name)
			continue
		}
		got, err := k.parse(raw, false)
		if err != nil {
			t.Errorf("%s: %v", k.Name, err)
			continue
		}
		if want := mustParse(t, k, k.Default); got != want {
			t.Errorf("%s: embedded %q, table default %q", k.Name, raw, k.Default)
		}
	}
}

// TestTableSane: every numeric default lies in its range, names are
// unique lower-case section.key (or a top-level key), and each key has
// help.
func TestTableSane(t *testing.T) {
	seen := map[string]bool{}
	for _, k := range Keys() {
		if seen[k.Name] || k.Name != strings.ToLower(k.Name) || strings.Count(k.Name, ".") > 1 || k.Help == "" || k.set == nil {
			t.Errorf("key %+v", k)
		}
		seen[k.Name] = true
		if _, err := k.parse(k.Default, false); err != nil {
			t.Errorf("default: %v", err)
		}
		if (k.Kind == KindFloat || k.Kind == KindInt || k.Kind == KindOptionalFloat) && !(k.Min < k.Max) {
			t.Errorf("%s: empty range %s", k.Name, k.rangeText())
		}
	}
}

const tableOpen, tableEnd = "<!-- config-table -->", "<!-- /config-table -->"

// readmeTable is the text between the table markers of readme; ok is
// false when the markers are absent.
func readmeTable(readme string) (string, bool) {
	i, j := strings.Index(readme, tableOpen), strings.Index(readme, tableEnd)
	if i < 0 || j < i {
		return "", false
	}
	return strings.TrimSpace(readme[i+len(tableOpen) : j]), true
}

// TestREADMETable: the README's configuration table is MarkdownTable's.
func TestREADMETable(t *testing.T) {
	// The marker check itself.
	good := "intro\n" + tableOpen + "\n" + MarkdownTable() + tableEnd + "\nmore\n"
	if got, ok := readmeTable(good); !ok || got != strings.TrimSpace(MarkdownTable()) {
		t.Fatalf("readmeTable of a good README: %v %q", ok, got)
	}
	stale := strings.Replace(good, "`0.3`", "`0.5`", 1)
	if got, ok := readmeTable(stale); !ok || got == strings.TrimSpace(MarkdownTable()) {
		t.Fatal("a stale table was not told apart")
	}

	b, err := os.ReadFile(filepath.Join("..", "README.md"))
	if err != nil {
		t.Skipf("README.md not found: %v", err)
	}
	got, ok := readmeTable(string(b))
	if !ok {
		t.Skipf("SKIPPED: README.md has no %s … %s markers around its configuration table; put MarkdownTable() between them", tableOpen, tableEnd)
	}
	if want := strings.TrimSpace(MarkdownTable()); got != want {
		t.Errorf("README.md's configuration table differs from MarkdownTable(); replace it with:\n%s", want)
	}
}

// FuzzLoadFile: whatever a --config file holds, Load refuses it or
// yields a configuration whose every number is finite and in range.
func FuzzLoadFile(f *testing.F) {
	f.Add([]byte("fatigue:\n  allowable: 0.05\n"))
	f.Add([]byte("fatigue:\n  alowable: 0.05\n"))
	f.Add([]byte("ingest:\n  default_latitude: .nan\n"))
	f.Add([]byte("a: &x\n  b: *x\n"))
	f.Add([]byte("fatigue.allowable: 1\nevidence: {hold_windows: 3}\n"))
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(dir, "c.yaml")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		c, err := Load(Options{File: p, Env: env(nil), UserHome: "/h", IsRoot: notRoot})
		if err != nil {
			var ce *Error
			if !errors.As(err, &ce) {
				t.Fatalf("not a *configs.Error: %v", err)
			}
			return
		}
		keys := Keys()
		for _, k := range keys {
			v, ok := settingOf(c, k)
			if !ok {
				continue
			}
			if _, err := k.parse(v, false); err != nil {
				t.Fatalf("loaded a bad value: %v", err)
			}
		}
	})
}

// settingOf reads back, as text, the resolved value of the keys whose
// loosening would make a hull look better; ok is false for other keys.
func settingOf(c *Config, k Key) (string, bool) {
	switch k.Name {
	case "fatigue.allowable":
		return fmtNum(c.Fatigue.Allowable), true
	case "fatigue.sustained_allowable":
		return fmtNum(c.Fatigue.SustainedAllowable), true
	case "fatigue.design_fatigue_factor":
		return fmtNum(c.Fatigue.DesignFatigueFactor), true
	case "fatigue.gate_factor":
		return fmtNum(c.Fatigue.GateFactor), true
	case "fatigue.life_horizon":
		return strconv.FormatInt(c.Fatigue.LifeHorizon, 10), true
	case "evidence.min_amplitude_db":
		return fmtNum(c.Evidence.MinAmplitudeDB), true
	case "evidence.hold_windows":
		return strconv.Itoa(c.Evidence.HoldWindows), true
	case "ingest.default_latitude":
		if c.Ingest.DefaultLatitude == nil {
			return "", true
		}
		return fmtNum(*c.Ingest.DefaultLatitude), true
	case "ingest.max_interval_s":
		return fmtNum(c.Ingest.MaxIntervalS), true
	}
	return "", false
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
