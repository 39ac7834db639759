package configs

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// Kind is the type of a configuration key's value.
type Kind int

// The kinds of value a key can hold.
const (
	// KindText is any text (a path, a URL); empty is allowed.
	KindText Kind = iota
	// KindInt is a whole number within [Key.Min, Key.Max].
	KindInt
	// KindFloat is a finite number within the key's range.
	KindFloat
	// KindOptionalFloat is empty, or a finite number within the key's range.
	KindOptionalFloat
	// KindChoice is one of Key.Choices, exactly as written there.
	KindChoice
	// KindTime is an RFC 3339 time.
	KindTime
)

func (k Kind) String() string {
	switch k {
	case KindText:
		return "text"
	case KindInt:
		return "whole number"
	case KindFloat:
		return "number"
	case KindOptionalFloat:
		return "number or empty"
	case KindChoice:
		return "choice"
	case KindTime:
		return "RFC 3339 time"
	}
	return fmt.Sprintf("Kind(%d)", int(k))
}

// Key is one configuration key: its name, type, default, allowed values
// and meaning. The table returned by Keys drives the defaults, the
// environment variables, the parsing and the validation of every layer,
// and the README's configuration table (MarkdownTable).
type Key struct {
	// Name is the dotted, lower-case key, as written in a YAML file
	// (section.key).
	Name string
	// Kind is the type of the value.
	Kind Kind
	// Default is the built-in value as text, as an environment variable
	// would give it; the embedded hulltally.yaml states the same value.
	Default string
	// Min and Max bound a numeric value; MinOpen excludes Min itself.
	// Every numeric value must also be finite (NaN and ±Inf are refused).
	Min, Max float64
	MinOpen  bool
	// Choices are the allowed values of a KindChoice key.
	Choices []string
	// Help says what the key means, for the README's table.
	Help string

	set func(c *Config, v value)
}

// value is one parsed setting.
type value struct {
	s string
	f float64
	i int64
	// null: an empty optional number.
	null bool
}

// EnvName is the environment variable that sets key: HULLTALLY_ and the
// key in upper case with dots as underscores.
func EnvName(key string) string {
	return envPrefix + strings.ToUpper(strings.ReplaceAll(key, ".", "_"))
}

const envPrefix = "HULLTALLY_"

// reservedEnv reports whether name is a HULLTALLY_ variable that is not a
// configuration key (read by the test suites), and so is not refused as
// an unknown key.
func reservedEnv(name string) bool {
	switch name {
	case "HULLTALLY_TEST_DATABASE_URL", "HULLTALLY_REPORT_DUMP", "HULLTALLY_CHARTS_DIR":
		return true
	}
	return false
}

