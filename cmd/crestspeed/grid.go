package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"crestspeed/ingest"
	"crestspeed/internal/workpool"
	"crestspeed/surface"
)

// GridConfig configures "crestspeed grid": the point files and their time
// base (ingest.PointSpec), how they are gridded (surface.PointGridOptions),
// and the output's compression.
type GridConfig struct {
	ingest.PointSpec         `yaml:",inline"`
	surface.PointGridOptions `yaml:",inline"`
	Deflate                  int `yaml:"deflate"`
}

func defaultGridConfig() GridConfig {
	return GridConfig{PointSpec: ingest.DefaultPointSpec(), PointGridOptions: surface.DefaultPointGridOptions(), Deflate: 4}
}

func init() { extraCommands = append(extraCommands, newGridCmd) }

func newGridCmd(app *App) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "grid --points 'GLOB' [--timestamps FILE | --fps F] [--spacing M] --out maps.nc",
		Short: "Grid per-frame point clouds (PLY or XYZ) into elevation maps",
		Long: `Turn a record of point clouds reconstructed elsewhere — one PLY (ASCII or
binary) or XYZ/CSV text file per frame — into an elevation-map NetCDF file
that "crestspeed track" reads, with the number of points per cell
(point_count) beside each elevation.

Times come from a timestamps file (columns frame, time_s and/or utc, file),
from numbers in the file names, or from --fps. Points are taken to be in a
world frame with z up from the mean water level; when the mean plane
fitted to a sample of frames is tilted or offset from z = 0 they are moved
into that plane's frame first (grid.plane). A cell's elevation is the mean
of its points when it holds at least grid.min_points of them, NaN
elsewhere. The spacing and region are automatic unless given: cells
holding on average twice min_points points, over the largest rectangle
supported in most sampled frames. Unreadable or malformed files are
skipped, counted and named.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			cfg := *app.cfg
			if r, _ := cmd.Flags().GetString("region"); r != "" {
				if err := parseRegion(r, &cfg.Grid.PointGridOptions); err != nil {
					return usageError{err}
				}
			}
			return Grid(cmd.Context(), app.con, cfg)
		},
	}
	f := cmd.Flags()
	f.String("points", "", "glob of the point files, quoted, e.g. \"clouds/frame_*.ply\"")
	f.String("timestamps", "", "timestamps file (CSV with frame, time_s and/or utc, file)")
	f.Float64("fps", 0, "frame rate (Hz) for names that carry bare frame numbers")
	f.Float64("spacing", 0, "cell size (m); 0 = automatic")
	f.String("region", "", "cell centres x0,x1,y0,y1 (m); default: automatic")
	f.String("start", "", "UTC instant of time 0 (ISO 8601), for the output's time units")
	app.bindFlag(cmd, "points", "grid.points")
	app.bindFlag(cmd, "timestamps", "grid.timestamps")
	app.bindFlag(cmd, "fps", "grid.fps")
	app.bindFlag(cmd, "spacing", "grid.spacing_m")
	app.bindFlag(cmd, "start", "grid.start_utc")
	return cmd
}

// parseRegion reads "x0,x1,y0,y1" into the grid options.
func parseRegion(s string, o *surface.PointGridOptions) error {
	parts := strings.Split(s, ",")
	if len(parts) != 4 {
		return fmt.Errorf("--region %q must be four numbers x0,x1,y0,y1 (metres)", s)
	}
	v := make([]float64, 4)
	for i, p := range parts {
		if _, err := fmt.Sscan(strings.TrimSpace(p), &v[i]); err != nil {
			return fmt.Errorf("--region %q: %q is not a number", s, p)
		}
	}
	o.X0M, o.X1M, o.Y0M, o.Y1M = &v[0], &v[1], &v[2], &v[3]
	return nil
}

// gridded is one frame's maps, produced on a worker.
type gridded struct {
	eta    []float32
	counts []int32
	stats  surface.PointBinStats
}

// Grid grids the point clouds of cfg.Grid into the elevation-map file
// cfg.Out.
func Grid(ctx context.Context, con *console, cfg Config) error {
	gc, out := cfg.Grid, cfg.Out
	switch {
	case out == "":
		return usageError{fmt.Errorf("give the elevation-map file to write with --out, like --out maps.nc")}
	case strings.ToLower(filepath.Ext(out)) != ".nc":
		return usageError{fmt.Errorf("elevation-map file %s should end in .nc", out)}
	case gc.Glob == "" && gc.TimestampsFile == "":
		return usageError{fmt.Errorf("give the point files with --points 'GLOB' (grid.points) or a timestamps file")}
	case gc.Deflate < 0 || gc.Deflate > 9:
		return usageError{fmt.Errorf("grid.deflate %d is outside 0–9", gc.Deflate)}
	}
	if err := gc.PointGridOptions.Validate(); err != nil {
		return usageError{fmt.Errorf("grid settings: %w", err)}
	}
	if err := cfg.Site.check(); err != nil {
		return usageError{err}
	}
	src, err := ingest.OpenPoints(gc.PointSpec)
	if err != nil {
		return usageError{err}
	}
	defer src.Close()
	if err := claimOutputs(cfg.Force, out); err != nil {
		return err
	}
	t0 := time.Now()
	con.logf("grid: %d point files; %s", src.Len(), src.TimeRule())
	pg, err := settlePoints(gc)
	if err != nil {
		return err
	}
	g := pg.Grid
	con.logf("grid: %d × %d cells: %s", g.Nx(), g.Ny(), pg.Note)
	units, originNote := ingest.DefaultTimeUnits, "none (times count from the first frame)"
	if o, ok := src.Origin(); ok {
		units, originNote = "seconds since "+o.UTC.UTC().Format("2006-01-02T15:04:05.999999999Z"), o.From
	}
	w, err := ingest.CreateElevation(out, g, ingest.WriteOptions{
		Deflate: gc.Deflate, TimeUnits: units, WithPointCounts: true,
		Title:    "Sea-surface elevation maps gridded from point clouds",
		Attrs:    map[string]string{"site": cfg.Site.Name, "gridding": pg.Note, "time_base": src.TimeRule(), "time_origin": originNote},
		Platform: cfg.Site.Platform, Georef: cfg.Site.georef(),
	})
	if err != nil {
		return err
	}
	frames, stats, err := gridFrames(ctx, con, src, pg, w, cfg.Workers)
	if err != nil {
		w.Abort()
		return err
	}
	if frames == 0 {
		w.Abort()
		return fmt.Errorf("none of the %d point files could be gridded (%v)", src.Len(), src.Skipped())
	}
	if err := w.Commit(); err != nil {
		return err
	}
	for _, it := range src.SkippedFiles().Items {
		con.logf("grid: skipped %s: %s %s", strings.Join(it.Files, ", "), it.Reason, it.Detail)
	}
	con.logf("grid: %d maps; %d points, %.1f %% in the grid, %d beyond max_abs_elevation_m; %.0f %% of cells with elevations on average; wrote %s in %s",
		frames, stats.Points, 100*float64(stats.Gridded)/math.Max(1, float64(stats.Points)), stats.Implausible,
		100*float64(stats.Cells)/float64(frames*g.Nx()*g.Ny()), out, elapsed(t0))
	return nil
}

// settlePoints reads a sample of frames spread over the record (through a
// source of its own, so that the record's skips are counted once, by the
// gridding pass) and settles the frame and grid from it.
func settlePoints(gc GridConfig) (*surface.PointGrid, error) {
	src, err := ingest.OpenPoints(gc.PointSpec)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	n := src.Len()
	k := min(gc.SampleFrames, n)
	var sample [][]ingest.Point
	var f ingest.PointFrame
	last := -1
	for i := 0; i < k; i++ {
		target := int(math.Round(float64(i) * float64(n-1) / math.Max(1, float64(k-1))))
		if target <= last {
			continue
		}
		src.Seek(target)
		if err := src.Next(&f); errors.Is(err, io.EOF) {
			break
		} else if err != nil {
			return nil, err
		}
		last = f.Index
		sample = append(sample, append([]ingest.Point(nil), f.Points...))
	}
	pg, err := surface.SettlePointGrid(sample, gc.PointGridOptions)
	if err != nil {
		return nil, fmt.Errorf("the grid cannot be settled from %d sampled point files: %w", len(sample), err)
	}
	return pg, nil
}

// gridFrames reads every frame, bins it on the workers and writes the maps
// in time order.
func gridFrames(ctx context.Context, con *console, src *ingest.PointSource, pg *surface.PointGrid, w *ingest.ElevationWriter, workers int) (int, surface.PointBinStats, error) {
	cells := pg.Grid.Nx() * pg.Grid.Ny()
	sums := make([][]float64, workers)
	for i := range sums {
		sums[i] = make([]float64, cells)
	}
	free := make(chan *ingest.PointFrame, 2*workers)
	for i := 0; i < cap(free); i++ {
		free <- &ingest.PointFrame{}
	}
	var total surface.PointBinStats
	frames := 0
	pr := con.newProgress("grid", src.Len())
	defer pr.done()
	pool := workpool.Pool[*ingest.PointFrame, gridded]{
		Workers: workers, InFlight: 2 * workers,
		Next: func() (*ingest.PointFrame, error) {
			f := <-free
			if err := src.Next(f); err != nil {
				free <- f
				return nil, err
			}
			return f, nil
		},
		Work: func(wk int, f *ingest.PointFrame) (gridded, error) {
			g := gridded{eta: make([]float32, cells), counts: make([]int32, cells)}
			g.stats = pg.Bin(f.Points, g.eta, g.counts, sums[wk])
			return g, nil
		},
		Sink: func(f *ingest.PointFrame, g gridded) error {
			defer func() { free <- f }()
			if err := w.WriteFrame(f.Time, g.eta, nil); err != nil {
				return err
			}
			if err := w.WriteCounts(g.counts); err != nil {
				return err
			}
			frames++
			total.Points += g.stats.Points
			total.Gridded += g.stats.Gridded
			total.OutOfGrid += g.stats.OutOfGrid
			total.Implausible += g.stats.Implausible
			total.Cells += g.stats.Cells
			pr.set(f.Index+1, src.Len())
			return nil
		},
		Release: func(f *ingest.PointFrame, _ gridded) { free <- f },
	}
	err := pool.Run(ctx)
	return frames, total, err
}
