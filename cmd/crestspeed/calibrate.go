package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/calib"
)

// CalibrateConfig configures "crestspeed calibrate": the chessboard views
// and the board (the verb's inputs), the calibration settings of the calib
// package, and whether the quality figures are written.
type CalibrateConfig struct {
	Left          string  `yaml:"left"`     // glob of the left-camera chessboard images
	Right         string  `yaml:"right"`    // glob of the right-camera chessboard images
	Pattern       string  `yaml:"pattern"`  // inner corners, COLSxROWS
	SquareM       float64 `yaml:"square_m"` // side of one square, metres (no default)
	Figures       bool    `yaml:"figures"`  // write the worst-view picture and the residual plot
	calib.Options `yaml:",inline"`
}

// defaultCalibrateConfig holds the calib package's defaults, a 9×6 board
// and the figures on.
func defaultCalibrateConfig() CalibrateConfig {
	return CalibrateConfig{Pattern: "9x6", Figures: true, Options: calib.DefaultOptions()}
}

func init() { extraCommands = append(extraCommands, newCalibrateCmd) }

func newCalibrateCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "calibrate --left GLOB --right GLOB --pattern 9x6 --square M --out rig.yaml",
		Short: "Calibrate the stereo rig from chessboard image pairs",
		Long: `Calibrate the stereo rig from pairs of chessboard pictures taken by both
cameras at the same instants, and write the rig file (YAML: intrinsics,
distortion, pose of the right camera, and the calibration's quality).

Pairs are matched by the number in the file names (left_07.png with
right_07.png) when every name has one, otherwise by sorted order. Pairs in
which the whole board is not found in both images are skipped and listed.
Views whose reprojection error exceeds drop_factor times the median are
dropped and the calibration repeated.

Quality figures are printed and stored in the rig file: RMS reprojection error
overall and per view, rectified epipolar error (mean and 95th percentile: how
many rows apart the same corner lands in the two rectified images) and the
baseline. Beside the rig file go OUT-worst-view.png (the worst view's corners
and residuals) and OUT-residuals.png (residuals and per-view errors).`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) > 0 {
				return usageError{fmt.Errorf("calibrate takes no file arguments but got %d (%s ...); quote the --left and --right patterns so that the shell does not expand them", len(args), args[0])}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			return Calibrate(cmd.Context(), app.con, *app.cfg)
		},
	}
	f := cmd.Flags()
	f.String("left", "", "glob of the left-camera images (quote it), e.g. \"calib/left_*.png\"")
	f.String("right", "", "glob of the right-camera images (quote it)")
	f.String("pattern", "", "chessboard inner corners, COLSxROWS, e.g. 9x6")
	f.Float64("square", 0, "side of one chessboard square (m)")
	f.String("detector", "", "corner detector: classic or sb")
	f.Float64("drop-factor", 0, "drop views whose error exceeds this times the median (0 keeps all)")
	f.Int("min-views", 0, "fewest good views accepted")
	f.Bool("fix-k3", false, "hold the r⁶ distortion coefficient k3 at zero")
	f.Bool("figures", true, "write the worst-view picture and the residual plot")
	app.bindFlag(cmd, "left", "calibrate.left")
	app.bindFlag(cmd, "right", "calibrate.right")
	app.bindFlag(cmd, "pattern", "calibrate.pattern")
	app.bindFlag(cmd, "square", "calibrate.square_m")
	app.bindFlag(cmd, "detector", "calibrate.detector")
	app.bindFlag(cmd, "drop-factor", "calibrate.drop_factor")
	app.bindFlag(cmd, "min-views", "calibrate.min_views")
	app.bindFlag(cmd, "fix-k3", "calibrate.fix_k3")
	app.bindFlag(cmd, "figures", "calibrate.figures")
	return cmd
}

// calibrateOutputs names the files written beside the rig file.
func calibrateOutputs(out string) (worst, residuals string) {
	stem := strings.TrimSuffix(out, filepath.Ext(out))
	return stem + "-worst-view.png", stem + "-residuals.png"
}

