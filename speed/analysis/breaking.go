package analysis

import (
	"cmp"
	"context"
	"errors"
	"io"
	"math"
	"slices"
	"sort"

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
	band := speed.VelocityBand(rec.SeaState, rec.Refs.DepthM, opt.VelocityBandLoss)
	dec := speed.Decimation(dt, band)
	nw := int(math.Round(winS/dt/2)) * 2
	capFrames := dec * int(maxVelocityBytes/(2*16*float64(nx*ny))) / 2 * 2
	nw = max(min(nw, capFrames), 8)
	byFrame := rec.rowsByFrame()
	sv, err := speed.NewSurfaceVelocity(nx, ny, g.Dx(), g.Dy(), dt, speed.SurfaceVelocityOptions{
		Window: nw, Theta: rec.Refs.Theta, DepthM: rec.Refs.DepthM, Current: rec.Refs.Current, Workers: opt.Workers,
		BandHz: band,
	}, func(frame int, v *speed.VelocityFrame, ok bool) {
		if ok {
			rec.setBreakingIndex(v, byFrame.of(frame, rec.Rows))
		}
	})
	if err != nil {
		return err
	}
	rec.VelocityWindowFrames, rec.VelocityBandHz, rec.VelocityDecimation = sv.WindowFrames(), band, dec
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
func (rec *Record) setBreakingIndex(v *speed.VelocityFrame, rows []int32) {
	g := rec.Meta.Grid
	for _, i := range rows {
		r := &rec.Rows[i]
		us := v.At((r.X-g.X[0])/g.Dx(), (r.Y-g.Y[0])/g.Dy())
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

// frameIndex lists the crest rows in order of frame (rows of one frame in
// row order): four bytes a row, where a map from frame to a slice of row
// numbers took a slice and a map entry per frame besides.
type frameIndex []int32

// rowsByFrame indexes rec.Rows by frame.
func (rec *Record) rowsByFrame() frameIndex {
	idx := make(frameIndex, len(rec.Rows))
	for i := range idx {
		idx[i] = int32(i)
	}
	slices.SortStableFunc(idx, func(a, b int32) int { return cmp.Compare(rec.Rows[a].Frame, rec.Rows[b].Frame) })
	return idx
}

// of returns the numbers of the rows of the given frame.
func (idx frameIndex) of(frame int, rows []speed.CrestRow) []int32 {
	lo := sort.Search(len(idx), func(k int) bool { return rows[idx[k]].Frame >= frame })
	hi := lo
	for hi < len(idx) && rows[idx[hi]].Frame == frame {
		hi++
	}
	return idx[lo:hi]
}
