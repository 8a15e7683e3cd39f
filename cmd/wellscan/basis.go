package main

import (
	"fmt"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"wellscan/runner/hf/basis"
)

func newBasisCommand(a *app) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "basis",
		Short: "List and show the built-in basis-set library",
	}
	cmd.AddCommand(&cobra.Command{
		Use:     "list",
		Short:   "List the built-in basis sets",
		Example: "  wellscan basis list",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			tw := tabwriter.NewWriter(a.stdout, 2, 4, 2, ' ', 0)
			fmt.Fprintln(tw, "NAME\tELEMENTS\tD AND F SHELLS\tDESCRIPTION")
			for _, in := range basis.List() {
				fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", in.Name, in.Coverage, in.Convention, in.Description)
			}
			return tw.Flush()
		},
	})
	cmd.AddCommand(&cobra.Command{
		Use:   "show NAME [ELEMENT...]",
		Short: "Print a basis set (or some of its elements) in wellscan's basis format, numbers as plain decimals",
		Example: `  wellscan basis show 6-31G* O H
  wellscan basis show cc-pvdz > my-cc-pvdz.basis   # edit, then --basis-file my-cc-pvdz.basis`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			set, err := basis.Lookup(args[0])
			if err != nil {
				return err
			}
			return set.WritePlain(a.stdout, args[1:]...)
		},
	})
	return cmd
}
