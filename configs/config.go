// Package configs holds hulltally's configuration: the built-in defaults,
// the embedded default file hulltally.yaml, an optional file given by the
// user, and HULLTALLY_* environment variables, in rising priority. One
// table of keys (Keys) drives the defaults, the variables, the parsing and
// the validation of every layer, and the README's table (MarkdownTable).
// Configuration fails closed: an unknown key or variable and a bad value
// are refused with an *Error, never replaced by a default. The package
// also embeds the shipped material and curve library and rule set.
package configs

import (
	"bytes"
	"context"
	_ "embed"
	"errors"
	"fmt"
	"hulltally/ledger/files"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

//go:embed hulltally.yaml
var defaultYAML []byte

// Config is the resolved configuration of one hulltally run.
type Config struct {
	// Home is the folder for the managed cluster, demo files and reports.
	Home string
	// Database is how to reach PostgreSQL.
	Database Database
	// Ingest tunes dive logging.
	Ingest Ingest
	// Fatigue configures the damage assessment.
	Fatigue Fatigue
	// RulesFile is the fitness rule set; empty means the shipped
	// configs/rules.yaml.
	RulesFile string
	// Evidence configures the evidence-of-damage measures.
	Evidence Evidence
	// Proof configures the checks of proof tests.
	Proof Proof
	// Server configures hulltally serve.
	Server Server
	// Source lists where the values came from, lowest priority first.
	Source []string
}

// Server configures the HTTP service.
type Server struct {
	// Listen is host:port.
	Listen string
	// TLSCert and TLSKey are PEM files for HTTPS (both or neither).
	TLSCert, TLSKey string
	// MaxUploadMB bounds one dive upload.
	MaxUploadMB int64
	// ReadTimeoutS bounds receiving one request.
	ReadTimeoutS int64
	// StallTimeoutS cuts off an upload whose sender sends nothing for
	// this long.
	StallTimeoutS int64
	// MaxIngests bounds the dives the service logs at once.
	MaxIngests int
	// MemoryLimitMB is the service's soft memory limit.
	MemoryLimitMB int64
	// URL and Token: the service the command line uses as a client (for
	// the commands that can), and the person's token; URL empty: the
	// database.
	URL, Token string
}

// Database says how to reach PostgreSQL.
type Database struct {
	// URL of an external PostgreSQL 13+; empty means the managed cluster.
	URL string
	// MaxConns bounds the connection pool.
	MaxConns int32
}

// Ingest tunes dive logging.
type Ingest struct {
	// DefaultLatitude is used when a dive is logged without a latitude;
	// nil means the conservative latitude for the logged column.
	DefaultLatitude *float64
	// BlockSamples is the number of samples per stored block.
	BlockSamples int
	// ClockToleranceS is how far ahead of the clock a record may be dated,
	// seconds; anything later is refused.
	ClockToleranceS float64
	// EarliestTime is the earliest time stamp accepted (RFC 3339).
	EarliestTime string
	// SurfaceToleranceMPa: a record that does not start or end within this
	// gauge pressure of the surface is cut off (flagged, and its cycle
	// closed to the surface).
	SurfaceToleranceMPa float64
	// MaxGapS is the longest gap between samples below the surface that
	// passes without a data-quality finding, seconds.
	MaxGapS float64
	// MaxIntervalS is the coarsest sample interval below the surface that
	// the hysteresis gate and the hold criteria can work with, seconds.
	MaxIntervalS float64
	// CutLegMPaPerS is the slow rate of travel at which the unrecorded leg
	// of a cut-off record is charged, at its cut-off pressure, MPa/s.
	CutLegMPaPerS float64
}

// Proof configures the checks of a recorded proof test.
type Proof struct {
	// Tolerance is the relative tolerance of a proof test's pressure: a
	// passing test below the spec's proof pressure by more is refused, and
	// the recorded pressure must agree with the samples' peak within it.
	Tolerance float64
	// HoldMin is the time at pressure charged for a proof test recorded
	// without samples, minutes.
	HoldMin float64
}

// Fatigue configures the damage assessment (see hulltally.yaml).
type Fatigue struct {
	CurvesFile          string  `json:"curves_file"`
	DesignFatigueFactor float64 `json:"design_fatigue_factor"`
	MeanStress          string  `json:"mean_stress"`
	Allowable           float64 `json:"allowable"`
	Combine             string  `json:"combine"`
	SustainedAllowable  float64 `json:"sustained_allowable"`
	SensorNoiseMPa      float64 `json:"sensor_noise_mpa"`
	StrainNoiseUE       float64 `json:"strain_noise_ue"`
	GateFactor          float64 `json:"gate_factor"`
	HoldBinMPa          float64 `json:"hold_bin_mpa"`
	HoldMaxBins         int     `json:"hold_max_bins"`
	Window              int     `json:"window"`
	MinDives            int     `json:"min_dives"`
	// DesignBottomTimeMin is the bottom time of the design dive (to the
	// rated depth) whose damage rate bounds the remaining life, minutes.
	DesignBottomTimeMin float64 `json:"design_bottom_time_min"`
	// LifeHorizon: remaining dives beyond it are shown as "more than".
	LifeHorizon int64 `json:"life_horizon"`
}

// Evidence configures the acoustic-emission and strain measures (see
// hulltally.yaml for the source of each default).
type Evidence struct {
	HoldFraction       float64
	OnsetIncrementFrac float64
	OnsetHits          float64
	MinAmplitudeDB     float64
	HoldWindows        int
	HoldDecayFraction  float64
	HoldQuietHits      int
	HoldMinHits        int
	BaselineDives      int
	// HoldSettleS: hits after the first HoldSettleS seconds of a hold are
	// counted against HoldMaxHitsAfterSettle (an absolute criterion).
	HoldSettleS            float64
	HoldMaxHitsAfterSettle int
	// SensorCheckMinDB is the amplitude a sensor check must reach to show
	// the channel alive, dB_AE.
	SensorCheckMinDB float64
	// HighAmplitudeDB is the amplitude of a high-amplitude hit, dB_AE.
	HighAmplitudeDB float64
	// ResidualTempToleranceC: residual strain is compared only when the
	// surface temperatures before and after the dive agree within it.
	ResidualTempToleranceC float64
}

// Earliest is EarliestTime parsed.
func (in Ingest) Earliest() (time.Time, error) {
	t, err := time.Parse(time.RFC3339, in.EarliestTime)
	if err != nil {
		return time.Time{}, fmt.Errorf("ingest.earliest_time must be an RFC 3339 time, got %q: %w", in.EarliestTime, err)
	}
	return t, nil
}

// GateMPa is the rainflow hysteresis gate for pressure.
func (f Fatigue) GateMPa() float64 { return f.GateFactor * f.SensorNoiseMPa }

// GateUE is the rainflow hysteresis gate for strain.
func (f Fatigue) GateUE() float64 { return f.GateFactor * f.StrainNoiseUE }

// Curves returns the curve library's bytes: the configured file, or the
// shipped library.
func (f Fatigue) Curves() ([]byte, string, error) {
	if f.CurvesFile == "" {
		return CurvesYAML, "configs/curves.yaml (shipped)", nil
	}
	b, err := readRegular(f.CurvesFile, maxDataFileBytes)
	if err != nil {
		return nil, "", fmt.Errorf("fatigue.curves_file %s: %w", f.CurvesFile, err)
	}
	return b, f.CurvesFile, nil
}

// Rules returns the fitness rule set's bytes and where they came from.
func (c *Config) Rules() ([]byte, string, error) {
	if c.RulesFile == "" {
		return RulesYAML, "configs/rules.yaml (shipped)", nil
	}
	b, err := readRegular(c.RulesFile, maxDataFileBytes)
	if err != nil {
		return nil, "", fmt.Errorf("fitness.rules_file %s: %w", c.RulesFile, err)
	}
	return b, c.RulesFile, nil
}

// Options are the inputs of Load that do not come from files.
type Options struct {
	// File is a configuration file given with --config (may be empty). It
	// must be a regular file of at most MaxFileBytes.
	File string
	// Env looks up environment variables; nil means os.LookupEnv.
	Env func(string) (string, bool)
	// Environ lists the environment as "NAME=value" entries, to refuse
	// HULLTALLY_* variables that match no key. nil means os.Environ when
	// Env is nil too, and no such check when Env is given (a test's Env
	// holds only the variables it means).
	Environ func() []string
	// UserHome is the user's home folder; empty means os.UserHomeDir.
	UserHome string
	// IsRoot reports whether the process runs as root; nil means
	// os.Geteuid() == 0.
	IsRoot func() bool
}

// MaxFileBytes is the largest configuration file read (1 MiB): the
// shipped hulltally.yaml is under 10 KiB.
const MaxFileBytes = 1 << 20

// maxDataFileBytes bounds a curve library or rule set file (16 MiB).
const maxDataFileBytes = 16 << 20

// Sentinels of the kinds of *Error, for errors.Is.
var (
	// ErrUnknownKey: a key (or HULLTALLY_* variable) that matches no
	// configuration key.
	ErrUnknownKey = errors.New("unknown configuration key")
	// ErrBadValue: a value that is malformed or outside its range.
	ErrBadValue = errors.New("bad configuration value")
	// ErrBadFile: a configuration file that cannot be used (missing, not
	// a regular file, too large, not a YAML mapping).
	ErrBadFile = errors.New("bad configuration file")
)

// Error is a refused configuration: where the fault is (File and Line,
// or Var), which Key, and why. errors.Is(err, Kind) holds for its Kind.
type Error struct {
	// Kind is ErrUnknownKey, ErrBadValue or ErrBadFile.
	Kind error
	// File is the configuration file ("embedded configs/hulltally.yaml"
	// for the embedded one); empty for an environment variable or a
	// check across keys.
	File string
	// Line is the line in File, when known (else 0).
	Line int
	// Var is the environment variable, when the fault is in one.
	Var string
	// Key is the dotted key as written (an unknown key) or the known key
	// whose value is refused; empty for a fault of the whole file.
	Key string
	// Suggestion is the nearest known key to an unknown one (its
	// environment variable for an unknown variable).
	Suggestion string
	// Reason says what is wrong.
	Reason string
	// Err is the underlying error, if any.
	Err error
}

func (e *Error) Error() string {
	var b strings.Builder
	switch {
	case e.Var != "":
		b.WriteString("environment variable " + e.Var)
	case e.File != "":
		b.WriteString("config file " + e.File)
		if e.Line > 0 {
			fmt.Fprintf(&b, " line %d", e.Line)
		}
	default:
		b.WriteString("configuration")
	}
	b.WriteString(": ")
	b.WriteString(e.Reason)
	if e.Suggestion != "" {
		b.WriteString(" (did you mean " + e.Suggestion + "?)")
	}
	if e.Err != nil {
		b.WriteString(": " + e.Err.Error())
	}
	return b.String()
}

// Unwrap gives errors.Is and errors.As the kind and the cause.
func (e *Error) Unwrap() []error {
	if e.Err != nil {
		return []error{e.Kind, e.Err}
	}
	return []error{e.Kind}
}

// setting is one key's value in one layer and where it came from.
type setting struct {
	v    value
	from string
}

// Load resolves the configuration: the built-in defaults of Keys, the
// embedded hulltally.yaml, o.File, then HULLTALLY_* variables. Every
// layer is checked as it is read: an unknown key, a key given twice, a
// malformed or out-of-range value (NaN and Inf included) is refused with
// an error (errors.Join of *Error, one per fault) naming the file and
// line or the variable, and the key. Load never falls back to a default
// for a key it could not read.
func Load(o Options) (*Config, error) { return load(o, defaultYAML) }

// load is Load with the embedded layer given.
func load(o Options, embedded []byte) (*Config, error) {
	env, environ := o.Env, o.Environ
	if env == nil {
		env = os.LookupEnv
		if environ == nil {
			environ = os.Environ
		}
	}
	keys := Keys()
	byName := make(map[string]*Key, len(keys))
	for i := range keys {
		byName[keys[i].Name] = &keys[i]
	}
	// Unknown keys are matched against keys and sections ("fatigu").
	suggest := yamlCandidates(keys)
	got := make(map[string]setting, len(keys))
	var errs []error
	for _, k := range keys {
		v, err := k.parse(k.Default, false)
		if err != nil { // a fault of the table itself
			errs = append(errs, &Error{Kind: ErrBadValue, File: "built-in defaults", Key: k.Name, Reason: err.Error()})
		}
		got[k.Name] = setting{v, "built-in defaults"}
	}
	src := []string{"built-in defaults"}

	layer := func(name string, data []byte) {
		errs = append(errs, loadYAML(name, data, byName, suggest, got)...)
	}
	layer(embeddedName, embedded)
	src = append(src, embeddedName)
	if o.File != "" {
		data, err := readRegular(o.File, MaxFileBytes)
		if err != nil {
			errs = append(errs, &Error{Kind: ErrBadFile, File: o.File, Reason: "cannot be read", Err: err})
		} else {
			layer(o.File, data)
			src = append(src, o.File)
		}
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}

	// Environment: HULLTALLY_HOME, HULLTALLY_DATABASE_URL, ...
	envNames := make([]string, len(keys))
	for i, k := range keys {
		envNames[i] = EnvName(k.Name)
		raw, ok := env(envNames[i])
		if !ok {
			continue
		}
		v, err := k.parse(raw, false)
		if err != nil {
			errs = append(errs, &Error{Kind: ErrBadValue, Var: envNames[i], Key: k.Name, Reason: err.Error()})
			continue
		}
		got[k.Name] = setting{v, "$" + envNames[i]}
		src = append(src, "$"+envNames[i])
	}
	if environ != nil {
		known := make(map[string]bool, len(envNames))
		for _, n := range envNames {
			known[n] = true
		}
		var unknown []string
		for _, kv := range environ() {
			name, _, _ := strings.Cut(kv, "=")
			if strings.HasPrefix(strings.ToUpper(name), envPrefix) && !known[name] && !reservedEnv(name) {
				unknown = append(unknown, name)
			}
		}
		sort.Strings(unknown)
		for _, name := range unknown {
			errs = append(errs, &Error{Kind: ErrUnknownKey, Var: name, Reason: "no such configuration key",
				Suggestion: suggestEnv(name, keys)})
		}
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}

	c := &Config{Source: src}
	for _, k := range keys {
		k.set(c, got[k.Name].v)
	}
	// Checks across keys.
	if c.Ingest.MaxIntervalS > c.Ingest.MaxGapS {
		errs = append(errs, &Error{Kind: ErrBadValue, Key: "ingest.max_interval_s",
			Reason: fmt.Sprintf("ingest.max_interval_s (%g, from %s) must not exceed ingest.max_gap_s (%g, from %s)",
				c.Ingest.MaxIntervalS, got["ingest.max_interval_s"].from, c.Ingest.MaxGapS, got["ingest.max_gap_s"].from)})
	}
	if len(errs) > 0 {
		return nil, errors.Join(errs...)
	}
	if err := resolveHome(c, o, env); err != nil {
		return nil, err
	}
	return c, nil
}

const embeddedName = "embedded configs/hulltally.yaml"

// loadYAML checks one YAML layer against the key table and records its
// values in got. Every key is checked, so that all faults of a file are
// reported at once.
func loadYAML(file string, data []byte, byName map[string]*Key, suggest []candidate, got map[string]setting) []error {
	bad := func(line int, reason string, err error) []error {
		return []error{&Error{Kind: ErrBadFile, File: file, Line: line, Reason: reason, Err: err}}
	}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var doc yaml.Node
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			return nil // an empty file sets nothing
		}
		return bad(0, "not valid YAML", err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		return bad(extra.Line, "holds more than one YAML document", err)
	}
	root := &doc
	if root.Kind == yaml.DocumentNode {
		if len(root.Content) == 0 {
			return nil
		}
		root = root.Content[0]
	}
	root = deref(root)
	if root.Kind == yaml.ScalarNode && root.Tag == "!!null" {
		return nil
	}
	if root.Kind != yaml.MappingNode {
		return bad(root.Line, "must be a mapping of sections and keys", nil)
	}
	var errs []error
	seen := map[string]int{}
	unknown := func(key string, line int) {
		errs = append(errs, &Error{Kind: ErrUnknownKey, File: file, Line: line, Key: key,
			Reason: "unknown key " + key, Suggestion: suggestKey(key, suggest)})
	}
	leaf := func(name string, kn, vn *yaml.Node) {
		if first, dup := seen[name]; dup {
			errs = append(errs, &Error{Kind: ErrBadValue, File: file, Line: kn.Line, Key: name,
				Reason: fmt.Sprintf("%s is given twice (first on line %d)", name, first)})
			return
		}
		seen[name] = kn.Line
		k := byName[name]
		if k == nil {
			unknown(name, kn.Line)
			return
		}
		vn = deref(vn)
		if vn.Kind != yaml.ScalarNode {
			errs = append(errs, &Error{Kind: ErrBadValue, File: file, Line: kn.Line, Key: name,
				Reason: fmt.Sprintf("%s must be a single value (%s), not a list or section", name, k.Allowed())})
			return
		}
		raw, null := vn.Value, vn.Tag == "!!null"
		if null {
			raw = ""
		}
		v, err := k.parse(raw, null)
		if err != nil {
			errs = append(errs, &Error{Kind: ErrBadValue, File: file, Line: vn.Line, Key: name, Reason: err.Error()})
			return
		}
		got[name] = setting{v, file}
	}
	for i := 0; i+1 < len(root.Content); i += 2 {
		kn, vn := deref(root.Content[i]), deref(root.Content[i+1])
		sec := kn.Value
		if first, dup := seen[sec]; dup {
			errs = append(errs, &Error{Kind: ErrBadValue, File: file, Line: kn.Line, Key: sec,
				Reason: fmt.Sprintf("%s is given twice (first on line %d)", sec, first)})
			continue
		}
		if _, isKey := byName[sec]; isKey {
			leaf(sec, kn, vn)
			continue
		}
		seen[sec] = kn.Line
		if !isSection(sec, byName) {
			unknown(sec, kn.Line)
			continue
		}
		if vn.Kind == yaml.ScalarNode && vn.Tag == "!!null" {
			continue // an empty section sets nothing
		}
		if vn.Kind != yaml.MappingNode {
			errs = append(errs, &Error{Kind: ErrBadValue, File: file, Line: kn.Line, Key: sec,
				Reason: sec + " is a section: it must hold keys"})
			continue
		}
		for j := 0; j+1 < len(vn.Content); j += 2 {
			ck := deref(vn.Content[j])
			leaf(sec+"."+ck.Value, ck, vn.Content[j+1])
		}
	}
	return errs
}