// Keys returns the table of every configuration key, in the order of the
// embedded hulltally.yaml. Each call returns a fresh table.
func Keys() []Key {
	text := func(name, def, help string, set func(*Config, string)) Key {
		return Key{Name: name, Kind: KindText, Default: def, Help: help, set: func(c *Config, v value) { set(c, v.s) }}
	}
	num := func(name, def string, lo, hi float64, loOpen bool, help string, set func(*Config, float64)) Key {
		return Key{Name: name, Kind: KindFloat, Default: def, Min: lo, Max: hi, MinOpen: loOpen, Help: help,
			set: func(c *Config, v value) { set(c, v.f) }}
	}
	whole := func(name, def string, lo, hi float64, help string, set func(*Config, int64)) Key {
		return Key{Name: name, Kind: KindInt, Default: def, Min: lo, Max: hi, Help: help,
			set: func(c *Config, v value) { set(c, v.i) }}
	}
	choice := func(name, def string, choices []string, help string, set func(*Config, string)) Key {
		return Key{Name: name, Kind: KindChoice, Default: def, Choices: choices, Help: help, set: func(c *Config, v value) { set(c, v.s) }}
	}
	return []Key{
		text("home", "", "folder of the managed cluster, demo files and reports; empty: `$XDG_DATA_HOME/hulltally` or `~/.local/share/hulltally`, `/var/lib/hulltally` as root",
			func(c *Config, s string) { c.Home = s }),
		text("database.url", "", "PostgreSQL 13+ to use; empty: the managed cluster under `<home>/postgres`",
			func(c *Config, s string) { c.Database.URL = s }),
		whole("database.max_conns", "4", 1, 1000, "connection pool size",
			func(c *Config, n int64) { c.Database.MaxConns = int32(n) }),

		{Name: "ingest.default_latitude", Kind: KindOptionalFloat, Default: "", Min: -90, Max: 90,
			Help: "latitude (degrees) when `--lat` is not given; empty: the conservative latitude for the logged column (recorded as assumed)",
			set: func(c *Config, v value) {
				if !v.null {
					lat := v.f
					c.Ingest.DefaultLatitude = &lat
				}
			}},
		whole("ingest.block_samples", "8192", 16, 1<<20, "samples per stored block",
			func(c *Config, n int64) { c.Ingest.BlockSamples = int(n) }),
		num("ingest.clock_tolerance_s", "600", 0, 86400, false, "records dated further ahead of the clock (seconds) are refused",
			func(c *Config, f float64) { c.Ingest.ClockToleranceS = f }),
		{Name: "ingest.earliest_time", Kind: KindTime, Default: "1990-01-01T00:00:00Z",
			Help: "records dated earlier are refused",
			set:  func(c *Config, v value) { c.Ingest.EarliestTime = v.s }},
		num("ingest.surface_tolerance_mpa", "0.1", 0, 1, true, "a record that does not start or end within this gauge pressure (MPa) of the surface is cut off (finding; cycle closed to the surface)",
			func(c *Config, f float64) { c.Ingest.SurfaceToleranceMPa = f }),
		num("ingest.max_gap_s", "60", 0, 1e9, true, "a longer gap between samples below the surface (seconds) is a data-quality finding",
			func(c *Config, f float64) { c.Ingest.MaxGapS = f }),
		num("ingest.max_interval_s", "10", 0, 1e9, true, "a coarser sample interval below the surface (seconds) is a data-quality finding; at most `ingest.max_gap_s`",
			func(c *Config, f float64) { c.Ingest.MaxIntervalS = f }),
		num("ingest.cut_leg_mpa_per_s", "0.005", 0, 1, true, "the unrecorded legs of a cut-off record are charged at this slow rate (MPa/s), at the dive's highest pressure",
			func(c *Config, f float64) { c.Ingest.CutLegMPaPerS = f }),

		text("fatigue.curves_file", "", "S-N and stress-rupture curve library; empty: the shipped `configs/curves.yaml`",
			func(c *Config, s string) { c.Fatigue.CurvesFile = s }),
		num("fatigue.design_fatigue_factor", "1.0", 1, 1000, false, "design fatigue factor applied to the Miner sum",
			func(c *Config, f float64) { c.Fatigue.DesignFatigueFactor = f }),
		choice("fatigue.mean_stress", "goodman", []string{"goodman", "none"}, "mean-stress correction: `goodman` (linear, against the compressive strength for compressive means, tensile for tensile) or `none`",
			func(c *Config, s string) { c.Fatigue.MeanStress = s }),
		num("fatigue.allowable", "0.3", 0, 1, true, "allowable damage per component (operator's choice: well below 1 for composites, common practice)",
			func(c *Config, f float64) { c.Fatigue.Allowable = f }),
		choice("fatigue.combine", "add", []string{"add", "separate"}, "`add`: cyclic and sustained damage against one allowable; `separate`: sustained against `fatigue.sustained_allowable`",
			func(c *Config, s string) { c.Fatigue.Combine = s }),
		num("fatigue.sustained_allowable", "0.3", 0, 1, true, "allowable sustained-load damage when `fatigue.combine` is `separate`",
			func(c *Config, f float64) { c.Fatigue.SustainedAllowable = f }),
		num("fatigue.sensor_noise_mpa", "0.01", 0, 0.5, false, "pressure sensor noise (MPa); rainflow gate = `fatigue.gate_factor` × noise",
			func(c *Config, f float64) { c.Fatigue.SensorNoiseMPa = f }),
		num("fatigue.strain_noise_ue", "2.0", 0, 500, false, "strain gauge noise (µε); strain rainflow gate = `fatigue.gate_factor` × noise",
			func(c *Config, f float64) { c.Fatigue.StrainNoiseUE = f }),
		num("fatigue.gate_factor", "5", 0, 20, false, "rainflow hysteresis gate in multiples of the sensor noise (a smaller gate counts more cycles)",
			func(c *Config, f float64) { c.Fatigue.GateFactor = f }),
		num("fatigue.hold_bin_mpa", "0.05", 0, 10, true, "bin width (MPa) of time at pressure for sustained-load damage, charged at the bin's upper edge",
			func(c *Config, f float64) { c.Fatigue.HoldBinMPa = f }),
		whole("fatigue.hold_max_bins", "24", 2, 10000, "most pressure levels kept per dive (neighbours merged upwards)",
			func(c *Config, n int64) { c.Fatigue.HoldMaxBins = int(n) }),
		whole("fatigue.window", "10", 1, 10000, "remaining life: MEAN damage per dive over this many last dives",
			func(c *Config, n int64) { c.Fatigue.Window = int(n) }),
		whole("fatigue.min_dives", "3", 1, 10000, "no remaining-life estimate below this many dives",
			func(c *Config, n int64) { c.Fatigue.MinDives = int(n) }),
		num("fatigue.design_bottom_time_min", "60", 0, 100000, false, "bottom time (minutes) of the design dive to the rated depth that bounds the remaining life",
			func(c *Config, f float64) { c.Fatigue.DesignBottomTimeMin = f }),
		whole("fatigue.life_horizon", "100000", 1, 1e15, "remaining dives beyond this are shown as \"more than\"",
			func(c *Config, n int64) { c.Fatigue.LifeHorizon = n }),

		num("proof.tolerance", "0.02", 0, 0.05, false, "a passing proof test below the spec's proof pressure by more than this fraction is refused; the recorded pressure must agree with the samples' peak within it",
			func(c *Config, f float64) { c.Proof.Tolerance = f }),
		num("proof.hold_min", "30", 0, 10000, false, "minutes at pressure charged for a proof test recorded without samples",
			func(c *Config, f float64) { c.Proof.HoldMin = f }),

		text("fitness.rules_file", "", "fitness rules, thresholds and sources; empty: the shipped `configs/rules.yaml`",
			func(c *Config, s string) { c.RulesFile = s }),

		num("evidence.hold_fraction", "0.95", 0, 1, true, "the hold at depth: samples at or above this fraction of the dive's peak",
			func(c *Config, f float64) { c.Evidence.HoldFraction = f }),
		num("evidence.onset_increment_fraction", "0.10", 0, 0.5, true, "significant emission: a rise of load of this fraction of the reference pressure (sliding window)",
			func(c *Config, f float64) { c.Evidence.OnsetIncrementFrac = f }),
		num("evidence.onset_hits", "6", 1, 1000, false, "significant emission: at least this many hits within such a rise",
			func(c *Config, f float64) { c.Evidence.OnsetHits = f }),
		num("evidence.min_amplitude_db", "45", 0, 100, true, "hits below this amplitude (dB_AE) are not counted for significant emission",
			func(c *Config, f float64) { c.Evidence.MinAmplitudeDB = f }),
		whole("evidence.hold_windows", "4", 2, 100, "hold emission is judged in this many windows",
			func(c *Config, n int64) { c.Evidence.HoldWindows = int(n) }),
		num("evidence.hold_decay_fraction", "0.5", 0, 1, false, "hold emission decays when the last window has at most this fraction of the first's hits",
			func(c *Config, f float64) { c.Evidence.HoldDecayFraction = f }),
		whole("evidence.hold_quiet_hits", "2", 0, 10000, "hold emission also decays when the last window has at most this many hits",
			func(c *Config, n int64) { c.Evidence.HoldQuietHits = int(n) }),
		whole("evidence.hold_min_hits", "5", 0, 10000, "fewer hits in the whole hold is a quiet hold",
			func(c *Config, n int64) { c.Evidence.HoldMinHits = int(n) }),
		num("evidence.hold_settle_s", "60", 0, 3600, false, "hits after the first this many seconds of the hold count against `evidence.hold_max_hits_after_settle`",
			func(c *Config, f float64) { c.Evidence.HoldSettleS = f }),
		whole("evidence.hold_max_hits_after_settle", "5", 0, 10000, "more hits after settling is significant emission, decaying or not (absolute criterion)",
			func(c *Config, n int64) { c.Evidence.HoldMaxHitsAfterSettle = int(n) }),
		num("evidence.sensor_check_min_db", "80", 0, 140, true, "a sensor check shows a channel alive when it reaches this amplitude (dB_AE)",
			func(c *Config, f float64) { c.Evidence.SensorCheckMinDB = f }),
		num("evidence.high_amplitude_db", "80", 0, 140, true, "amplitude (dB_AE) of a high-amplitude hit, per channel",
			func(c *Config, f float64) { c.Evidence.HighAmplitudeDB = f }),
		num("evidence.residual_temp_tolerance_c", "2", 0, 50, false, "residual strain is compared only when the surface temperatures before and after agree within this (°C)",
			func(c *Config, f float64) { c.Evidence.ResidualTempToleranceC = f }),
		whole("evidence.baseline_dives", "3", 1, 1000, "without a proof test with strain, the compliance baseline is the mean of the hull's first this many dives",
			func(c *Config, n int64) { c.Evidence.BaselineDives = int(n) }),

		text("server.listen", "127.0.0.1:8686", "address `hulltally serve` listens on (host:port; loopback by default)",
			func(c *Config, s string) { c.Server.Listen = s }),
		text("server.tls_cert", "", "PEM certificate for HTTPS; with `server.tls_key`, both or neither",
			func(c *Config, s string) { c.Server.TLSCert = s }),
		text("server.tls_key", "", "PEM private key for HTTPS",
			func(c *Config, s string) { c.Server.TLSKey = s }),
		whole("server.max_upload_mb", "4096", 1, 1<<20, "largest dive upload (samples and hits together), MiB; a larger one is refused before anything is stored",
			func(c *Config, n int64) { c.Server.MaxUploadMB = n }),
		whole("server.read_timeout_s", "3600", 1, 86400, "longest time to receive one request, upload included; a slower or stalled upload is cut off and nothing is stored",
			func(c *Config, n int64) { c.Server.ReadTimeoutS = n }),
		whole("server.stall_timeout_s", "60", 1, 86400, "an upload whose sender sends nothing for this long is cut off, and nothing is stored (a stalled sender would hold its turn and its connection)",
			func(c *Config, n int64) { c.Server.StallTimeoutS = n }),
		whole("server.max_ingests", "2", 1, 64, "dives logged (and reports rendered or verified) at once by the service; an upload that comes when every turn is taken is spooled to disk while it waits",
			func(c *Config, n int64) { c.Server.MaxIngests = int(n) }),
		whole("server.memory_limit_mb", "96", 16, 1<<20, "soft memory limit of the service, MiB (Go's GC works harder near it; GOMEMLIMIT, when set, wins)",
			func(c *Config, n int64) { c.Server.MemoryLimitMB = n }),
		text("server.url", "", "the service the command line uses instead of the database for `dive log`, `clear`, `fleet` and `report verify` (https, or http to a loopback address); empty: the database",
			func(c *Config, s string) { c.Server.URL = s }),
		text("server.token", "", "personal API token for `server.url` (from `hulltally token create`); a secret: prefer the variable, or keep the file private",
			func(c *Config, s string) { c.Server.Token = s }),
	}
}