// Calibrate calibrates the stereo rig from the chessboard pairs of
// cfg.Calibrate and writes the rig file cfg.Out with its quality figures.
func Calibrate(ctx context.Context, con *console, c Config) error {
	cfg := c.Calibrate
	out := c.Out
	if out == "" {
		return usageError{fmt.Errorf("give the rig file to write with --out, like --out rig.yaml")}
	}
	if ext := strings.ToLower(filepath.Ext(out)); ext != ".yaml" && ext != ".yml" {
		return usageError{fmt.Errorf("rig file %s should end in .yaml", out)}
	}
	cols, rows, err := calib.ParsePattern(cfg.Pattern)
	if err != nil {
		return usageError{fmt.Errorf("--pattern: %v", err)}
	}
	if cfg.SquareM == 0 {
		return usageError{fmt.Errorf("give the side of one chessboard square in metres with --square (calibrate.square_m)")}
	}
	opt := cfg.Options
	opt.Pattern = calib.Pattern{Cols: cols, Rows: rows, SquareM: cfg.SquareM}
	opt.Workers = c.Workers
	if err := opt.Validate(); err != nil {
		return usageError{err}
	}
	worstPath, residualPath := calibrateOutputs(out)
	outputs := []string{out}
	if cfg.Figures {
		outputs = append(outputs, worstPath, residualPath)
	}
	if err := claimOutputs(c.Force, outputs...); err != nil {
		return err
	}
	pairs, err := calib.PairGlobs(cfg.Left, cfg.Right)
	if err != nil {
		return usageError{err}
	}
	// The rig file says it was made when its newest image was (or at
	// SOURCE_DATE_EPOCH), so the same images give the same bytes.
	epoch, haveEpoch, err := sourceDateEpoch()
	if err != nil {
		return err
	}
	if haveEpoch {
		opt.Created = epoch
	} else {
		opt.Created = newestModTime(pairs)
	}
	t0 := time.Now()
	con.logf("calibrate: %d image pairs, %s chessboard of %g m squares", len(pairs), opt.Pattern, opt.Pattern.SquareM)
	pr := con.newProgress("corners", len(pairs))
	opt.Progress = pr.set
	res, err := calib.Calibrate(ctx, pairs, opt)
	pr.done()
	if err != nil {
		return err
	}
	rig, q := res.Rig, res.Rig.Quality
	for _, v := range q.Views {
		switch v.Status {
		case calib.ViewSkipped:
			con.logf("calibrate: skipped pair %s (%s, %s): %s", v.Name, v.Left, v.Right, v.Reason)
		case calib.ViewDropped:
			con.logf("calibrate: dropped pair %s: %s", v.Name, v.Reason)
		}
	}
	for _, v := range q.Views {
		if v.Status == calib.ViewUsed {
			con.logf("calibrate: pair %-6s RMS left %.3f px, right %.3f px, epipolar %.3f px", v.Name, v.RMSLeftPx, v.RMSRightPx, v.EpiMeanPx)
		}
	}
	con.logf("calibrate: %d of %d pairs used in %d round(s); RMS reprojection error %.3f px (left %.3f, right %.3f; cameras alone %.3f, %.3f)",
		q.ViewsUsed, len(q.Views), res.Rounds, q.RMSPx, q.LeftRMSPx, q.RightRMSPx, res.LeftAloneRMSPx, res.RightAloneRMSPx)
	con.logf("calibrate: rectified epipolar error mean %.3f px, 95th percentile %.3f px; baseline %.4f m; focal length %.1f / %.1f px",
		q.EpiMeanPx, q.EpiP95Px, rig.Baseline(), rig.Left.Fx, rig.Right.Fx)
	if err := rig.Save(out); err != nil {
		return err
	}
	if cfg.Figures {
		if err := res.WriteWorstViewPNG(worstPath); err != nil {
			return err
		}
		if err := res.WriteResidualPlot(residualPath); err != nil {
			return err
		}
		con.logf("calibrate: wrote %s, %s and %s in %s", out, worstPath, residualPath, elapsed(t0))
	} else {
		con.logf("calibrate: wrote %s in %s", out, elapsed(t0))
	}
	return nil
}

// newestModTime is the modification time of the newest image of the
// pairs (zero when none can be read).
func newestModTime(pairs []calib.Pair) time.Time {
	var newest time.Time
	for _, p := range pairs {
		for _, f := range []string{p.Left, p.Right} {
			if st, err := os.Stat(f); err == nil && st.ModTime().After(newest) {
				newest = st.ModTime()
			}
		}
	}
	return newest
}
