package main

import (
	"fmt"
	"os"

	"github.com/spf13/cobra"
)

func newInitCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "init [FILE]",
		Short: "Write a commented configuration template covering every setting",
		Long: `Write a commented YAML configuration template covering every setting, with
its default, to FILE (default crestspeed.yaml; "-" for standard output).`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			path := "crestspeed.yaml"
			if len(args) == 1 {
				path = args[0]
			}
			if path == "-" {
				_, err := fmt.Fprint(app.con.stdout, configTemplate)
				return err
			}
			if err := refuseOverwrite(path, app.cfg.Force); err != nil {
				return err
			}
			if err := writeFileAtomic(path, []byte(configTemplate)); err != nil {
				return err
			}
			app.con.logf("wrote %s", path)
			return nil
		},
	}
	return cmd
}

// refuseOverwrite is the rule for finished outputs: they are replaced only
// with --force.
func refuseOverwrite(path string, force bool) error {
	if _, err := os.Stat(path); err == nil && !force {
		return usageError{fmt.Errorf("%s already exists; use --force to replace it", path)}
	}
	return nil
}
