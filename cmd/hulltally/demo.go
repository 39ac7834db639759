package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"hulltally/reports/sign"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
	"hulltally/ledger/demo"
	"hulltally/reports"
	"hulltally/reports/view"
)

func (a *app) demoCmd() *cobra.Command {
	var dives int
	var hz float64
	c := &cobra.Command{
		Use:     "demo",
		Short:   "Set up an invented fleet, generate a season of dives, log them and show the fleet",
		Example: "  hulltally demo\n  hulltally demo --dives 20 --hz 1",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			t0 := time.Now()
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			people, passwords, err := a.demoPeople(cmd, l)
			if err != nil {
				return err
			}
			o := demo.Options{Dir: filepath.Join(a.cfg.Home, "demo"), DivesPerHull: dives, SampleHz: hz, Log: a.errOut}
			if people != "" {
				// The demo's records are made by its people, each signed in
				// with their own password, and carry their names.
				maint, ops, err := a.demoSignIn(cmd, l, passwords)
				if err != nil {
					return err
				}
				if maint != nil {
					defer maint.Close()
					defer ops.Close()
					o.Maintenance, o.Operator = maint, ops
				}
			}
			sum, err := demo.Run(cmd.Context(), l, o)
			if err != nil {
				return err
			}
			hs, err := l.Hulls(cmd.Context())
			if err != nil {
				return err
			}
			fv, err := view.FleetOf(cmd.Context(), l, time.Now().UTC())
			if err != nil {
				return err
			}
			dmg := map[string]*ledger.Damages{}
			for s, h := range fv.Hulls {
				dmg[s] = h.Damage
			}
			fl := fv.Rows()
			written, err := a.demoReports(cmd, l)
			if err != nil {
				return err
			}
			for _, w := range written {
				a.reportWarning(w)
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"demo": sum, "hulls": hs, "damage": dmg, "fleet": fl, "reports": written, "people_file": people, "seconds": time.Since(t0).Seconds(), "caution": cautionText()})
			}
			a.printf("demo fleet of the Corrigan Shelf Survey Cooperative (invented), files in %s\n", sum.Dir)
			a.printf("%d dives: %d logged now (%d samples), %d already recorded; %.1f s\n\n", sum.Dives, sum.Logged, sum.Samples, sum.Duplicates, time.Since(t0).Seconds())
			a.printHulls(fv.HullRows(), false)
			a.printf("\nfleet status, most urgent first:\n")
			a.printFleet(fl)
			a.printf("\nreports:\n")
			for _, w := range written {
				a.printf("  %s (%d pages)\n", w.Path, w.Pages)
			}
			if people != "" {
				a.printf("\nweb pages: run 'hulltally serve' and open http://%s/ ; sign in as demo-operator, demo-maintenance or demo-inspector, with the passwords in %s\n", a.cfg.Server.Listen, people)
			}
			return nil
		},
	}
	c.Flags().IntVar(&dives, "dives", 60, "dives per hull")
	c.Flags().Float64Var(&hz, "hz", 0.5, "logger sample rate, Hz")
	return c
}

// demoReports writes the fleet summary and every hull's report under
// <home>/reports.
func (a *app) demoReports(cmd *cobra.Command, l *ledger.Ledger) ([]*reports.Written, error) {
	dir := filepath.Join(a.cfg.Home, "reports")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	// The invented operator's report-signing key (made once, in the
	// demo's home), a checkpoint of every chain, and signed reports that
	// carry it.
	signer, err := a.demoSigner()
	if err != nil {
		return nil, err
	}
	ck, err := l.Checkpoint(cmd.Context(), signer.Key)
	if err != nil {
		return nil, err
	}
	line, err := json.Marshal(ck)
	if err != nil {
		return nil, err
	}
	if err := appendLine(filepath.Join(a.cfg.Home, checkpointLogName), append(line, '\n')); err != nil {
		return nil, fmt.Errorf("demo: checkpoint %d recorded but not logged: %w", ck.Seq, err)
	}
	cp, err := l.LatestCheckpoint(cmd.Context())
	if err != nil {
		return nil, err
	}
	opt := reports.WriteOptions{Signer: signer, Checkpoint: cp}
	now := time.Now()
	w, err := reports.WriteWith(cmd.Context(), l, reports.KindFleet, "fleet", filepath.Join(dir, "fleet-summary.pdf"), now, opt)
	if err != nil {
		return nil, err
	}
	out := []*reports.Written{w}
	hs, err := l.Hulls(cmd.Context())
	if err != nil {
		return nil, err
	}
	for _, h := range hs {
		w, err := reports.WriteWith(cmd.Context(), l, reports.KindHull, h.Serial, filepath.Join(dir, h.Serial+".pdf"), now, opt)
		if err != nil {
			return nil, err
		}
		out = append(out, w)
	}
	// A dive sheet of the latest dive that raised a flag, for each hull
	// that has one: the sheet a reviewer opens first.
	for _, h := range hs {
		hull, err := l.Hull(cmd.Context(), h.Serial)
		if err != nil {
			return nil, err
		}
		f, err := l.FitnessAt(cmd.Context(), hull, now)
		if err != nil {
			return nil, err
		}
		ds, err := l.Dives(cmd.Context(), h.Serial)
		if err != nil {
			return nil, err
		}
		flagged := map[string]bool{}
		for _, fl := range f.Flags {
			flagged[fl.Dive] = true
		}
		dive := ""
		for _, d := range ds {
			if flagged[d.ID.String()] {
				dive = d.ID.String() // oldest first: the last one wins
			}
		}
		if dive == "" {
			continue
		}
		name := fmt.Sprintf("%s-dive-%.8s.pdf", h.Serial, dive)
		w, err := reports.WriteWith(cmd.Context(), l, reports.KindDive, dive, filepath.Join(dir, name), now, opt)
		if err != nil {
			return nil, err
		}
		out = append(out, w)
	}
	return out, nil
}

