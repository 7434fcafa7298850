package main

import (
	"strings"

	"github.com/spf13/cobra"
)

func newDemoCmd(e *env) *cobra.Command {
	return &cobra.Command{
		Use:     "demo",
		Short:   "Run nlens on its built-in example (no files needed)",
		Long:    "demo runs the model on a built-in template so you can see what nlens prints.",
		Example: "  nlens demo",
		Args:    cobra.NoArgs,
		RunE: func(_ *cobra.Command, _ []string) error {
			return wrapRun(func() error {
				return runSimulate(e, simulateOptions{
					site:    "temperate-deciduous-forest",
					changes: []string{"nitrification=x3", "leaching-nitrate=x3"},
					years:   2, yearsSet: true,
					format: "table",
				})
			})
		},
	}
}

var _ = strings.TrimSpace
