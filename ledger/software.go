package ledger

import "runtime/debug"

// Software identifies the build of hulltally that recorded an
// assessment. It is kept in the assessment's config_json under
// "software", outside the configuration hash: two builds with the same
// settings give the same hash, and the record still says which build
// computed the figures.
type Software struct {
	// Module is the main module's path.
	Module string `json:"module"`
	// Version is the module version ("(devel)" for a build from a
	// working tree).
	Version string `json:"version"`
	// Revision is the VCS revision the binary was built from (empty when
	// the build did not record one, as with go test).
	Revision string `json:"revision"`
	// Modified is true when the working tree had uncommitted changes.
	Modified bool `json:"modified"`
	// Go is the Go toolchain version.
	Go string `json:"go"`
}

// software reads the running build's identity.
func software() Software {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return Software{Version: "(unknown)"}
	}
	s := Software{Module: bi.Main.Path, Version: bi.Main.Version, Go: bi.GoVersion}
	for _, kv := range bi.Settings {
		switch kv.Key {
		case "vcs.revision":
			s.Revision = kv.Value
		case "vcs.modified":
			s.Modified = kv.Value == "true"
		}
	}
	return s
}

// CurrentSoftware identifies the running build (module version, VCS
// revision), for reports' metadata.
func CurrentSoftware() Software { return software() }

// String is the build in a few words: "hulltally (devel) rev abc123".
func (s Software) String() string {
	out := "hulltally " + s.Version
	if s.Revision != "" {
		out += " rev " + s.Revision
		if s.Modified {
			out += " (modified)"
		}
	}
	return out
}
