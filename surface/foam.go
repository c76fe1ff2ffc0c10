package surface

// Foam (whitecap) detection.
//
// Whitecap foam is far brighter than the surrounding sea, whose brightness
// varies slowly across the image with the sky's reflection. A pixel is
// foam when it stands above the local sea background by a relative
// margin, the classic local-threshold segmentation of whitecaps in sea
// images (e.g. Callaghan & White 2009, J. Atmos. Oceanic Technol. 26,
// 383–394, whose automated whitecap extraction also thresholds brightness
// relative to the background). Here:
//
//  1. background B = median of block means: the image is averaged over
//     BlockPx×BlockPx blocks, a median filter of MedianBlocks×MedianBlocks
//     blocks removes foam-sized bright features, and B is interpolated
//     bilinearly back to every pixel;
//  2. hysteresis (Canny 1986, IEEE PAMI 8, 679–698, for the two-threshold
//     scheme): pixels with I ≥ HighRatio·B and I − B ≥ MinContrastDN seed
//     foam; 8-connected regions of I ≥ LowRatio·B and
//     I − B ≥ MinContrastDN/2 that hold a seed are foam;
//  3. the growth mask is opened (OpenPx 3×3 erosions then as many
//     dilations) before the growth, the foam mask closed (ClosePx
//     dilations then erosions) after it (Serra 1982, Image Analysis and
//     Mathematical Morphology), and regions smaller than MinAreaPx are
//     dropped.
//
// Images mostly saturated (at least SaturatedFraction of the pixels at or
// above SaturatedDN) or black (mean below BlackMeanDN) are not analysed:
// they carry no sea background to compare with, and a saturated image
// would otherwise read as all foam.
//
// The foam mask is mapped onto the analysis grid through the 3-D point of
// each rectified left pixel; where the pixel has no disparity, its ray
// is intersected with the mean sea plane z = 0. Each pixel votes for the
// grid cell under it, and a cell is foam when at least CellFraction of its
// votes are foam pixels.

import (
	"crestspeed/internal/selectk"
	"errors"
	"fmt"
	"math"
	"time"

	"gocv.io/x/gocv"
)

// FoamOptions configure foam detection. Start from [DefaultFoamOptions].
type FoamOptions struct {
	// Enabled runs foam detection on every pair and writes the foam mask.
	Enabled bool `yaml:"enabled"`
	// BlockPx is the side of the blocks averaged for the background
	// (default 8 px); MedianBlocks the side, in blocks, of the median
	// filter over them (default 15, odd): 120 px at the defaults, larger
	// than a typical whitecap in a 1280-px image.
	BlockPx, MedianBlocks int `yaml:"-"`
	// HighRatio and LowRatio are the hysteresis thresholds on I/B
	// (defaults 2.5 and 1.8); MinContrastDN the least brightness excess
	// I − B of a seed in grey levels (default 60; half of it for growth),
	// which keeps dark-sea noise from passing the ratio tests.
	HighRatio     float64 `yaml:"high_ratio"`
	LowRatio      float64 `yaml:"low_ratio"`
	MinContrastDN float64 `yaml:"min_contrast_dn"`
	// OpenPx is the radius of the square opening of the growth mask
	// (default 2: a 5×5 square, which removes the thin bright streaks of
	// sky glitter on wave faces); ClosePx the radius of the closing of the
	// foam mask (default 1: 3×3).
	OpenPx, ClosePx int `yaml:"-"`
	// MinAreaPx is the smallest foam region kept (default 30 px).
	MinAreaPx int `yaml:"min_area_px"`
	// SaturatedDN and SaturatedFraction: an image with at least that
	// fraction of pixels at or above that level is skipped as saturated
	// (defaults 250 and 0.5). BlackMeanDN: an image of lower mean grey
	// level is skipped as black (default 5).
	SaturatedDN       int     `yaml:"-"`
	SaturatedFraction float64 `yaml:"-"`
	BlackMeanDN       float64 `yaml:"-"`
	// StereoCheck keeps a foam pixel with a disparity only when its match
	// in the rectified right image also passes the growth thresholds
	// (against the left background): foam is a diffuse reflector, bright
	// from both cameras, while a specular glint of sky light on a wave
	// face is seen by one camera at a time (default true).
	StereoCheck bool `yaml:"stereo_check"`
	// CellFraction is the least share of a cell's pixel votes that must be
	// foam for the cell to be foam (default 0.5).
	CellFraction float64 `yaml:"cell_fraction"`
}

