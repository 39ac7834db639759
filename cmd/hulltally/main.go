// Command hulltally is the dive-by-dive life ledger for composite pressure
// hulls: it records dives, counts load cycles, accumulates damage and
// reports fitness for service. This file and its siblings only wire the
// command line to the ledger and report packages.
package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/spf13/cobra"

	"hulltally/configs"
	"hulltally/ledger"
)

// Exit codes, decided once from the error's class (classify).
const (
	exitOK     = 0
	exitFailed = 1 // a failure (database unavailable, I/O), or verify found a broken chain
	exitInput  = 2 // usage or bad input: nothing was stored
	exitNoGo   = 3 // pre-dive clearance: no-go
)

type app struct {
	cfgFile string
	asJSON  bool
	// jsonArg: --json is on the command line (for errors met before
	// the flags are parsed).
	jsonArg bool
	version bool
	out     io.Writer
	errOut  io.Writer
	cfg     *configs.Config
	exit    int
	// in is standard input (os.Stdin when nil).
	in io.Reader
	// command is the command's path (hulltally dive log), once parsed.
	command string
	// identity is who the ledger's connection is, once opened.
	identity ledger.Identity
	// stopSignals restores the default handling of SIGINT and SIGTERM (a
	// second signal then ends the process at once).
	stopSignals func()
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	a := &app{out: os.Stdout, errOut: os.Stderr, jsonArg: jsonRequested(os.Args[1:])}
	os.Exit(a.run(ctx, os.Args[1:], stop))
}

// run executes the command line and returns the exit code.
func (a *app) run(ctx context.Context, args []string, stop func()) int {
	a.stopSignals = stop
	root := a.rootCmd()
	root.SetArgs(args)
	cmd, err := root.ExecuteContextC(ctx)
	stop()
	if err != nil {
		a.fail(cmd, err)
	}
	return a.exit
}

// jsonRequested says whether --json is among the arguments (before "--").
func jsonRequested(args []string) bool {
	for _, s := range args {
		switch s {
		case "--":
			return false
		case "--json", "--json=true", "--json=1":
			return true
		}
	}
	return false
}

// fail prints an error (text on standard error, or the JSON error
// document on standard output) and sets the exit code from its class.
func (a *app) fail(cmd *cobra.Command, err error) {
	kind, code := classify(err)
	var already *ledger.NotPermittedError
	_, fromService := serviceKind(err) // the service named the person
	if kind == kindNotPermitted && !errors.As(err, &already) && !fromService {
		err = &ledger.NotPermittedError{Identity: a.identity, Err: err}
	}
	dbURL := ""
	if a.cfg != nil {
		dbURL = a.cfg.Database.URL
	}
	msg := redactWith(err.Error(), dbURL)
	if a.cfg != nil && len(a.cfg.Server.Token) >= 4 {
		msg = strings.ReplaceAll(msg, a.cfg.Server.Token, redacted)
	}
	if a.asJSON || a.jsonArg {
		_ = json.NewEncoder(a.out).Encode(map[string]any{"error": map[string]string{"kind": kind, "message": msg}})
	} else {
		fmt.Fprintln(a.errOut, "hulltally:", msg)
		if kind == kindUsage && cmd != nil {
			fmt.Fprintf(a.errOut, "Run '%s --help' for usage.\n", cmd.CommandPath())
		}
	}
	a.exit = code
}

