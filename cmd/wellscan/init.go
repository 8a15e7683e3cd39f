package main

import (
	_ "embed"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"
)

//go:embed init_spec.toml
var initSpec []byte

func newInitCommand(a *app) *cobra.Command {
	return &cobra.Command{
		Use:   "init [DIR]",
		Short: "Write an example scan spec (DIR/scan.toml) to start from",
		Long: `Write DIR/scan.toml (DIR defaults to the current directory): a complete,
commented spec of an invented scenario — the H–F stretch at RHF/6-31G* —
that runs in well under a minute. An existing scan.toml is never
overwritten.`,
		Example: `  wellscan init co-stretch
  $EDITOR co-stretch/scan.toml && wellscan plan co-stretch`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := "."
			if len(args) == 1 {
				dir = args[0]
			}
			if err := os.MkdirAll(dir, 0o700); err != nil {
				return err
			}
			path := filepath.Join(dir, "scan.toml")
			f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
			if errors.Is(err, os.ErrExist) {
				return fmt.Errorf("%s already exists; not overwriting it", path)
			}
			if err != nil {
				return err
			}
			if _, err := f.Write(initSpec); err != nil {
				f.Close()
				return err
			}
			if err := f.Close(); err != nil {
				return err
			}
			fmt.Fprintf(a.stdout, "wrote %s\nnext: wellscan plan %s && wellscan run %s\n", path, dir, dir)
			return nil
		},
	}
}