// DefaultFoamOptions returns the default settings (detection disabled).
func DefaultFoamOptions() FoamOptions {
	return FoamOptions{
		BlockPx: 8, MedianBlocks: 15, HighRatio: 2.5, LowRatio: 1.8, MinContrastDN: 60,
		OpenPx: 2, ClosePx: 1, MinAreaPx: 30, StereoCheck: true, SaturatedDN: 250, SaturatedFraction: 0.5, BlackMeanDN: 5, CellFraction: 0.5,
	}
}

// Validate reports the first setting that cannot work.
func (o FoamOptions) Validate() error {
	switch {
	case o.BlockPx < 1 || o.BlockPx > 256:
		return fmt.Errorf("foam background block %d px is outside 1–256", o.BlockPx)
	case o.MedianBlocks < 1 || o.MedianBlocks%2 == 0 || o.MedianBlocks > 255:
		return fmt.Errorf("foam median window of %d blocks must be odd and within 1–255", o.MedianBlocks)
	case !(o.LowRatio > 1) || !(o.HighRatio >= o.LowRatio) || o.HighRatio > 100:
		return fmt.Errorf("foam thresholds must satisfy 1 < low ratio (%g) ≤ high ratio (%g) ≤ 100", o.LowRatio, o.HighRatio)
	case !(o.MinContrastDN >= 0 && o.MinContrastDN < 255):
		return fmt.Errorf("foam minimum contrast %g grey levels is outside [0, 255)", o.MinContrastDN)
	case o.OpenPx < 0 || o.OpenPx > 10 || o.ClosePx < 0 || o.ClosePx > 10:
		return fmt.Errorf("foam opening (%d px) and closing (%d px) radii must be within 0–10", o.OpenPx, o.ClosePx)
	case o.MinAreaPx < 1:
		return fmt.Errorf("foam minimum area %d px must be at least 1", o.MinAreaPx)
	case o.SaturatedDN < 1 || o.SaturatedDN > 255 || !(o.SaturatedFraction > 0 && o.SaturatedFraction <= 1):
		return fmt.Errorf("saturation test (level %d, fraction %g) needs a level in 1–255 and a fraction in (0, 1]", o.SaturatedDN, o.SaturatedFraction)
	case !(o.BlackMeanDN >= 0 && o.BlackMeanDN < 255):
		return fmt.Errorf("black-image level %g is outside [0, 255)", o.BlackMeanDN)
	case !(o.CellFraction > 0 && o.CellFraction <= 1):
		return fmt.Errorf("foam cell fraction %g is outside (0, 1]", o.CellFraction)
	}
	return nil
}

// Reasons an image is not analysed for foam (keys of the skip counts).
var (
	ErrSaturatedImage = errors.New("saturated image")
	ErrBlackImage     = errors.New("black image")
)

// FoamDetector finds foam in 8-bit grey images. It keeps its buffers
// between images and is not safe for concurrent use.
type FoamDetector struct {
	opt        FoamOptions
	blocks     []float32
	med        []float32
	win        []float32
	bg         []float32
	low        []uint8
	tmp        []uint8
	orig       []uint8
	stack      []int32
	label      []int32
	region     []int32
	mask       []uint8 // the last rectified image's mask (Worker.Foam)
	votes      []int32 // per cell: pixels, foam pixels
	detectTime time.Duration
	// Skipped counts the images not analysed, by reason
	// (ErrSaturatedImage.Error(), ErrBlackImage.Error()).
	Skipped map[string]int
}

// NewFoamDetector checks the options and makes a detector.
func NewFoamDetector(opt FoamOptions) (*FoamDetector, error) {
	if err := opt.Validate(); err != nil {
		return nil, fmt.Errorf("surface: %v", err)
	}
	return &FoamDetector{opt: opt, Skipped: map[string]int{}}, nil
}

// DetectTime is the wall time spent in Detect so far.
func (d *FoamDetector) DetectTime() time.Duration { return d.detectTime }

