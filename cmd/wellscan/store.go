package main

import (
	"fmt"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
)

type storeOptions struct{ force bool }

func (o *storeOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVar(&o.force, "force", false, "replace the store even when it opens and passes its checks")
}

func newStoreCommand(a *app) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "store",
		Short: "Check a scan's store, or recover a damaged one",
		Long: `The store (DIR/wellscan.db) holds every point's state and energy. A
disk that filled up, a truncated copy or a damaged page makes it unreadable;
these commands check it and recover:

  wellscan store check DIR     bbolt's own page check and each point record's checksum
  wellscan store restore DIR   put back DIR/wellscan.db.bak (written after each finished round)
  wellscan store rebuild DIR   build a new store from the points' result files

restore and rebuild keep the damaged file as wellscan.db.damaged-<time> and
refuse to replace a store that reads fine (unless --force).`,
	}
	cmd.AddCommand(newStoreCheckCommand(a), newStoreRestoreCommand(a), newStoreRebuildCommand(a))
	return cmd
}

func newStoreCheckCommand(a *app) *cobra.Command {
	return &cobra.Command{
		Use:     "check DIR",
		Short:   "Check the store of the scan in DIR (pages and record checksums)",
		Example: "  wellscan store check co-stretch",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			c, err := runner.CheckStore(args[0])
			if err != nil {
				return err
			}
			fmt.Fprintf(a.stdout, "store %s: %d point records\n", c.Path, c.Points)
			for _, p := range c.Pages {
				fmt.Fprintf(a.stdout, "page check: %s\n", p)
			}
			for _, k := range c.Damaged {
				fmt.Fprintf(a.stdout, "checksum mismatch: point %s (the next run takes its result file instead, or computes it again)\n", k)
			}
			if !c.OK() {
				return fmt.Errorf("store: %s failed %d page check(s) and %d record checksum(s)", c.Path, len(c.Pages), len(c.Damaged))
			}
			fmt.Fprintln(a.stdout, "ok: every page and every record checksum passes")
			return nil
		},
	}
}

func newStoreRestoreCommand(a *app) *cobra.Command {
	var o storeOptions
	cmd := &cobra.Command{
		Use:     "restore DIR",
		Short:   "Replace a damaged store by its backup wellscan.db.bak",
		Example: "  wellscan store restore co-stretch && wellscan run co-stretch",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			kept, err := runner.RestoreBackup(args[0], o.force, time.Now())
			if err != nil {
				return err
			}
			fmt.Fprintf(a.stdout, "restored %s from %s\n", filepath.Join(args[0], runner.DBFile), runner.DBFile+".bak")
			if kept != "" {
				fmt.Fprintf(a.stdout, "the damaged store is kept as %s\n", filepath.Join(args[0], kept))
			}
			fmt.Fprintf(a.stdout, "points finished after the backup come back from their result files on the next 'wellscan run %s'\n", args[0])
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

func newStoreRebuildCommand(a *app) *cobra.Command {
	var o storeOptions
	cmd := &cobra.Command{
		Use:     "rebuild DIR",
		Short:   "Build a new store from the points' result files",
		Example: "  wellscan store rebuild co-stretch && wellscan run co-stretch",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			spec, err := planner.Load(filepath.Join(args[0], "scan.toml"))
			if err != nil {
				return err
			}
			r, err := runner.RebuildStore(args[0], spec, o.force, time.Now())
			if err != nil {
				return err
			}
			fmt.Fprintf(a.stdout, "rebuilt %s from result files: %d done, %d failed points\n", filepath.Join(args[0], runner.DBFile), r.Done, r.Failed)
			if len(r.Skipped) > 0 {
				fmt.Fprintf(a.stdout, "%d point directories had no usable result file (the next run computes the grid's points again): %v\n", len(r.Skipped), r.Skipped)
			}
			if r.Kept != "" {
				fmt.Fprintf(a.stdout, "the damaged store is kept as %s\n", filepath.Join(args[0], r.Kept))
			}
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}
