// Package configs holds hulltally's configuration: the built-in defaults,
// the embedded default file hulltally.yaml, an optional file given by the
// user, and HULLTALLY_* environment variables, in rising priority. It also
// embeds the shipped material and curve library.
package configs

import (
	"bytes"
	_ "embed"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/viper"
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
	// Source lists where the values came from, lowest priority first.
	Source []string
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
	b, err := os.ReadFile(f.CurvesFile)
	if err != nil {
		return nil, "", fmt.Errorf("fatigue.curves_file: %w", err)
	}
	return b, f.CurvesFile, nil
}

// Rules returns the fitness rule set's bytes and where they came from.
func (c *Config) Rules() ([]byte, string, error) {
	if c.RulesFile == "" {
		return RulesYAML, "configs/rules.yaml (shipped)", nil
	}
	b, err := os.ReadFile(c.RulesFile)
	if err != nil {
		return nil, "", fmt.Errorf("fitness.rules_file: %w", err)
	}
	return b, c.RulesFile, nil
}

// Options are the inputs of Load that do not come from files.
type Options struct {
	// File is a configuration file given with --config (may be empty).
	File string
	// Env looks up environment variables; nil means os.LookupEnv.
	Env func(string) (string, bool)
	// UserHome is the user's home folder; empty means os.UserHomeDir.
	UserHome string
	// IsRoot reports whether the process runs as root; nil means
	// os.Geteuid() == 0.
	IsRoot func() bool
}

// defaults are the built-in values of every key (the lowest layer); the
// embedded hulltally.yaml states the same values with their sources.
var defaults = map[string]any{
	"home": "", "database.url": "", "database.max_conns": 4,
	"ingest.default_latitude": "", "ingest.block_samples": 8192,
	"ingest.clock_tolerance_s": 600, "ingest.earliest_time": "1990-01-01T00:00:00Z", "ingest.surface_tolerance_mpa": 0.1,
	"ingest.max_gap_s": 60, "ingest.max_interval_s": 10, "ingest.cut_leg_mpa_per_s": 0.005, "proof.tolerance": 0.02, "proof.hold_min": 30,
	"fatigue.design_bottom_time_min": 60, "fatigue.life_horizon": 100000,
	"evidence.hold_settle_s": 60, "evidence.hold_max_hits_after_settle": 5, "evidence.sensor_check_min_db": 80,
	"evidence.high_amplitude_db": 80, "evidence.residual_temp_tolerance_c": 2,
	"fatigue.curves_file": "", "fatigue.design_fatigue_factor": 1.0, "fatigue.mean_stress": "goodman",
	"fatigue.allowable": 0.3, "fatigue.combine": "add", "fatigue.sustained_allowable": 0.3,
	"fatigue.sensor_noise_mpa": 0.01, "fatigue.strain_noise_ue": 2.0, "fatigue.gate_factor": 5,
	"fatigue.hold_bin_mpa": 0.05, "fatigue.hold_max_bins": 24, "fatigue.window": 10, "fatigue.min_dives": 3,
	"fitness.rules_file":     "",
	"evidence.hold_fraction": 0.95, "evidence.onset_increment_fraction": 0.10, "evidence.onset_hits": 6,
	"evidence.min_amplitude_db": 45, "evidence.hold_windows": 4, "evidence.hold_decay_fraction": 0.5,
	"evidence.hold_quiet_hits": 2, "evidence.hold_min_hits": 5, "evidence.baseline_dives": 3,
}