// deref follows a YAML alias to its anchored node.
func deref(n *yaml.Node) *yaml.Node {
	for n.Kind == yaml.AliasNode && n.Alias != nil {
		n = n.Alias
	}
	return n
}

// isSection reports whether sec is the section of some key.
func isSection(sec string, byName map[string]*Key) bool {
	for n := range byName {
		if strings.HasPrefix(n, sec+".") {
			return true
		}
	}
	return false
}

// readRegular reads a regular file of at most limit bytes (files.ReadAllLimited:
// a FIFO, a device such as /dev/zero or a folder is refused before
// anything is read, and a file that grows past the limit is refused too).
func readRegular(name string, limit int64) ([]byte, error) {
	return files.ReadAllLimited(context.Background(), name, limit)
}

// resolveHome fills in the default home folder and makes it absolute.
func resolveHome(c *Config, o Options, env func(string) (string, bool)) error {
	if c.Home == "" {
		isRoot := o.IsRoot
		if isRoot == nil {
			isRoot = func() bool { return os.Geteuid() == 0 }
		}
		switch {
		case isRoot():
			c.Home = "/var/lib/hulltally"
		default:
			if x, ok := env("XDG_DATA_HOME"); ok && x != "" {
				c.Home = filepath.Join(x, "hulltally")
				break
			}
			h := o.UserHome
			if h == "" {
				var err error
				if h, err = os.UserHomeDir(); err != nil {
					return fmt.Errorf("no home folder for hulltally (set HULLTALLY_HOME): %w", err)
				}
			}
			c.Home = filepath.Join(h, ".local", "share", "hulltally")
		}
	}
	abs, err := filepath.Abs(c.Home)
	if err != nil {
		return fmt.Errorf("home %q: %w", c.Home, err)
	}
	c.Home = abs
	return nil
}
