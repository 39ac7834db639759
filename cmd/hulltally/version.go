package main

import (
	"runtime/debug"

	"github.com/spf13/cobra"
)

// versionInfo is what the binary knows of its own build.
type versionInfo struct {
	Module  string `json:"module"`
	Version string `json:"version"`
	// Revision is the VCS revision the binary was built from; null when
	// the build did not record it (go build -buildvcs=false, go run).
	Revision *string `json:"revision"`
	Time     *string `json:"revision_time"`
	// Modified: the working tree had uncommitted changes.
	Modified bool   `json:"modified"`
	Go       string `json:"go"`
}

// buildVersion reads the module version and VCS revision the Go
// toolchain stamped into the binary.
func buildVersion() versionInfo {
	v := versionInfo{Module: "hulltally", Version: "(unknown)"}
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return v
	}
	v.Go = bi.GoVersion
	if bi.Main.Path != "" {
		v.Module = bi.Main.Path
	}
	if bi.Main.Version != "" {
		v.Version = bi.Main.Version
	}
	for _, s := range bi.Settings {
		val := s.Value
		switch s.Key {
		case "vcs.revision":
			v.Revision = &val
		case "vcs.time":
			v.Time = &val
		case "vcs.modified":
			v.Modified = val == "true"
		}
	}
	return v
}

func (a *app) printVersion() error {
	v := buildVersion()
	if a.asJSON {
		return a.printJSON(v)
	}
	rev := "revision not recorded"
	if v.Revision != nil {
		rev = "revision " + *v.Revision
		if v.Modified {
			rev += " (modified)"
		}
		if v.Time != nil {
			rev += ", " + *v.Time
		}
	}
	a.printf("%s %s, %s, %s\n", v.Module, v.Version, rev, v.Go)
	return nil
}

func (a *app) versionCmd() *cobra.Command {
	return &cobra.Command{
		Use:     "version",
		Short:   "Print the module version and the VCS revision of this binary",
		Example: "  hulltally version\n  hulltally version --json\n  hulltally --version",
		Args:    cobra.NoArgs,
		RunE:    func(*cobra.Command, []string) error { return a.printVersion() },
	}
}
