package analysis

import (
	"context"
	"errors"
	"io"
	"math"

	"crestspeed/ingest"
	"crestspeed/speed"
)

// maxVelocityBytes bounds the memory of the surface-velocity windows.
const maxVelocityBytes = 1.5 * (1 << 30)

// breakingIndexPass streams the record through speed.SurfaceVelocity and
// sets SurfaceSpeed and BreakingIndex on every row whose frame and position
// the velocity estimate covers.
func (rec *Record) breakingIndexPass(ctx context.Context, src Source, mean []float32, opt Options) error {
	meta := rec.Meta
	g := meta.Grid
	nx, ny := g.Nx(), g.Ny()
	dt := rec.FrameInterval
	winS := opt.VelocityWindowS
	if winS == 0 {
		winS = 3 * rec.SeaState.Tp
	}
	nw := int(math.Round(winS/dt/2)) * 2
	capFrames := int(maxVelocityBytes/(2*16*float64(nx*ny))) / 2 * 2
	nw = max(min(nw, capFrames), 8)
	rec.VelocityWindowFrames = nw
	byFrame := map[int][]int{}
	for i, r := range rec.Rows {
		byFrame[r.Frame] = append(byFrame[r.Frame], i)
	}
	sv, err := speed.NewSurfaceVelocity(nx, ny, g.Dx(), g.Dy(), dt, speed.SurfaceVelocityOptions{
		Window: nw, Theta: rec.Refs.Theta, DepthM: rec.Refs.DepthM, Current: rec.Refs.Current, Workers: opt.Workers,
	}, func(frame int, u []float32, ok bool) {
		if ok {
			rec.setBreakingIndex(u, byFrame[frame])
		}
	})
	if err != nil {
		return err
	}
	src.Rewind()
	var f ingest.Frame
	fc := rec.frames()
	next := 0
	buf := make([]float32, nx*ny)
	for {
		if err := ctx.Err(); err != nil {
			return err
		}
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return err
		}
		for n := fc.number(f.Time); next < n; next++ {
			sv.Push(nil) // dropped or skipped frame
		}
		for i, v := range f.Eta {
			buf[i] = v - mean[i]
		}
		sv.Push(buf)
		next++
		if opt.Progress != nil {
			opt.Progress("breaking index", f.Index+1, len(meta.Times))
		}
	}
	sv.Close()
	return nil
}

// setBreakingIndex evaluates the surface speed field u of one frame at the
// tips of the given rows and sets u_s and B_x on them.
func (rec *Record) setBreakingIndex(u []float32, rows []int) {
	g := rec.Meta.Grid
	nx, ny := g.Nx(), g.Ny()
	for _, i := range rows {
		r := &rec.Rows[i]
		us := bilinearAt(u, nx, ny, (r.X-g.X[0])/g.Dx(), (r.Y-g.Y[0])/g.Dy())
		if math.IsNaN(us) {
			continue
		}
		r.SurfaceSpeed = us
		// crest speed normal to the crest: the crest line makes the angle
		// atan(ds/dn) with the lines across θ0
		cn := r.CrestSpeed * math.Cos(math.Atan(r.SlopeSN))
		r.BreakingIndex = us / cn
		if !math.IsNaN(r.BreakingIndex) {
			rec.RowsWithBx++
		}
	}
}

// bilinearAt interpolates a row-major field at fractional cell
// coordinates; NaN outside the grid or next to an unknown cell.
func bilinearAt(u []float32, nx, ny int, fx, fy float64) float64 {
	if fx < 0 || fy < 0 || fx > float64(nx-1) || fy > float64(ny-1) {
		return math.NaN()
	}
	ix, iy := min(int(fx), nx-2), min(int(fy), ny-2)
	wx, wy := fx-float64(ix), fy-float64(iy)
	i := iy*nx + ix
	return (1-wy)*((1-wx)*float64(u[i])+wx*float64(u[i+1])) + wy*((1-wx)*float64(u[i+nx])+wx*float64(u[i+nx+1]))
}
