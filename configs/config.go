// Package configs holds hulltally's configuration: the built-in defaults,
// the embedded default file hulltally.yaml, an optional file given by the
// user, and HULLTALLY_* environment variables, in rising priority. It also
// embeds the shipped material and curve library.
package configs

import (
	"bytes"
	_ "embed"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

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

// Load resolves the configuration.
func Load(o Options) (*Config, error) {
	env := o.Env
	if env == nil {
		env = os.LookupEnv
	}
	v := viper.New()
	v.SetConfigType("yaml")
	v.SetDefault("home", "")
	v.SetDefault("database.url", "")
	v.SetDefault("database.max_conns", 4)
	v.SetDefault("ingest.default_latitude", "")
	v.SetDefault("ingest.block_samples", 8192)
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