// Detect writes the foam mask of the w×h grey image pix (row-major, stride
// w) into mask (1 foam, 0 not) and returns the number of foam pixels. A
// saturated or black image gives ErrSaturatedImage or ErrBlackImage and an
// all-zero mask.
func (d *FoamDetector) Detect(pix []uint8, w, h int, mask []uint8) (int, error) {
	t0 := time.Now()
	defer func() { d.detectTime += time.Since(t0) }()
	n := w * h
	if w < 1 || h < 1 || len(pix) < n || len(mask) < n {
		return 0, fmt.Errorf("surface: foam detection needs a %d×%d image and mask, got %d and %d values", w, h, len(pix), len(mask))
	}
	mask = mask[:n]
	clear(mask)
	o := d.opt
	var sum int64
	sat := 0
	for _, v := range pix[:n] {
		sum += int64(v)
		if int(v) >= o.SaturatedDN {
			sat++
		}
	}
	if float64(sat) >= o.SaturatedFraction*float64(n) {
		d.Skipped[ErrSaturatedImage.Error()]++
		return 0, ErrSaturatedImage
	}
	if float64(sum)/float64(n) < o.BlackMeanDN {
		d.Skipped[ErrBlackImage.Error()]++
		return 0, ErrBlackImage
	}
	d.background(pix, w, h)

	// Growth mask and seeds (seeds marked 2).
	d.low = resize(d.low, n)
	d.tmp = resize(d.tmp, n)
	low := d.low
	hc, lc := float32(o.MinContrastDN), float32(o.MinContrastDN/2)
	hr, lr := float32(o.HighRatio), float32(o.LowRatio)
	for i, v := range pix[:n] {
		I, B := float32(v), d.bg[i]
		switch {
		case I >= hr*B && I-B >= hc:
			low[i] = 2
		case I >= lr*B && I-B >= lc:
			low[i] = 1
		default:
			low[i] = 0
		}
	}
	// Opening of the growth mask (seeds keep their mark where they
	// survive): OpenPx 3×3 erosions, then as many dilations.
	if o.OpenPx > 0 {
		d.orig = append(d.orig[:0], low...)
		d.repeatMorph(erode3, low, w, h, o.OpenPx)
		d.repeatMorph(dilate3, low, w, h, o.OpenPx)
		for i, v := range low {
			if v != 0 {
				low[i] = d.orig[i]
			}
		}
	}
	d.flood(low, mask, w, h)
	// Closing, then the minimum area.
	d.repeatMorph(dilate3, mask, w, h, o.ClosePx)
	d.repeatMorph(erode3, mask, w, h, o.ClosePx)
	return d.dropSmall(mask, w, h), nil
}

// flood marks in mask every pixel of the growth mask low connected
// (8-connected) to a seed (low value 2): the hysteresis step.
func (d *FoamDetector) flood(low, mask []uint8, w, h int) {
	d.stack = d.stack[:0]
	for i, v := range low {
		if v == 2 {
			mask[i] = 1
			d.stack = append(d.stack, int32(i))
		}
	}
	d.stack = floodFrom(d.stack, low, mask, w, h, nil)
}

// background fills d.bg with the median-of-block-means background.
func (d *FoamDetector) background(pix []uint8, w, h int) {
	b := d.opt.BlockPx
	bw, bh := (w+b-1)/b, (h+b-1)/b
	d.blocks = resize(d.blocks, bw*bh)
	for by := 0; by < bh; by++ {
		for bx := 0; bx < bw; bx++ {
			var s, c int
			for y := by * b; y < min((by+1)*b, h); y++ {
				row := pix[y*w : y*w+w]
				for x := bx * b; x < min((bx+1)*b, w); x++ {
					s += int(row[x])
					c++
				}
			}
			d.blocks[by*bw+bx] = float32(s) / float32(c)
		}
	}
	r := d.opt.MedianBlocks / 2
	d.med = resize(d.med, bw*bh)
	for by := 0; by < bh; by++ {
		for bx := 0; bx < bw; bx++ {
			d.win = d.win[:0]
			for y := max(by-r, 0); y <= min(by+r, bh-1); y++ {
				d.win = append(d.win, d.blocks[y*bw+max(bx-r, 0):y*bw+min(bx+r, bw-1)+1]...)
			}
			d.med[by*bw+bx] = selectk.Kth(d.win, len(d.win)/2)
		}
	}
	// Bilinear interpolation between block centres.
	d.bg = resize(d.bg, w*h)
	for y := 0; y < h; y++ {
		fy := (float64(y)+0.5)/float64(b) - 0.5
		j0 := int(math.Floor(fy))
		ty := float32(fy - float64(j0))
		ja, jb := min(max(j0, 0), bh-1), min(max(j0+1, 0), bh-1)
		for x := 0; x < w; x++ {
			fx := (float64(x)+0.5)/float64(b) - 0.5
			i0 := int(math.Floor(fx))
			tx := float32(fx - float64(i0))
			ia, ib := min(max(i0, 0), bw-1), min(max(i0+1, 0), bw-1)
			top := d.med[ja*bw+ia]*(1-tx) + d.med[ja*bw+ib]*tx
			bot := d.med[jb*bw+ia]*(1-tx) + d.med[jb*bw+ib]*tx
			d.bg[y*w+x] = top*(1-ty) + bot*ty
		}
	}
}

