package main

import (
	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports"
)

func cautionText() string { return reports.Caution }

func (a *app) dbCmd() *cobra.Command {
	db := &cobra.Command{Use: "db", Short: "The ledger's database: status, stop, migrate",
		Example: "  hulltally db status\n  hulltally db stop\n  hulltally db migrate"}
	db.AddCommand(&cobra.Command{
		Use:     "status",
		Short:   "Say where the ledger is and whether its database runs (the URL's password is never printed)",
		Example: "  hulltally db status\n  hulltally db status --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			st := ledger.DBStatus(cmd.Context(), a.cfg)
			st.URL = a.printableURL(st.URL)
			st.Detail = redactWith(st.Detail, a.cfg.Database.URL)
			if a.asJSON {
				return a.printJSON(st)
			}
			kind := "external (database.url)"
			if st.Managed {
				kind = "managed cluster in " + st.Dir
			}
			state := "not running"
			if st.Running {
				state = "running"
			}
			a.printf("database: %s\nurl:      %s\nstate:    %s\n", kind, st.URL, state)
			if st.Detail != "" {
				a.printf("note:     %s\n", st.Detail)
			}
			return nil
		},
	}, &cobra.Command{
		Use:     "stop",
		Short:   "Stop the managed PostgreSQL cluster",
		Example: "  hulltally db stop",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			stopped, err := ledger.StopManaged(cmd.Context(), a.cfg)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"stopped": stopped})
			}
			if stopped {
				a.printf("stopped the managed cluster\n")
			} else {
				a.printf("the managed cluster was not running\n")
			}
			return nil
		},
	}, &cobra.Command{
		Use:     "migrate",
		Short:   "Apply pending schema migrations (also done on first use)",
		Example: "  hulltally db migrate\n  hulltally db migrate --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			// Migrate also restores append-only guards that were dropped,
			// disabled or altered, and says which.
			mr, merr := l.Migrate(cmd.Context())
			var restored []ledger.GuardFinding
			if mr != nil {
				restored = mr.Restored
			}
			if restored == nil {
				restored = []ledger.GuardFinding{}
			}
			if !a.asJSON {
				for _, g := range restored {
					if g.Table == "" {
						a.printf("restored the %s trigger function %s (it was %s)\n", g.Guard, g.Trigger, g.Problem)
					} else {
						a.printf("restored %s trigger %s on table %s (it was %s)\n", g.Guard, g.Trigger, g.Table, g.Problem)
					}
				}
			}
			if mr != nil && !a.asJSON {
				if n := mr.Profiles.Packed; n > 0 {
					a.printf("packed %d dive profiles stored before migration 020 (their values and the chain unchanged)\n", n)
				}
				if n := mr.Profiles.Unreadable; n > 0 {
					a.printf("left %d dive profiles as stored: they cannot be read as hulltally wrote them; run hulltally verify\n", n)
				}
			}
			if merr != nil {
				return merr
			}
			cur, latest, err := l.SchemaVersion(cmd.Context())
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"schema_version": cur, "latest": latest, "url": a.printableURL(l.Info().URL), "restored": restored, "profiles": mr.Profiles})
			}
			a.printf("schema at version %d of %d (%s)\n", cur, latest, a.printableURL(l.Info().URL))
			return nil
		},
	})
	return db
}

// printableURL is the database URL as the CLI prints it: the configured
// URL with its password removed (in URL or key=value form), or the
// managed cluster's, also redacted.
func (a *app) printableURL(fromLedger string) string {
	if a.cfg != nil && a.cfg.Database.URL != "" {
		return redactWith(a.cfg.Database.URL, a.cfg.Database.URL)
	}
	return redact(fromLedger)
}