// Load resolves the configuration.
func Load(o Options) (*Config, error) {
	env := o.Env
	if env == nil {
		env = os.LookupEnv
	}
	v := viper.New()
	v.SetConfigType("yaml")
	for key, val := range defaults {
		v.SetDefault(key, val)
	}
	src := []string{"built-in defaults"}
	if err := v.MergeConfig(bytes.NewReader(defaultYAML)); err != nil {
		return nil, fmt.Errorf("embedded configs/hulltally.yaml: %w", err)
	}
	src = append(src, "embedded configs/hulltally.yaml")
	if o.File != "" {
		f, err := os.Open(o.File)
		if err != nil {
			return nil, fmt.Errorf("config file: %w", err)
		}
		defer f.Close()
		if err := v.MergeConfig(f); err != nil {
			return nil, fmt.Errorf("config file %s: %w", o.File, err)
		}
		src = append(src, o.File)
	}
	// Environment: HULLTALLY_HOME, HULLTALLY_DATABASE_URL, ...
	for _, key := range v.AllKeys() {
		name := "HULLTALLY_" + strings.ToUpper(strings.ReplaceAll(key, ".", "_"))
		if val, ok := env(name); ok {
			v.Set(key, val)
			src = append(src, "$"+name)
		}
	}
	if err := numbersParse(v); err != nil {
		return nil, err
	}
	c := &Config{Source: src}
	c.Home = v.GetString("home")
	c.Database.URL = v.GetString("database.url")
	mc := v.GetInt("database.max_conns")
	if mc < 1 || mc > 1000 {
		return nil, fmt.Errorf("database.max_conns must be between 1 and 1000, got %d", mc)
	}
	c.Database.MaxConns = int32(mc)
	if s := strings.TrimSpace(v.GetString("ingest.default_latitude")); s != "" {
		lat, err := strconv.ParseFloat(s, 64)
		if err != nil || lat < -90 || lat > 90 {
			return nil, fmt.Errorf("ingest.default_latitude must be a latitude in degrees (-90..90) or empty, got %q", s)
		}
		c.Ingest.DefaultLatitude = &lat
	}
	c.Ingest.BlockSamples = v.GetInt("ingest.block_samples")
	if c.Ingest.BlockSamples < 16 || c.Ingest.BlockSamples > 1<<20 {
		return nil, fmt.Errorf("ingest.block_samples must be between 16 and 1048576, got %d", c.Ingest.BlockSamples)
	}
	in := &c.Ingest
	in.ClockToleranceS, in.EarliestTime = v.GetFloat64("ingest.clock_tolerance_s"), v.GetString("ingest.earliest_time")
	in.SurfaceToleranceMPa, in.MaxGapS, in.MaxIntervalS = v.GetFloat64("ingest.surface_tolerance_mpa"), v.GetFloat64("ingest.max_gap_s"), v.GetFloat64("ingest.max_interval_s")
	in.CutLegMPaPerS = v.GetFloat64("ingest.cut_leg_mpa_per_s")
	if _, err := in.Earliest(); err != nil {
		return nil, err
	}
	if err := inRanges([]rangeCheck{
		{"ingest.clock_tolerance_s", in.ClockToleranceS, 0, 86400, true},
		{"ingest.surface_tolerance_mpa", in.SurfaceToleranceMPa, 0, 1, false},
		{"ingest.max_gap_s", in.MaxGapS, 0, 1e9, false},
		{"ingest.max_interval_s", in.MaxIntervalS, 0, in.MaxGapS, false},
		{"ingest.cut_leg_mpa_per_s", in.CutLegMPaPerS, 0, 1, false},
	}); err != nil {
		return nil, err
	}
	c.Proof.Tolerance, c.Proof.HoldMin = v.GetFloat64("proof.tolerance"), v.GetFloat64("proof.hold_min")
	if !(c.Proof.HoldMin >= 0 && c.Proof.HoldMin <= 10000) {
		return nil, fmt.Errorf("configuration: proof.hold_min must be between 0 and 10000 minutes, got %v", c.Proof.HoldMin)
	}
	if !(c.Proof.Tolerance >= 0 && c.Proof.Tolerance <= 0.05) {
		return nil, fmt.Errorf("configuration: proof.tolerance must be a fraction in [0, 0.05], got %v", c.Proof.Tolerance)
	}
	c.RulesFile = v.GetString("fitness.rules_file")
	c.Evidence = Evidence{HoldFraction: v.GetFloat64("evidence.hold_fraction"), OnsetIncrementFrac: v.GetFloat64("evidence.onset_increment_fraction"),
		OnsetHits: v.GetFloat64("evidence.onset_hits"), MinAmplitudeDB: v.GetFloat64("evidence.min_amplitude_db"),
		HoldWindows: v.GetInt("evidence.hold_windows"), HoldDecayFraction: v.GetFloat64("evidence.hold_decay_fraction"),
		HoldQuietHits: v.GetInt("evidence.hold_quiet_hits"), HoldMinHits: v.GetInt("evidence.hold_min_hits"), BaselineDives: v.GetInt("evidence.baseline_dives"),
		HoldSettleS: v.GetFloat64("evidence.hold_settle_s"), HoldMaxHitsAfterSettle: v.GetInt("evidence.hold_max_hits_after_settle"),
		SensorCheckMinDB: v.GetFloat64("evidence.sensor_check_min_db"), HighAmplitudeDB: v.GetFloat64("evidence.high_amplitude_db"),
		ResidualTempToleranceC: v.GetFloat64("evidence.residual_temp_tolerance_c")}
	e := c.Evidence
	if err := inRanges([]rangeCheck{
		{"evidence.hold_fraction", e.HoldFraction, 0, 1, false},
		{"evidence.onset_increment_fraction", e.OnsetIncrementFrac, 0, 0.5, false},
		{"evidence.onset_hits", e.OnsetHits, 1, 1000, true},
		{"evidence.min_amplitude_db", e.MinAmplitudeDB, 0, 100, false},
		{"evidence.hold_windows", float64(e.HoldWindows), 2, 100, true},
		{"evidence.hold_decay_fraction", e.HoldDecayFraction, 0, 1, true},
		{"evidence.hold_quiet_hits", float64(e.HoldQuietHits), 0, 10000, true},
		{"evidence.hold_min_hits", float64(e.HoldMinHits), 0, 10000, true},
		{"evidence.baseline_dives", float64(e.BaselineDives), 1, 1000, true},
		{"evidence.hold_settle_s", e.HoldSettleS, 0, 3600, true},
		{"evidence.hold_max_hits_after_settle", float64(e.HoldMaxHitsAfterSettle), 0, 10000, true},
		{"evidence.sensor_check_min_db", e.SensorCheckMinDB, 0, 140, false},
		{"evidence.high_amplitude_db", e.HighAmplitudeDB, 0, 140, false},
		{"evidence.residual_temp_tolerance_c", e.ResidualTempToleranceC, 0, 50, true},
	}); err != nil {
		return nil, err
	}
	fa := &c.Fatigue
	fa.CurvesFile = v.GetString("fatigue.curves_file")
	fa.DesignFatigueFactor = v.GetFloat64("fatigue.design_fatigue_factor")
	fa.MeanStress = v.GetString("fatigue.mean_stress")
	fa.Allowable = v.GetFloat64("fatigue.allowable")
	fa.Combine = v.GetString("fatigue.combine")
	fa.SustainedAllowable = v.GetFloat64("fatigue.sustained_allowable")
	fa.SensorNoiseMPa = v.GetFloat64("fatigue.sensor_noise_mpa")
	fa.StrainNoiseUE = v.GetFloat64("fatigue.strain_noise_ue")
	fa.GateFactor = v.GetFloat64("fatigue.gate_factor")
	fa.HoldBinMPa = v.GetFloat64("fatigue.hold_bin_mpa")
	fa.HoldMaxBins = v.GetInt("fatigue.hold_max_bins")
	fa.Window = v.GetInt("fatigue.window")
	fa.MinDives = v.GetInt("fatigue.min_dives")
	fa.DesignBottomTimeMin = v.GetFloat64("fatigue.design_bottom_time_min")
	fa.LifeHorizon = v.GetInt64("fatigue.life_horizon")
	if err := fa.validate(); err != nil {
		return nil, err
	}
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
					return nil, fmt.Errorf("no home folder for hulltally (set HULLTALLY_HOME): %w", err)
				}
			}
			c.Home = filepath.Join(h, ".local", "share", "hulltally")
		}
	}
	abs, err := filepath.Abs(c.Home)
	if err != nil {
		return nil, fmt.Errorf("home %q: %w", c.Home, err)
	}
	c.Home = abs
	return c, nil
}