// erode3 writes into dst the 3×3 erosion of src (non-zero = set), keeping
// src's value where the result is set; outside the image counts as set.
func erode3(src, dst []uint8, w, h int) {
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			v := src[i]
			for dy := -1; dy <= 1 && v != 0; dy++ {
				yy := y + dy
				if yy < 0 || yy >= h {
					continue
				}
				for dx := -1; dx <= 1; dx++ {
					xx := x + dx
					if xx >= 0 && xx < w && src[yy*w+xx] == 0 {
						v = 0
						break
					}
				}
			}
			dst[i] = v
		}
	}
}

// dilate3 writes into dst the 3×3 dilation of src as 0/1.
func dilate3(src, dst []uint8, w, h int) {
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var v uint8
			for dy := -1; dy <= 1 && v == 0; dy++ {
				yy := y + dy
				if yy < 0 || yy >= h {
					continue
				}
				for dx := -1; dx <= 1; dx++ {
					xx := x + dx
					if xx >= 0 && xx < w && src[yy*w+xx] != 0 {
						v = 1
						break
					}
				}
			}
			dst[y*w+x] = v
		}
	}
}

// repeatMorph applies the 3×3 operation op (erode3 or dilate3) n times to
// m in place, through d.tmp.
func (d *FoamDetector) repeatMorph(op func(src, dst []uint8, w, h int), m []uint8, w, h, n int) {
	for range n {
		op(m, d.tmp, w, h)
		copy(m, d.tmp)
	}
}

// floodFrom grows from the pixels on stack until it is empty: each
// 8-connected neighbour j with grow[j] set and mark[j] clear is marked and
// pushed. visit, when not nil, is called with every pixel popped. It
// returns the emptied stack, for its storage to be reused.
func floodFrom[G, M uint8 | int32](stack []int32, grow []G, mark []M, w, h int, visit func(i int)) []int32 {
	for len(stack) > 0 {
		i := int(stack[len(stack)-1])
		stack = stack[:len(stack)-1]
		if visit != nil {
			visit(i)
		}
		x, y := i%w, i/w
		for dy := -1; dy <= 1; dy++ {
			yy := y + dy
			if yy < 0 || yy >= h {
				continue
			}
			for dx := -1; dx <= 1; dx++ {
				xx := x + dx
				if xx < 0 || xx >= w {
					continue
				}
				j := yy*w + xx
				if grow[j] != 0 && mark[j] == 0 {
					mark[j] = 1
					stack = append(stack, int32(j))
				}
			}
		}
	}
	return stack
}

// dropSmall clears the 8-connected regions of mask smaller than MinAreaPx
// and returns the number of foam pixels left.
func (d *FoamDetector) dropSmall(mask []uint8, w, h int) int {
	n := w * h
	d.label = resize(d.label, n)
	clear(d.label)
	total := 0
	region := d.region[:0]
	defer func() { d.region = region[:0] }()
	visit := func(i int) { region = append(region, int32(i)) }
	for s := range mask[:n] {
		if mask[s] == 0 || d.label[s] != 0 {
			continue
		}
		region = region[:0]
		d.stack = append(d.stack[:0], int32(s))
		d.label[s] = 1
		d.stack = floodFrom(d.stack, mask, d.label, w, h, visit)
		if len(region) < d.opt.MinAreaPx {
			for _, i := range region {
				mask[i] = 0
			}
		} else {
			total += len(region)
		}
	}
	return total
}

// FoamStats counts what foam mapping did with one pair.
type FoamStats struct {
	FoamPixels int // foam pixels in the rectified left image (after the stereo check)
	Glints     int // pixels removed by the stereo check
	Stereo     int // pixels placed by their 3-D point
	Plane      int // pixels placed on the sea plane (no disparity)
	Cells      int // foam cells
}

