package main

import (
	"errors"
	"fmt"
	"hulltally/ledger/files"
	"io/fs"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"hulltally/fatigue/seawater"
	"hulltally/ledger"
	"hulltally/ledger/spec"
	"hulltally/reports/view"
)

func (a *app) hullCmd() *cobra.Command {
	hull := &cobra.Command{Use: "hull", Short: "Hulls: add from a spec, list, show",
		Example: "  hulltally hull add -f hull.yaml\n  hulltally hull list\n  hulltally hull show EX-C4000-01"}
	var file, actor, reason string
	var revise bool
	var h spec.Hull
	add := &cobra.Command{
		Use:   "add [-f hull.yaml | flags]",
		Short: "Record a hull from a YAML spec (or flags); --revise records a new spec revision",
		Example: `  hulltally hull add -f testdata/hulls/example-cylinder.yaml
  hulltally hull add -f hull.yaml --revise --reason "derated after inspection"
  hulltally hull add --serial S-01 --name Test --material carbon/epoxy --inner-radius 0.5 --wall 0.06 --length 2 \
    --rated-depth 4000 --design-pressure 45 --proof-pressure 50 --collapse-pressure 80 --component-curve CURVE`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			sp := &h
			if file != "" {
				// A regular file of at most 1 MiB, read with the command's
				// context (/dev/zero or a FIFO is refused at once).
				var err error
				if sp, err = spec.ReadFile(cmd.Context(), file); err != nil {
					if errors.Is(err, fs.ErrNotExist) || errors.Is(err, fs.ErrPermission) ||
						errors.Is(err, files.ErrNotRegular) || errors.Is(err, files.ErrTooLarge) {
						return usageError{err}
					}
					return &ledger.InputError{Err: err}
				}
			} else {
				if h.Shape == "" {
					h.Shape = "cylinder"
				}
				if len(h.Components) == 0 && h.Serial != "" {
					return usageError{fmt.Errorf("a hull added by flags needs --component-curve (the S-N curve of its laminate) or use -f hull.yaml")}
				}
			}
			if err := sp.Validate(); err != nil {
				return &ledger.InputError{Err: err}
			}
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			rec, err := l.AddHull(cmd.Context(), sp, ledger.AddHullOptions{Actor: actor, Reason: reason, Revise: revise})
			if err != nil {
				if !revise {
					return &ledger.InputError{Err: err}
				}
				return err
			}
			if a.asJSON {
				return a.printJSON(rec)
			}
			a.printf("recorded hull %s (%s), spec revision %d\n", rec.Serial, rec.Spec.Name, rec.Revision)
			return nil
		},
	}
	f := add.Flags()
	f.StringVarP(&file, "file", "f", "", "hull spec YAML (see testdata/hulls/example-cylinder.yaml)")
	actorFlag(f, &actor)
	f.StringVar(&reason, "reason", "", "why (required with --revise)")
	f.BoolVar(&revise, "revise", false, "record a new revision of an existing hull's spec")
	f.StringVar(&h.Serial, "serial", "", "hull serial")
	f.StringVar(&h.Name, "name", "", "hull name")
	f.StringVar(&h.MaterialSystem, "material", "", "material system")
	f.StringVar(&h.Shape, "shape", "", "cylinder or sphere")
	f.Float64Var(&h.InnerRadiusM, "inner-radius", 0, "inner radius, m")
	f.Float64Var(&h.WallThicknessM, "wall", 0, "wall thickness, m")
	f.Float64Var(&h.LengthM, "length", 0, "length, m (cylinders)")
	f.Float64Var(&h.RatedDepthM, "rated-depth", 0, "rated depth, m")
	f.Float64Var(&h.DesignPressureMPa, "design-pressure", 0, "design pressure, MPa")
	f.Float64Var(&h.ProofPressureMPa, "proof-pressure", 0, "proof pressure, MPa")
	f.Float64Var(&h.CollapsePressureMPa, "collapse-pressure", 0, "collapse pressure, MPa")
	var curve string
	f.StringVar(&curve, "component-curve", "", "S-N curve of the single laminate component (Lamé load transfer)")
	must(add.MarkFlagFilename("file", "yaml", "yml"))
	add.MarkFlagsMutuallyExclusive("file", "serial")
	must(add.RegisterFlagCompletionFunc("shape", fixedValues("cylinder", "sphere")))
	add.PreRunE = func(cmd *cobra.Command, _ []string) error {
		if curve != "" {
			kind := "laminate_cylinder"
			if h.Shape == "sphere" {
				kind = "laminate_sphere"
			}
			h.Components = []spec.Component{{Name: "laminate", Kind: kind, Transfer: spec.Transfer{Basis: "lame"}, Curve: curve}}
		}
		return nil
	}

	list := &cobra.Command{
		Use:     "list",
		Short:   "List the hulls with their dive totals, governing component, damage and dives left",
		Example: "  hulltally hull list\n  hulltally hull list --json",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			rows, err := view.HullRowsOf(cmd.Context(), l, time.Now().UTC())
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"hulls": rows, "caution": cautionText()})
			}
			a.printHulls(rows, true)
			return nil
		},
	}

	show := &cobra.Command{
		Use:               "show SERIAL",
		Short:             "Show a hull's spec and record",
		Example:           "  hulltally hull show EX-C4000-01\n  hulltally hull show EX-C4000-01 --json",
		Args:              cobra.ExactArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			l, err := a.open(cmd.Context())
			if err != nil {
				return err
			}
			defer l.Close()
			rec, err := l.Hull(cmd.Context(), args[0])
			if err != nil {
				return &ledger.InputError{Err: err}
			}
			sum, err := l.HullSummary(cmd.Context(), rec.ID)
			if err != nil {
				return err
			}
			// A read: the status is evaluated, not recorded (writes and
			// 'status record' keep the history).
			hv, err := view.HullOf(cmd.Context(), l, rec.Serial, time.Now().UTC())
			if err != nil {
				return err
			}
			fit, dmg := hv.Fitness, hv.Damage
			maint, err := l.MaintenanceOf(cmd.Context(), rec)
			if err != nil {
				return err
			}
			history, err := l.StatusHistory(cmd.Context(), rec)
			if err != nil {
				return err
			}
			imp, err := ledger.ImplosionOf(rec, seawater.DepthToMPa(rec.Spec.RatedDepthM, 90))
			if err != nil {
				return err
			}
			if a.asJSON {
				return a.printJSON(map[string]any{
					"serial": rec.Serial, "id": rec.ID, "revision": rec.Revision, "name": rec.Spec.Name,
					"rated_depth_m": rec.Spec.RatedDepthM, "spec": rec.Spec, "dive_count": sum.DiveCount,
					"max_pressure_mpa": sum.MaxPressureMPa, "max_depth_m": sum.MaxDepthM,
					"dives_beyond_rated": sum.BeyondRated, "last_dive": sum.LastDive,
					"components": dmg.Components, "governing_component": dmg.Governing, "governing_ratio": dmg.GoverningRatio,
					"remaining_dives": dmg.RemainingDives, "remaining_status": dmg.RemainingStatus, "remaining_reason": dmg.RemainingReason,
					"remaining_more_than": dmg.RemainingMoreThan, "remaining_basis": dmg.RemainingBasis,
					"remaining_at_recent_mean": dmg.RemainingAtRecentMean, "remaining_at_design_dive": dmg.RemainingAtDesignDive,
					"remaining_limit_ratio": dmg.LimitRatio, "design_dive": dmg.DesignDive,
					"max_pressure_ever_mpa": fit.MaxPressureMPa, "implosion": imp,
					"assessment": map[string]any{"config_hash": dmg.ConfigHash, "assessments_on_record": dmg.Assessments,
						"design_fatigue_factor": dmg.DesignFatigueFactor, "mean_stress": dmg.MeanStress, "combine": dmg.Combine},
					"status": fit.Status, "status_reasons": fit.Reasons, "flags": fit.Flags, "rules_source": fit.RulesSource,
					"maintenance": maint, "status_history": history,
					"caution": cautionText(),
				})
			}
			s := rec.Spec
			w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
			fmt.Fprintf(w, "hull\t%s  %s  (spec revision %d, %s by %s)\n", rec.Serial, s.Name, rec.Revision, rec.RevisedAt.Format("2006-01-02"), rec.Actor)
			fmt.Fprintf(w, "material\t%s, %s\n", s.MaterialSystem, s.Shape)
			geom := fmt.Sprintf("inner radius %.3f m, wall %.3f m", s.InnerRadiusM, s.WallThicknessM)
			if s.Shape == "cylinder" {
				geom += fmt.Sprintf(", length %.3f m", s.LengthM)
			}
			fmt.Fprintf(w, "geometry\t%s\n", geom)
			fmt.Fprintf(w, "rated depth\t%.0f m\n", s.RatedDepthM)
			fmt.Fprintf(w, "pressures\tdesign %.2f MPa, proof %.2f MPa, collapse %.2f MPa\n", s.DesignPressureMPa, s.ProofPressureMPa, s.CollapsePressureMPa)
			fmt.Fprintf(w, "dives\t%d (deepest %.1f m, highest %.3f MPa, %d beyond rated depth)\n", sum.DiveCount, sum.MaxDepthM, sum.MaxPressureMPa, sum.BeyondRated)
			for _, c := range s.Components {
				fmt.Fprintf(w, "component\t%s (%s): curve %s, load transfer %s\n", c.Name, c.Kind, c.Curve, c.Transfer.Basis)
			}
			for _, g := range s.Gauges {
				if g.Kind == "ae" {
					fmt.Fprintf(w, "AE channel\t%s: channel %d\n", g.Name, *g.Channel)
				} else {
					fmt.Fprintf(w, "strain gauge\t%s: %s %s on %s\n", g.Name, g.Direction, g.Position, g.Component)
				}
			}
			w.Flush()
			a.printDamage(dmg, hv.Life)
			a.printImplosion(imp, "at the rated depth")
			a.printf("\nstatus: %s\n", strings.ToUpper(fit.Status))
			// The same rule raised by many dives is shown once, with a count.
			for _, x := range view.CollapseReasons(fit.Reasons, true) {
				a.printf("  [%s] %s\n", x.First.State, x.Text())
			}
			for _, in := range maint.Inspections {
				a.printf("inspection %s: %s, %s by %s — %s\n", in.At.Format("2006-01-02"), in.Method, in.Result, in.Actor, in.Findings)
			}
			for _, p := range maint.ProofTests {
				a.printf("proof test %s: %.3f MPa, %s by %s\n", p.At.Format("2006-01-02"), p.PressureMPa, p.Result, p.Actor)
			}
			for _, d := range maint.Decisions {
				a.printf("decision %s: %s by %s — %s\n", d.At.Format("2006-01-02"), d.Kind, d.Actor, d.Reason)
			}
			a.printf("\n%s\n", cautionText())
			return nil
		},
	}
	hull.AddCommand(add, list, show)
	return hull
}

