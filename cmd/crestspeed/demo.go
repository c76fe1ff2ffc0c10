package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"
)

func newDemoCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Make a synthetic deployment with known truth and run the chain on it",
		Long: `Make the built-in synthetic deployment (an invented pier site, a directional
JONSWAP sea with known truth) in the demo folder, run the chain on it, and
print what was measured next to the truth.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := app.cfg.Demo.Dir
			if app.cfg.Out != "" {
				dir = app.cfg.Out
			}
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return fmt.Errorf("cannot create demo folder %s: %v", dir, err)
			}
			maps := filepath.Join(dir, "elevation.nc")
			if app.cfg.Force {
				os.Remove(maps)
			}
			truth, err := app.synthesize(cmd, app.cfg.Synthesize, maps)
			if err != nil {
				return err
			}
			return app.demoChain(cmd, dir, maps, truth)
		},
	}
	return cmd
}