func (a *app) rootCmd() *cobra.Command {
	root := &cobra.Command{
		Use:   "hulltally",
		Short: "Dive-by-dive life ledger for composite pressure hulls",
		Long:  "hulltally records every dive of every hull serial, counts load cycles, accumulates damage against the hull's S-N data and reports fitness for service.\n\n" + cautionText(),
		Example: `  hulltally demo
  hulltally hull add -f hull.yaml
  hulltally dive log --hull EX-C4000-01 --lat 45 dive.csv
  hulltally clear EX-C4000-01 --depth 3500 --bottom-time 120 --json
  hulltally --version`,
		SilenceUsage:  true,
		SilenceErrors: true,
		PersistentPreRunE: func(cmd *cobra.Command, args []string) error {
			if err := checkFlags(cmd); err != nil {
				return err
			}
			if !needsConfig(cmd) {
				return nil
			}
			cfg, err := a.loadConfig()
			if err != nil {
				return err
			}
			a.cfg, a.command = cfg, cmd.CommandPath()
			return nil
		},
		RunE: func(cmd *cobra.Command, _ []string) error {
			if a.version {
				return a.printVersion()
			}
			return usageError{fmt.Errorf("a command is needed: %s (see 'hulltally --help')", strings.Join(subNames(cmd), ", "))}
		},
	}
	root.SetOut(a.out)
	root.SetErr(a.errOut)
	root.PersistentFlags().StringVar(&a.cfgFile, "config", "", "configuration file (YAML); overrides configs/hulltally.yaml, overridden by HULLTALLY_* variables")
	root.PersistentFlags().BoolVar(&a.asJSON, "json", false, "print one JSON document instead of text")
	root.Flags().BoolVar(&a.version, "version", false, "print the version and VCS revision")
	root.AddCommand(a.dbCmd(), a.hullCmd(), a.diveCmd(), a.assessCmd(), a.fleetCmd(), a.clearCmd(), a.inspectCmd(), a.prooftestCmd(),
		a.decideCmd(), a.reportCmd(), a.verifyCmd(), a.statusCmd(), a.demoCmd(), a.versionCmd(), a.keyCmd(), a.checkpointCmd(), a.exportCmd(),
		a.personCmd(), a.tokenCmd(), a.serveCmd())
	// cobra's completion and help commands, added now so that their
	// errors are classified like every other command's.
	root.InitDefaultHelpCmd()
	root.InitDefaultCompletionCmd()
	wireUsage(root)
	return root
}

// needsConfig: the root (--version), version and the completion scripts
// run without the configuration, so that a broken setting cannot stop them.
func needsConfig(cmd *cobra.Command) bool {
	if !cmd.HasParent() {
		return false
	}
	top := cmd
	for top.Parent().HasParent() {
		top = top.Parent()
	}
	return top.Name() != "version" && top.Name() != "completion"
}

// loadConfig reads the configuration; a refused setting is bad input.
func (a *app) loadConfig() (*configs.Config, error) {
	cfg, err := configs.Load(configs.Options{File: a.cfgFile})
	if err != nil {
		return nil, &ledger.InputError{Err: err}
	}
	return cfg, nil
}

// open opens the ledger and says what the first start created; with
// server.url set it refuses (the command works only against the
// database).
func (a *app) open(ctx context.Context) (*ledger.Ledger, error) {
	if a.cfg.Server.URL != "" {
		return nil, a.errDatabaseOnly("'" + a.command + "'")
	}
	return a.openDB(ctx)
}

// openDB opens the ledger whatever server.url says (the service itself
// runs on the database).
func (a *app) openDB(ctx context.Context) (*ledger.Ledger, error) {
	l, err := ledger.Open(ctx, a.cfg)
	if err != nil {
		if databaseUnavailable(err) {
			where := "the managed cluster in " + a.cfg.Home
			if a.cfg.Database.URL != "" {
				where = redact(a.cfg.Database.URL)
			}
			return nil, fmt.Errorf("the ledger's database is not available (%s): %w", where, err)
		}
		return nil, err
	}
	a.identity = l.Identity()
	if inf := l.Info(); inf.Created {
		owner := ""
		if inf.Owner != "" {
			owner = " (the server runs as the " + inf.Owner + " system user)"
		}
		fmt.Fprintf(a.errOut, "hulltally: created a PostgreSQL cluster in %s%s, listening only on a Unix socket there; stop it with 'hulltally db stop'\n", inf.ClusterDir, owner)
	} else if inf.Started {
		fmt.Fprintf(a.errOut, "hulltally: started the PostgreSQL cluster in %s\n", inf.ClusterDir)
	}
	return l, nil
}

func (a *app) printJSON(v any) error {
	enc := json.NewEncoder(a.out)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

func (a *app) printf(format string, args ...any) { fmt.Fprintf(a.out, format, args...) }