// rangeText is the allowed range of a numeric key, as "[lo, hi]" or
// "(lo, hi]".
func (k Key) rangeText() string {
	open := "["
	if k.MinOpen {
		open = "("
	}
	return fmt.Sprintf("%s%s, %s]", open, fmtNum(k.Min), fmtNum(k.Max))
}

// fmtNum writes f in full up to 1e15, in exponent form beyond.
func fmtNum(f float64) string {
	if math.Abs(f) < 1e16 {
		return strconv.FormatFloat(f, 'f', -1, 64)
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// Allowed describes the values the key accepts.
func (k Key) Allowed() string {
	switch k.Kind {
	case KindInt:
		return "whole number in " + k.rangeText()
	case KindFloat:
		return "finite number in " + k.rangeText()
	case KindOptionalFloat:
		return "empty, or finite number in " + k.rangeText()
	case KindChoice:
		return "one of " + strings.Join(k.Choices, ", ")
	case KindTime:
		return "RFC 3339 time"
	}
	return "any text"
}

// parse reads raw as the key's value. null marks a YAML null (no value
// written after the key). The error says what is wrong, naming the key.
func (k Key) parse(raw string, null bool) (value, error) {
	s := strings.TrimSpace(raw)
	switch k.Kind {
	case KindText:
		return value{s: raw}, nil
	case KindTime:
		if _, err := time.Parse(time.RFC3339, s); err != nil || null {
			return value{}, fmt.Errorf("%s must be an RFC 3339 time, got %q", k.Name, raw)
		}
		return value{s: s}, nil
	case KindChoice:
		for _, c := range k.Choices {
			if raw == c {
				return value{s: c}, nil
			}
		}
		return value{}, fmt.Errorf("%s must be one of %s, got %q", k.Name, strings.Join(k.Choices, ", "), raw)
	case KindOptionalFloat:
		if null || s == "" {
			return value{null: true}, nil
		}
	}
	if null || s == "" {
		return value{}, fmt.Errorf("%s must be a number, got no value (allowed: %s)", k.Name, k.Allowed())
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return value{}, fmt.Errorf("%s must be a number, got %q (allowed: %s)", k.Name, raw, k.Allowed())
	}
	// strconv accepts NaN and Inf; a NaN compares false with every bound
	// and would pass a range check written the wrong way round.
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return value{}, fmt.Errorf("%s must be a finite number, got %q (allowed: %s)", k.Name, raw, k.Allowed())
	}
	v := value{f: f}
	if k.Kind == KindInt {
		if f != math.Trunc(f) || math.Abs(f) > 1<<53 {
			return value{}, fmt.Errorf("%s must be a whole number in %s, got %s", k.Name, k.rangeText(), raw)
		}
		v.i = int64(f)
	}
	inside := f <= k.Max && (f > k.Min || (!k.MinOpen && f == k.Min))
	if !inside {
		what := "must lie in"
		if k.Kind == KindInt {
			what = "must be a whole number in"
		}
		return value{}, fmt.Errorf("%s %s %s, got %s", k.Name, what, k.rangeText(), fmtNum(f))
	}
	return v, nil
}

// MarkdownTable is the README's table of configuration keys, generated
// from Keys.
func MarkdownTable() string {
	var b strings.Builder
	b.WriteString("| key | environment variable | default | allowed | meaning |\n")
	b.WriteString("| --- | --- | --- | --- | --- |\n")
	cell := func(s string) string { return strings.ReplaceAll(s, "|", `\|`) }
	for _, k := range Keys() {
		def := "empty"
		if k.Default != "" {
			def = "`" + k.Default + "`"
		}
		fmt.Fprintf(&b, "| `%s` | `%s` | %s | %s | %s |\n", k.Name, EnvName(k.Name), def, cell(k.Allowed()), cell(k.Help))
	}
	return b.String()
}

// levenshtein is the edit distance between a and b (insertions,
// deletions and substitutions of bytes).
func levenshtein(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// candidate is a known name to suggest, and its last part (the key
// within its section).
type candidate struct{ name, leaf string }

// nearest is the candidate closest to name: by edit distance of the
// whole name, or (one more) of a last part of name, leaves, to the
// candidate's last part, for a key put in the wrong section or none.
func nearest(name string, leaves []string, cands []candidate) string {
	best, bestD := "", math.MaxInt
	for _, c := range cands {
		d := levenshtein(name, c.name)
		for _, l := range leaves {
			d = min(d, levenshtein(l, c.leaf)+1)
		}
		if d < bestD {
			best, bestD = c.name, d
		}
	}
	return best
}

// yamlCandidates are the keys and sections, for an unknown YAML key.
func yamlCandidates(keys []Key) []candidate {
	var cs []candidate
	secs := map[string]bool{}
	for _, k := range keys {
		sec, leaf, ok := strings.Cut(k.Name, ".")
		if !ok {
			leaf = k.Name
		}
		cs = append(cs, candidate{k.Name, leaf})
		if ok && !secs[sec] {
			secs[sec] = true
			cs = append(cs, candidate{sec, sec})
		}
	}
	return cs
}

// suggestKey is the known key or section nearest to an unknown YAML key.
func suggestKey(name string, cands []candidate) string {
	leaves := []string{name}
	if _, leaf, ok := strings.Cut(name, "."); ok {
		leaves = []string{leaf}
	}
	return nearest(name, leaves, cands)
}

// suggestEnv is the variable nearest to an unknown HULLTALLY_ variable.
func suggestEnv(name string, keys []Key) string {
	up := strings.ToUpper(name)
	rest := strings.TrimPrefix(up, envPrefix)
	leaves := []string{rest}
	if _, after, ok := strings.Cut(rest, "_"); ok {
		leaves = append(leaves, after)
	}
	cs := make([]candidate, len(keys))
	for i, k := range keys {
		leaf := k.Name
		if _, l, ok := strings.Cut(k.Name, "."); ok {
			leaf = l
		}
		cs[i] = candidate{EnvName(k.Name), strings.ToUpper(leaf)}
	}
	return nearest(up, leaves, cs)
}
