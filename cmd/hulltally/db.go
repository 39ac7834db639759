package main

import (
	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports"
)

func cautionText() string { return reports.Caution }

func (a *app) dbCmd() *cobra.Command {
	db := &cobra.Command{Use: "db", Short: "The ledger's database: status, stop, migrate"}
	db.AddCommand(&cobra.Command{
		Use:   "status",
		Short: "Say where the ledger is and whether its database runs",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			st := ledger.DBStatus(cmd.Context(), a.cfg)
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
		Use:   "stop",
		Short: "Stop the managed PostgreSQL cluster",
		Args:  cobra.NoArgs,
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
		Use:   "migrate",
		Short: "Apply pending schema migrations (also done on first use)",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			cur, latest, err := l.SchemaVersion(cmd.Context())
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"schema_version": cur, "latest": latest, "url": l.Info().URL})
			}
			a.printf("schema at version %d of %d (%s)\n", cur, latest, l.Info().URL)
			return nil
		},
	})
	return db
}