func (f *Fatigue) validate() error {
	var errs []string
	if !(f.DesignFatigueFactor >= 1) {
		errs = append(errs, fmt.Sprintf("fatigue.design_fatigue_factor must be at least 1, got %v", f.DesignFatigueFactor))
	}
	if f.MeanStress != "goodman" && f.MeanStress != "none" {
		errs = append(errs, fmt.Sprintf("fatigue.mean_stress must be goodman or none, got %q", f.MeanStress))
	}
	if !(f.Allowable > 0 && f.Allowable <= 1) {
		errs = append(errs, fmt.Sprintf("fatigue.allowable must be in (0, 1], got %v", f.Allowable))
	}
	if f.Combine != "add" && f.Combine != "separate" {
		errs = append(errs, fmt.Sprintf("fatigue.combine must be add or separate, got %q", f.Combine))
	}
	if f.Combine == "separate" && !(f.SustainedAllowable > 0) {
		errs = append(errs, fmt.Sprintf("fatigue.sustained_allowable must be positive, got %v", f.SustainedAllowable))
	}
	if !(f.SensorNoiseMPa >= 0) || !(f.StrainNoiseUE >= 0) || !(f.GateFactor >= 0) {
		errs = append(errs, "fatigue.sensor_noise_mpa, strain_noise_ue and gate_factor must be non-negative")
	}
	if !(f.HoldBinMPa > 0) {
		errs = append(errs, fmt.Sprintf("fatigue.hold_bin_mpa must be positive, got %v", f.HoldBinMPa))
	}
	if f.HoldMaxBins < 2 {
		errs = append(errs, fmt.Sprintf("fatigue.hold_max_bins must be at least 2, got %d", f.HoldMaxBins))
	}
	if !(f.DesignBottomTimeMin >= 0 && f.DesignBottomTimeMin <= 100000) {
		errs = append(errs, fmt.Sprintf("fatigue.design_bottom_time_min must be between 0 and 100000 minutes, got %v", f.DesignBottomTimeMin))
	}
	if f.LifeHorizon < 1 {
		errs = append(errs, fmt.Sprintf("fatigue.life_horizon must be at least 1 dive, got %d", f.LifeHorizon))
	}
	if f.Window < 1 || f.MinDives < 1 {
		errs = append(errs, "fatigue.window and fatigue.min_dives must be at least 1")
	}
	if len(errs) > 0 {
		return fmt.Errorf("configuration: %s", strings.Join(errs, "; "))
	}
	return nil
}

