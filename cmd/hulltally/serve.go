package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"runtime/debug"
	"text/tabwriter"
	"time"

	"github.com/google/uuid"
	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/reports/web"
)

func (a *app) serveCmd() *cobra.Command {
	var listen string
	c := &cobra.Command{
		Use:   "serve [--listen ADDR]",
		Short: "Serve the ledger over HTTP: a JSON API with bearer tokens, health, readiness and metrics",
		Long: "Serve the ledger over HTTP (server.listen, loopback by default; HTTPS with server.tls_cert and server.tls_key). " +
			"Every API request needs a personal token (hulltally token create) and runs inside the database as the token's person. " +
			"SIGINT or SIGTERM stops taking requests and lets those in progress finish (an upload is stored whole or rolled back).",
		Example: "  hulltally serve\n  hulltally serve --listen 127.0.0.1:9000\n  curl -H \"Authorization: Bearer $TOKEN\" http://127.0.0.1:8686/api/v1/fleet",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			cfg := a.cfg.Server
			if listen != "" {
				cfg.Listen = listen
			}
			if (cfg.TLSCert == "") != (cfg.TLSKey == "") {
				return &ledger.InputError{Err: errors.New("server.tls_cert and server.tls_key: give both or neither")}
			}
			// The operator's report-signing key, when there is one: reports
			// the service writes are signed, uploads verified against it.
			signer, err := a.loadSigner("", false)
			if err != nil {
				return err
			}
			l, err := a.openDB(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			log := slog.New(slog.NewJSONHandler(a.errOut, nil))
			if _, set := os.LookupEnv("GOMEMLIMIT"); !set {
				debug.SetMemoryLimit(cfg.MemoryLimitMB << 20)
			}
			svc := web.New(l, web.Options{MaxUploadBytes: cfg.MaxUploadMB << 20, MaxIngests: cfg.MaxIngests, Signer: signer,
				StallTimeout: time.Duration(cfg.StallTimeoutS) * time.Second}, log)
			defer svc.Close()
			ln, err := net.Listen("tcp", cfg.Listen)
			if err != nil {
				return fmt.Errorf("listening on %s: %w", cfg.Listen, err)
			}
			srv := &http.Server{Handler: svc.Handler(), ReadHeaderTimeout: 10 * time.Second,
				ReadTimeout: time.Duration(cfg.ReadTimeoutS) * time.Second, IdleTimeout: 2 * time.Minute,
				ErrorLog: slog.NewLogLogger(log.Handler(), slog.LevelWarn),
				// Requests are not cancelled by the signal that stops the
				// server: Shutdown lets them finish.
				BaseContext: func(net.Listener) context.Context { return context.Background() }}
			scheme := "http"
			if cfg.TLSCert != "" {
				scheme = "https"
			}
			log.Info("serving", "url", scheme+"://"+ln.Addr().String(), "caution", cautionText())
			done := make(chan error, 1)
			go func() {
				if cfg.TLSCert != "" {
					done <- srv.ServeTLS(ln, cfg.TLSCert, cfg.TLSKey)
				} else {
					done <- srv.Serve(ln)
				}
			}()
			select {
			case err := <-done:
				return fmt.Errorf("serving: %w", err)
			case <-cmd.Context().Done():
			}
			// A second signal ends the process at once (its transactions
			// roll back).
			if a.stopSignals != nil {
				a.stopSignals()
			}
			// Uploads in progress may take up to the read timeout.
			grace := max(2*time.Minute, time.Duration(cfg.ReadTimeoutS)*time.Second+time.Minute)
			log.Info("stopping: finishing the requests in progress", "grace_s", grace.Seconds())
			ctx, cancel := context.WithTimeout(context.Background(), grace)
			defer cancel()
			if err := srv.Shutdown(ctx); err != nil {
				// Still running after the grace: cut them off; their
				// transactions roll back.
				srv.Close()
				return fmt.Errorf("stopping: %w", err)
			}
			log.Info("stopped")
			return nil
		},
	}
	c.Flags().StringVar(&listen, "listen", "", "host:port (default: server.listen, 127.0.0.1:8686)")
	return c
}

func (a *app) tokenCmd() *cobra.Command {
	c := &cobra.Command{Use: "token", Short: "Personal API tokens for hulltally serve (shown once, stored hashed, revocable, with expiry)",
		Example: "  hulltally token create --person a.rivera --days 30\n  hulltally token list\n  hulltally token revoke 0b6f…"}
	var person, note string
	var days int
	create := &cobra.Command{
		Use:     "create --person NAME [--days N] [--note TEXT]",
		Short:   "Make a token for a person; it is printed once (--json: as \"token\")",
		Example: "  hulltally token create --person a.rivera\n  hulltally token create --person k.osei --days 7 --note \"survey laptop\" --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			t, err := l.CreateToken(cmd.Context(), person, days, note)
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(t)
			}
			a.printf("token %s for %s, expires %s\n%s\n(shown once; only its hash is kept)\n", t.ID, t.Person, t.ExpiresAt.Format(time.RFC3339), t.Secret)
			return nil
		},
	}
	create.Flags().StringVar(&person, "person", "", "the person the token signs in as (hulltally person list)")
	create.Flags().IntVar(&days, "days", 90, "days until it expires (1 to 366)")
	create.Flags().StringVar(&note, "note", "", "what it is for")
	_ = create.MarkFlagRequired("person")
	list := &cobra.Command{
		Use: "list", Short: "List the tokens (never their secrets)", Example: "  hulltally token list --json", Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			ts, err := l.Tokens(cmd.Context())
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"tokens": ts})
			}
			tw := tabwriter.NewWriter(a.out, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "ID\tPERSON\tEXPIRES\tSTATE\tNOTE")
			now := time.Now()
			for _, t := range ts {
				state := "valid"
				switch {
				case t.RevokedAt != nil:
					state = "revoked"
				case !t.ExpiresAt.After(now):
					state = "expired"
				}
				fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\n", t.ID, t.Person, t.ExpiresAt.Format(time.DateOnly), state, t.Note)
			}
			return tw.Flush()
		},
	}
	revoke := &cobra.Command{
		Use: "revoke ID", Short: "Revoke a token at once", Example: "  hulltally token revoke 0b6f1c2e-…", Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			id, err := uuid.Parse(args[0])
			if err != nil {
				return &ledger.InputError{Err: fmt.Errorf("token id %q: %w", args[0], err)}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			if err := l.RevokeToken(cmd.Context(), id); err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"revoked": id})
			}
			a.printf("revoked token %s\n", id)
			return nil
		},
	}
	c.AddCommand(create, list, revoke)
	return c
}
