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
	"syscall"

	"github.com/spf13/cobra"

	"hulltally/configs"
	"hulltally/ledger"
	"hulltally/ledger/cluster"
)

// Exit codes.
const (
	exitOK     = 0
	exitFailed = 1 // a failure, or verify found a broken chain
	exitInput  = 2 // bad input or usage: nothing was stored
	exitNoGo   = 3 // reserved for pre-dive clearance: no-go
)

type app struct {
	cfgFile string
	asJSON  bool
	out     io.Writer
	errOut  io.Writer
	cfg     *configs.Config
	exit    int
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	a := &app{out: os.Stdout, errOut: os.Stderr}
	root := a.rootCmd()
	err := root.ExecuteContext(ctx)
	stop()
	if err != nil {
		a.fail(err)
	}
	os.Exit(a.exit)
}

func (a *app) fail(err error) {
	code := exitFailed
	var ie *ledger.InputError
	var ue usageError
	switch {
	case errors.As(err, &ie), errors.As(err, &ue):
		code = exitInput
	case errors.Is(err, cluster.ErrNoServer):
		code = exitFailed
	}
	if a.asJSON {
		_ = json.NewEncoder(a.out).Encode(map[string]any{"error": err.Error()})
	} else {
		fmt.Fprintln(a.errOut, "hulltally:", err)
	}
	a.exit = code
}

type usageError struct{ error }

func (a *app) rootCmd() *cobra.Command {
	root := &cobra.Command{
		Use:           "hulltally",
		Short:         "Dive-by-dive life ledger for composite pressure hulls",
		Long:          "hulltally records every dive of every hull serial, counts load cycles, accumulates damage against the hull's S-N data and reports fitness for service.\n\n" + cautionText(),
		SilenceUsage:  true,
		SilenceErrors: true,
		PersistentPreRunE: func(cmd *cobra.Command, args []string) error {
			cfg, err := configs.Load(configs.Options{File: a.cfgFile})
			if err != nil {
				return usageError{err}
			}
			a.cfg = cfg
			return nil
		},
	}
	root.SetOut(a.out)
	root.SetErr(a.errOut)
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error { return usageError{err} })
	root.PersistentFlags().StringVar(&a.cfgFile, "config", "", "configuration file (YAML); overrides configs/hulltally.yaml, overridden by HULLTALLY_* variables")
	root.PersistentFlags().BoolVar(&a.asJSON, "json", false, "print one JSON document instead of text")
	root.AddCommand(a.dbCmd(), a.hullCmd(), a.diveCmd(), a.assessCmd(), a.fleetCmd(), a.clearCmd(), a.inspectCmd(), a.prooftestCmd(), a.decideCmd(), a.reportCmd(), a.verifyCmd(), a.demoCmd())
	return root
}

// open opens the ledger and says what the first start created.
func (a *app) open(ctx context.Context) (*ledger.Ledger, error) {
	l, err := ledger.Open(ctx, a.cfg)
	if err != nil {
		return nil, err
	}
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