// demoSigner is the demo operator's report-signing key: the one in the
// home when there is one, else made now for the invented cooperative.
func (a *app) demoSigner() (*sign.Signer, error) {
	s, err := sign.LoadFile(a.keyPath(""))
	if err == nil {
		return s, nil
	}
	if !errors.Is(err, sign.ErrNoKey) {
		return nil, err
	}
	if err := sign.Init(filepath.Dir(a.keyPath("")), "Corrigan Shelf Survey Cooperative (invented)", sign.DefaultYears); err != nil {
		return nil, fmt.Errorf("demo: making the demo operator's signing key: %w", err)
	}
	return sign.LoadFile(a.keyPath(""))
}

// demoPeopleFile is where the demo keeps its people's passwords, in the
// home (mode 0600).
const demoPeopleFile = "demo-people.txt"

// demoPeople adds, on the managed cluster only, one invented person per
// role (demo-operator, demo-maintenance, demo-inspector) with generated
// passwords kept in <home>/demo-people.txt (0600), for the web pages and
// for the demo's own records. People already there keep their passwords.
// It returns the file and the passwords in it. On a database of someone
// else's (database.url) the demo adds no login roles: it returns "".
func (a *app) demoPeople(cmd *cobra.Command, l *ledger.Ledger) (string, map[string]string, error) {
	if a.cfg.Database.URL != "" {
		return "", nil, nil
	}
	have, err := l.People(cmd.Context())
	if err != nil {
		return "", nil, err
	}
	path := filepath.Join(a.cfg.Home, demoPeopleFile)
	var lines []string
	for _, role := range []ledger.Role{ledger.RoleOperator, ledger.RoleMaintenance, ledger.RoleInspector} {
		name := "demo-" + string(role)
		if slices.ContainsFunc(have, func(p ledger.Person) bool { return p.Name == name }) {
			continue
		}
		p, err := l.AddPerson(cmd.Context(), name, role, "")
		if err != nil {
			return "", nil, err
		}
		lines = append(lines, fmt.Sprintf("%s\t%s\t%s\n", p.Name, p.Role, p.Password))
	}
	if len(lines) > 0 {
		f, err := os.OpenFile(path, os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o600)
		if err != nil {
			return "", nil, err
		}
		if _, err := f.WriteString(strings.Join(lines, "")); err != nil {
			f.Close()
			return "", nil, err
		}
		if err := f.Close(); err != nil {
			return "", nil, err
		}
	}
	text, err := os.ReadFile(path)
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		return "", nil, err
	}
	passwords := map[string]string{}
	for _, line := range strings.Split(string(text), "\n") {
		if f := strings.Split(line, "\t"); len(f) == 3 {
			passwords[f[0]] = f[2] // the last line for a name wins
		}
	}
	return path, passwords, nil
}

// demoSignIn signs demo-maintenance and demo-operator in with their
// passwords. When either cannot sign in (the password file lost or
// edited, the person disabled), it says so and returns nil ledgers: the
// demo's records then carry the owner's login, not a name nobody signed
// in as.
func (a *app) demoSignIn(cmd *cobra.Command, l *ledger.Ledger, passwords map[string]string) (maint, ops *ledger.Ledger, err error) {
	open := func(name string) (*ledger.Ledger, error) {
		p, err := l.OpenAs(cmd.Context(), name, passwords[name], 2)
		if errors.Is(err, ledger.ErrBadPassword) {
			fmt.Fprintf(a.errOut, "demo: %s could not sign in with the password in %s; the demo's records carry %s instead\n", name, demoPeopleFile, l.Identity().Name)
			return nil, nil
		}
		return p, err
	}
	if maint, err = open("demo-maintenance"); err != nil || maint == nil {
		return nil, nil, err
	}
	if ops, err = open("demo-operator"); err != nil || ops == nil {
		maint.Close()
		return nil, nil, err
	}
	return maint, ops, nil
}
