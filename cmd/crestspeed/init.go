package main

import (
	"crestspeed/internal/atomicfile"
	"fmt"

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
			if err := claimOutputs(app.cfg.Force, path); err != nil {
				return err
			}
			if err := atomicfile.WriteFile(path, []byte(configTemplate)); err != nil {
				return err
			}
			app.con.logf("wrote %s", path)
			return nil
		},
	}
	return cmd
}