// printHulls prints the hull list with each hull's damage.
func (a *app) printHulls(rows []view.HullRow, caution bool) {
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "SERIAL\tNAME\tRATED m\tDIVES\tDEEPEST m\tMAX MPa\tBEYOND RATED\tGOVERNING\tDAMAGE/ALLOWABLE\tDIVES LEFT\tLAST DIVE")
	for _, h := range rows {
		last := "-"
		if h.LastDive != nil {
			last = h.LastDive.UTC().Format("2006-01-02 15:04")
		}
		gov, ratio, left := "-", "-", "-"
		if h.Status != "" {
			gov, ratio, left = h.Governing, view.Percent(h.Ratio), h.Remaining
		}
		fmt.Fprintf(w, "%s\t%s\t%.0f\t%d\t%.1f\t%.3f\t%d\t%s\t%s\t%s\t%s\n", view.TerminalSafe(h.Serial), view.TerminalSafe(h.Name), h.RatedDepthM, h.DiveCount, h.MaxDepthM, h.MaxPressureMPa, h.BeyondRated, gov, ratio, left, last)
	}
	w.Flush()
	if caution {
		a.printf("\n%s\n", cautionText())
	}
}

// printDamage prints a hull's damage table.
func (a *app) printDamage(d *ledger.Damages, life view.Life) {
	a.printf("\ncumulative damage (%d dives; design fatigue factor %g, mean stress %s, cyclic and sustained %s):\n", d.DiveCount, d.DesignFatigueFactor, d.MeanStress, d.Combine)
	w := tabwriter.NewWriter(a.out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "  COMPONENT\tCYCLIC\tSUSTAINED\tALLOWABLE\tOF ALLOWABLE\tTRANSFER\tCURVE")
	for _, c := range d.Components {
		fmt.Fprintf(w, "  %s\t%.3e\t%.3e\t%g\t%s\t%s %.3g MPa/MPa\t%s\n", c.Name, float64(c.CyclicDamage), float64(c.SustainedDamage), c.Allowable, view.Percent(float64(c.Ratio)), c.Basis, c.Factor, c.Curve)
	}
	w.Flush()
	for _, c := range d.Components {
		if c.Prior != nil {
			a.printf("  %s includes prior damage %.3e cyclic, %.3e sustained: %s\n", c.Name, float64(c.Prior.Cyclic), float64(c.Prior.Sustained), c.Prior.Source)
		}
	}
	a.printf("governing component: %s at %s of its allowable\n", d.Governing, view.Percent(float64(d.GoverningRatio)))
	a.printf("remaining dives: %s — %s\n", life.Short(), life.Reason)
}

// printImplosion states the implosion hazard with its assumptions.
func (a *app) printImplosion(imp *ledger.Implosion, where string) {
	a.printf("\nimplosion hazard %s (%.2f MPa; order of magnitude, for planning safety distances):\n", where, imp.PressureMPa)
	a.printf("  internal volume %.3f m³; energy released about %.3g MJ (p·V %.3g MJ + water %.3g MJ), about %.3g kg TNT; collapse in about %.2g ms\n",
		imp.InternalVolumeM3, imp.EnergyMJ, imp.PVEnergyMJ, imp.WaterElasticMJ, imp.TNTEquivalentKg, imp.CollapseTimeMS)
	for _, x := range imp.Assumptions {
		a.printf("  - %s\n", x)
	}
}
