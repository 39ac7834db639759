package main

import (
	"errors"

	"github.com/spf13/cobra"
)

func (a *app) demoCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "demo",
		Short: "Set up an invented fleet, generate a season of dives, log them and show the fleet",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return errors.New("demo: not built yet")
		},
	}
}