// Foam detects foam in the worker's last rectified left image and maps it
// onto the grid: dst (len nx·ny, reused when large enough) gets 1 in foam
// cells and 0 elsewhere. Call it after Reconstruct on the same pair; the
// mask buffer is the detector's. A saturated or black image gives
// ErrSaturatedImage or ErrBlackImage and an all-zero grid.
func (w *Worker) Foam(det *FoamDetector, dst []uint8) ([]uint8, FoamStats, error) {
	r := w.r
	var st FoamStats
	if !r.havePlane || !r.haveGrid {
		return dst, st, fmt.Errorf("surface: set the sea plane and the grid before detecting foam")
	}
	nx, ny := len(r.grid.X), len(r.grid.Y)
	dst = resize(dst, nx*ny)
	clear(dst)
	if w.rectL.Empty() || w.rectL.Type() != gocv.MatTypeCV8UC1 {
		return dst, st, fmt.Errorf("surface: no rectified left image to detect foam in; reconstruct the pair first")
	}
	cols, rows := w.rectL.Cols(), w.rectL.Rows()
	pix, err := w.rectL.DataPtrUint8()
	if err != nil || len(pix) < cols*rows {
		return dst, st, fmt.Errorf("surface: the rectified left image is not readable as one block of 8-bit pixels")
	}
	d := det
	d.mask = resize(d.mask, cols*rows)
	mask := d.mask
	st.FoamPixels, err = d.Detect(pix, cols, rows, mask)
	if err != nil {
		return dst, st, err
	}
	if st.FoamPixels > 0 && d.opt.StereoCheck {
		if err := w.stereoCheck(d, mask, &st); err != nil {
			return dst, st, err
		}
	}
	if st.FoamPixels == 0 {
		return dst, st, nil
	}
	disp, dc, dr, err := w.disparities()
	if err != nil {
		return dst, st, err
	}
	if dc != cols || dr != rows {
		return dst, st, fmt.Errorf("surface: the disparity map (%d×%d px) does not match the rectified image (%d×%d px); reconstruct the pair first", dc, dr, cols, rows)
	}
	d.votes = resize(d.votes, 2*nx*ny)
	votes := d.votes
	clear(votes)
	x0, y0, inv := r.gx0, r.gy0, 1/r.gd
	zmax := float32(r.pointLimit())
	cam := r.world.T
	var rp rowProjector
	for v := 0; v < rows; v++ {
		rp.setRow(&r.qWorld, v)
		for u := 0; u < cols; u++ {
			i := v*cols + u
			var x, y float64
			var z float32
			ok := false
			if e := disp[i]; e == e {
				var xf, yf float32
				xf, yf, z, ok = rp.at(u, e)
				x, y = float64(xf), float64(yf)
			}
			if !ok || z != z || !(z <= zmax && z >= -zmax) {
				// No usable disparity: the ray meets the sea plane z = 0.
				dir := r.rectRay(float64(u), float64(v))
				if !(dir[2] < 0) {
					continue
				}
				s := -cam[2] / dir[2]
				x, y = cam[0]+s*dir[0], cam[1]+s*dir[1]
				if mask[i] != 0 {
					st.Plane++
				}
			} else if mask[i] != 0 {
				st.Stereo++
			}
			fi := (x-x0)*inv + 0.5
			fj := (y-y0)*inv + 0.5
			if !(fi >= 0 && fj >= 0) {
				continue
			}
			ci, cj := int(fi), int(fj)
			if ci >= nx || cj >= ny {
				continue
			}
			c := cj*nx + ci
			votes[2*c]++
			if mask[i] != 0 {
				votes[2*c+1]++
			}
		}
	}
	frac := d.opt.CellFraction
	for c := range dst {
		if n := votes[2*c]; n > 0 && float64(votes[2*c+1]) >= frac*float64(n) {
			dst[c] = 1
			st.Cells++
		}
	}
	return dst, st, nil
}

// stereoCheck clears the foam pixels of mask whose stereo match in the
// rectified right image is not bright (see FoamOptions.StereoCheck).
func (w *Worker) stereoCheck(d *FoamDetector, mask []uint8, st *FoamStats) error {
	cols, rows := w.rectL.Cols(), w.rectL.Rows()
	disp, err := w.dispF.DataPtrFloat32()
	if err != nil || len(disp) != cols*rows {
		return fmt.Errorf("surface: no disparity map of the pair for the foam stereo check; reconstruct the pair first")
	}
	right, err := w.rectR.DataPtrUint8()
	if err != nil || len(right) < cols*rows || w.rectR.Cols() != cols {
		return fmt.Errorf("surface: the rectified right image is not readable for the foam stereo check")
	}
	lr, lc := float32(d.opt.LowRatio), float32(d.opt.MinContrastDN/2)
	for i, m := range mask[:cols*rows] {
		e := disp[i]
		if m == 0 || e != e {
			continue
		}
		u, v := i%cols, i/cols
		xr := int(math.Round(float64(u) - float64(e)))
		if xr < 0 || xr >= cols {
			continue
		}
		I, B := float32(right[v*cols+xr]), d.bg[i]
		if !(I >= lr*B && I-B >= lc) {
			mask[i] = 0
			st.Glints++
			st.FoamPixels--
		}
	}
	return nil
}
