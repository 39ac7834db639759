package main

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"hulltally/ledger"
)

// actorFlag defines the --actor flag that writes used to take. It is
// hidden: a record's actor is who is signed in (the person, or the
// ledger owner's own login), stamped by the database; a name given that
// differs is refused (exit 2), the same name is accepted, so scripts that
// passed their own login keep working.
func actorFlag(f *pflag.FlagSet, p *string) {
	f.StringVar(p, "actor", "", "who is signed in (records carry it; any other name is refused)")
	_ = f.MarkHidden("actor") // the flag was defined on the line above
}

func (a *app) stdin() io.Reader {
	if a.in != nil {
		return a.in
	}
	return os.Stdin
}

func (a *app) personCmd() *cobra.Command {
	c := &cobra.Command{Use: "person", Short: "People who sign in to the ledger, each in one role the database enforces",
		Long:    "People who sign in to the ledger. Each is a PostgreSQL login role in one group: inspector (read and verify), operator (log dives, correct a dive's site or operator), maintenance (also hulls, inspections, proof tests, decisions, voids, re-assessment, reports) or admin (people). The database refuses what the role may not do, and every record a person makes carries the person's own name.",
		Example: "  hulltally person add a.rivera --role operator\n  printf '%s' \"$PASSWORD\" | hulltally person add k.osei --role maintenance --password-stdin\n  hulltally person list\n  hulltally person disable a.rivera"}
	var role string
	var fromStdin bool
	add := &cobra.Command{
		Use:   "add NAME --role inspector|operator|maintenance|admin [--password-stdin]",
		Short: "Add a person; without --password-stdin a generated password is printed once",
		Example: `  hulltally person add a.rivera --role operator
  printf '%s\n' "$PASSWORD" | hulltally person add k.osei --role maintenance --password-stdin`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			r, err := ledger.ParseRole(role)
			if err != nil {
				return err
			}
			password := ""
			if fromStdin {
				line, err := bufio.NewReader(io.LimitReader(a.stdin(), 1024)).ReadString('\n')
				if err != nil && err != io.EOF {
					return fmt.Errorf("reading the password from standard input: %w", err)
				}
				if password = strings.TrimRight(line, "\r\n"); password == "" {
					return &ledger.InputError{Err: fmt.Errorf("--password-stdin: standard input held no password")}
				}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			p, err := l.AddPerson(cmd.Context(), args[0], r, password)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(p)
			}
			a.printf("added %s as %s\n", p.Name, p.Role)
			if p.Password != "" {
				a.printf("password (shown once, not stored anywhere): %s\n", p.Password)
			}
			return nil
		},
	}
	add.Flags().StringVar(&role, "role", "", "inspector, operator, maintenance or admin")
	add.Flags().BoolVar(&fromStdin, "password-stdin", false, "read the password from the first line of standard input (at least 12 printable ASCII characters)")
	_ = add.MarkFlagRequired("role")
	_ = add.RegisterFlagCompletionFunc("role", func(*cobra.Command, []string, string) ([]string, cobra.ShellCompDirective) {
		return []string{"inspector", "operator", "maintenance", "admin"}, cobra.ShellCompDirectiveNoFileComp
	})
	list := &cobra.Command{
		Use:     "list",
		Short:   "List the people and their roles",
		Example: "  hulltally person list\n  hulltally person list --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			ps, err := l.People(cmd.Context())
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"people": ps})
			}
			tw := tabwriter.NewWriter(a.out, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "NAME\tROLE\tSIGN-IN")
			for _, p := range ps {
				state := "allowed"
				if p.Disabled {
					state = "disabled"
				}
				fmt.Fprintf(tw, "%s\t%s\t%s\n", p.Name, p.Role, state)
			}
			return tw.Flush()
		},
	}
	disable := &cobra.Command{
		Use:     "disable NAME",
		Short:   "Stop a person signing in and end their sessions (their records keep their name)",
		Example: "  hulltally person disable a.rivera",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			if err := l.DisablePerson(cmd.Context(), args[0]); err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"disabled": args[0]})
			}
			a.printf("disabled %s: they can no longer sign in\n", args[0])
			return nil
		},
	}
	c.AddCommand(add, list, disable)
	return c
}
