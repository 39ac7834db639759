package main

import (
	"strings"
	"time"

	"github.com/spf13/cobra"

	"hulltally/ledger"
)

// statusRecorded is one hull's result of `status record`.
type statusRecorded struct {
	Serial string `json:"serial"`
	// Previous is the last status on record (empty when none was).
	Previous string `json:"previous"`
	Status   string `json:"status"`
	// Recorded: the status had changed and was appended to the history.
	Recorded bool            `json:"recorded"`
	Reasons  []ledger.Reason `json:"reasons"`
}

func (a *app) statusCmd() *cobra.Command {
	st := &cobra.Command{
		Use:     "status",
		Short:   "The hulls' status history: record the current status (for a scheduler)",
		Example: "  hulltally status record\n  hulltally status record EX-C4000-01 --json",
	}
	rec := &cobra.Command{
		Use:   "record [SERIAL]",
		Short: "Append the current status of one or every hull to its history when it changed (an inspection falling due, say)",
		Long: "Every write (a dive, an inspection, a proof test, a decision, a void) notes the hull's status when it changed; " +
			"reads never write. A status that changes with time alone — an inspection or proof test falling due — is noted by " +
			"this command: run it from a scheduler (daily, say) to keep the history complete.",
		Example:           "  hulltally status record\n  hulltally status record EX-C4000-01\n  # crontab: 0 6 * * * hulltally status record --json",
		Args:              cobra.MaximumNArgs(1),
		ValidArgsFunction: a.completeSerialArg,
		RunE: func(cmd *cobra.Command, args []string) error {
			ctx := cmd.Context()
			l, err := a.open(ctx)
			if err != nil {
				return err
			}
			defer l.Close()
			var serials []string
			if len(args) == 1 {
				serials = args
			} else {
				hs, err := l.Hulls(ctx)
				if err != nil {
					return err
				}
				for _, h := range hs {
					serials = append(serials, h.Serial)
				}
			}
			out := []statusRecorded{}
			for _, s := range serials {
				h, err := l.Hull(ctx, s)
				if err != nil {
					return &ledger.InputError{Err: err}
				}
				hist, err := l.StatusHistory(ctx, h)
				if err != nil {
					return err
				}
				prev := ""
				if n := len(hist); n > 0 {
					prev = hist[n-1].Status
				}
				// FitnessOf appends the status when it differs from the
				// last one on record.
				f, err := l.FitnessOf(ctx, h, time.Now().UTC())
				if err != nil {
					return err
				}
				after, err := l.StatusHistory(ctx, h)
				if err != nil {
					return err
				}
				out = append(out, statusRecorded{Serial: s, Previous: prev, Status: f.Status, Recorded: len(after) > len(hist), Reasons: f.Reasons})
			}
			if a.asJSON {
				return a.printJSON(map[string]any{"hulls": out})
			}
			for _, r := range out {
				if r.Recorded {
					was := r.Previous
					if was == "" {
						was = "none on record"
					}
					a.printf("%s: %s (was %s): recorded\n", r.Serial, strings.ToUpper(r.Status), was)
				} else {
					a.printf("%s: %s, unchanged\n", r.Serial, strings.ToUpper(r.Status))
				}
			}
			return nil
		},
	}
	st.AddCommand(rec)
	return st
}