// numbersParse refuses a numeric setting whose value is not a number (an
// environment variable of "five" or "abc"): viper would read it as 0,
// which can loosen a limit without a word.
func numbersParse(v *viper.Viper) error {
	var errs []string
	for key, def := range defaults {
		switch def.(type) {
		case int, float64:
		default:
			continue
		}
		raw := v.Get(key)
		s, ok := raw.(string)
		if !ok {
			continue
		}
		if _, err := strconv.ParseFloat(strings.TrimSpace(s), 64); err != nil {
			errs = append(errs, fmt.Sprintf("%s must be a number, got %q", key, s))
		}
	}
	if len(errs) > 0 {
		sort.Strings(errs)
		return fmt.Errorf("configuration: %s", strings.Join(errs, "; "))
	}
	return nil
}

// rangeCheck is one numeric setting and its allowed range: (lo, hi], or
// [lo, hi] when loInclusive.
type rangeCheck struct {
	key         string
	v, lo, hi   float64
	loInclusive bool
}

// inRanges refuses every setting outside its range, naming each key.
func inRanges(cs []rangeCheck) error {
	var errs []string
	for _, c := range cs {
		ok := c.v <= c.hi && (c.v > c.lo || (c.loInclusive && c.v == c.lo))
		if !ok || math.IsNaN(c.v) {
			open := "("
			if c.loInclusive {
				open = "["
			}
			errs = append(errs, fmt.Sprintf("%s must lie in %s%g, %g], got %g", c.key, open, c.lo, c.hi, c.v))
		}
	}
	if len(errs) > 0 {
		return fmt.Errorf("configuration: %s", strings.Join(errs, "; "))
	}
	return nil
}
