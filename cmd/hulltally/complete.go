package main

import (
	"context"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
)

// completionTimeout bounds a shell completion's look-up in the ledger:
// a completion that hangs is worse than none.
const completionTimeout = 3 * time.Second

// completionLedger opens the ledger for a completion, without creating
// or starting the managed cluster: nil when it is not at hand.
func (a *app) completionLedger(ctx context.Context) *ledger.Ledger {
	cfg, err := a.loadConfig()
	if err != nil {
		return nil
	}
	if cfg.Database.URL == "" && !ledger.DBStatus(ctx, cfg).Running {
		return nil
	}
	l, err := ledger.Open(ctx, cfg)
	if err != nil {
		return nil
	}
	return l
}

// hullSerials lists the hull serials beginning with prefix, each with its
// name as the description.
func (a *app) hullSerials(ctx context.Context, prefix string) []cobra.Completion {
	ctx, cancel := context.WithTimeout(ctx, completionTimeout)
	defer cancel()
	l := a.completionLedger(ctx)
	if l == nil {
		return nil
	}
	defer l.Close()
	hs, err := l.Hulls(ctx)
	if err != nil {
		return nil
	}
	var out []cobra.Completion
	for _, h := range hs {
		if strings.HasPrefix(h.Serial, prefix) {
			out = append(out, cobra.CompletionWithDesc(h.Serial, h.Name))
		}
	}
	return out
}

// diveIDs lists the newest dive ids beginning with prefix, each with
// its hull and start as the description.
func (a *app) diveIDs(ctx context.Context, prefix string) []cobra.Completion {
	prefix = strings.ToLower(prefix)
	if strings.Trim(prefix, "0123456789abcdef-") != "" {
		return nil
	}
	ctx, cancel := context.WithTimeout(ctx, completionTimeout)
	defer cancel()
	l := a.completionLedger(ctx)
	if l == nil {
		return nil
	}
	defer l.Close()
	rows, err := l.Pool().Query(ctx, `SELECT d.id::text, h.serial, d.start_time FROM dives d JOIN hulls h ON h.id = d.hull_id
		WHERE d.id::text LIKE $1 || '%' ORDER BY d.start_time DESC LIMIT 200`, prefix)
	if err != nil {
		return nil
	}
	defer rows.Close()
	var out []cobra.Completion
	for rows.Next() {
		var id, serial string
		var start time.Time
		if rows.Scan(&id, &serial, &start) != nil {
			return nil
		}
		out = append(out, cobra.CompletionWithDesc(id, serial+" "+start.UTC().Format("2006-01-02 15:04")))
	}
	return out
}

// completeSerialArg completes a command's one SERIAL argument.
func (a *app) completeSerialArg(cmd *cobra.Command, args []string, toComplete string) ([]cobra.Completion, cobra.ShellCompDirective) {
	if len(args) > 0 {
		return nil, cobra.ShellCompDirectiveNoFileComp
	}
	return a.hullSerials(cmd.Context(), toComplete), cobra.ShellCompDirectiveNoFileComp
}

// completeDiveArg completes a command's one dive ID argument.
func (a *app) completeDiveArg(cmd *cobra.Command, args []string, toComplete string) ([]cobra.Completion, cobra.ShellCompDirective) {
	if len(args) > 0 {
		return nil, cobra.ShellCompDirectiveNoFileComp
	}
	return a.diveIDs(cmd.Context(), toComplete), cobra.ShellCompDirectiveNoFileComp
}

// completeHullFlag completes a --hull flag.
func (a *app) completeHullFlag(cmd *cobra.Command, _ []string, toComplete string) ([]cobra.Completion, cobra.ShellCompDirective) {
	return a.hullSerials(cmd.Context(), toComplete), cobra.ShellCompDirectiveNoFileComp
}

// fixedValues completes an enumerated flag.
func fixedValues(values ...string) cobra.CompletionFunc {
	return cobra.FixedCompletions(values, cobra.ShellCompDirectiveNoFileComp)
}

// must panics on a programming error in wiring the commands (a flag name
// that does not exist); it cannot depend on input.
func must(err error) {
	if err != nil {
		panic(err)
	}
}
