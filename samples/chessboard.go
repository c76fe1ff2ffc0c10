package samples

// Synthetic chessboard calibration views.
//
// A printed chessboard is placed at known poses in front of a known stereo
// rig and photographed by each camera through the rig's own camera model
// (pinhole with Brown–Conrady distortion, crestspeed/calib): every pixel is
// traced back to a ray, the ray is intersected with the board plane, and
// the board's reflectance there is averaged over a 6×6 grid of sub-pixel
// samples (supersampling anti-aliasing), then Gaussian sensor noise is
// added. The views let the calibration be checked against the truth it
// should recover.

import (
	"bytes"
	"context"
	"fmt"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"sync"

	"crestspeed/calib"
	"crestspeed/internal/atomicfile"
)

// Chessboard is a printed calibration board: Cols × Rows inner corners,
// squares of side SquareM metres, and a white margin MarginSquares squares
// wide around the (Cols+1) × (Rows+1) squares. The board frame has its
// origin at the first inner corner, x along a row of corners, y along a
// column, z into the board.
type Chessboard struct {
	Cols, Rows    int
	SquareM       float64
	MarginSquares float64
}

// Pattern returns the board as the calibration sees it.
func (b Chessboard) Pattern() calib.Pattern {
	return calib.Pattern{Cols: b.Cols, Rows: b.Rows, SquareM: b.SquareM}
}

// Validate reports what is wrong with the board.
func (b Chessboard) Validate() error {
	if err := b.Pattern().Validate(); err != nil {
		return err
	}
	if b.MarginSquares < 0 || b.MarginSquares > 10 {
		return fmt.Errorf("chessboard margin of %g squares is outside 0–10", b.MarginSquares)
	}
	return nil
}

// Corners returns the inner corners in the board frame, in OpenCV's order.
func (b Chessboard) Corners() [][3]float64 {
	var c [][3]float64
	for j := 0; j < b.Rows; j++ {
		for i := 0; i < b.Cols; i++ {
			c = append(c, [3]float64{float64(i) * b.SquareM, float64(j) * b.SquareM, 0})
		}
	}
	return c
}

// outline returns the four corners of the board's edge (margin included)
// in the board frame.
func (b Chessboard) outline() [4][3]float64 {
	e := (1 + b.MarginSquares) * b.SquareM
	x0, y0 := -e, -e
	x1 := float64(b.Cols-1)*b.SquareM + e
	y1 := float64(b.Rows-1)*b.SquareM + e
	return [4][3]float64{{x0, y0, 0}, {x1, y0, 0}, {x1, y1, 0}, {x0, y1, 0}}
}

// Grey levels of the rendered scene (8-bit).
const (
	boardBlack   = 35
	boardWhite   = 215
	background   = 105
	noiseSigmaDN = 1.5
	superSamples = 6 // per pixel side
)

// reflectance returns the grey level at board coordinates (bx, by) metres,
// or background off the board.
func (b Chessboard) reflectance(bx, by float64) float64 {
	sq := b.SquareM
	e := (1 + b.MarginSquares) * sq
	if bx < -e || by < -e || bx > float64(b.Cols-1)*sq+e || by > float64(b.Rows-1)*sq+e {
		return background
	}
	a := math.Floor(bx/sq) + 1 // square column, 0..Cols inside the pattern
	c := math.Floor(by/sq) + 1
	if a < 0 || c < 0 || a > float64(b.Cols) || c > float64(b.Rows) {
		return boardWhite // margin
	}
	if int(a+c)%2 == 0 {
		return boardBlack
	}
	return boardWhite
}

// BoardPose places the board in the left camera's frame:
// X_left = R·X_board + T (R row-major, T metres).
type BoardPose struct {
	R [9]float64
	T [3]float64
}

// DemoRig returns the stereo rig of the demo deployment: two 1280×1024
// cameras of about 1400 px focal length, 2.5 m apart, the right one toed in
// by 4° (with 0.5° of pitch and 0.3° of roll as mounting errors), and
// lenses with moderate barrel distortion.
func DemoRig() *calib.Rig {
	const deg = math.Pi / 180
	// Orientation of the right camera in the left camera's frame: yaw
	// toward the left camera (about y, down), then pitch and roll.
	orient := cbMul3(cbRotY(-4*deg), cbMul3(cbRotX(0.5*deg), cbRotZ(0.3*deg)))
	R := cbTranspose(orient)             // left frame → right frame
	centre := [3]float64{2.5, 0.02, 0.1} // right camera centre in the left frame, metres
	RC := cbMatVec(R, centre)
	return &calib.Rig{
		Size: image.Pt(1280, 1024),
		Left: calib.Camera{Fx: 1400, Fy: 1401.5, Cx: 641.3, Cy: 509.8,
			K1: -0.12, K2: 0.09, P1: 0.0004, P2: -0.0003, K3: -0.02},
		Right: calib.Camera{Fx: 1395.2, Fy: 1396.0, Cx: 636.7, Cy: 514.1,
			K1: -0.11, K2: 0.08, P1: -0.0002, P2: 0.0005, K3: -0.015},
		R: R,
		T: [3]float64{-RC[0], -RC[1], -RC[2]},
	}
}

// DemoChessboard is the board of the demo deployment: 9 × 6 inner corners
// of 0.2 m squares with a one-square margin (2.4 m × 1.8 m), the size a
// rig with a 2.5 m baseline needs to see the board well at 7–15 m.
func DemoChessboard() Chessboard {
	return Chessboard{Cols: 9, Rows: 6, SquareM: 0.2, MarginSquares: 1}
}

// ChessboardPoses draws n poses of the board, 7 to 15 m in front of the rig,
// tilted up to 40° about its rows and columns and turned up to 15° in its
// plane, each with the whole board inside both images (20 px clear of the
// edges), facing both cameras at less than 60° from their lines of sight,
// and with neighbouring corners at least 12 px apart. The same seed gives
// the same poses.
func ChessboardPoses(rig *calib.Rig, board Chessboard, n int, seed uint64) ([]BoardPose, error) {
	if err := rig.Validate(); err != nil {
		return nil, fmt.Errorf("rig cannot be photographed: %v", err)
	}
	if err := board.Validate(); err != nil {
		return nil, err
	}
	if n < 1 || n > 1000 {
		return nil, fmt.Errorf("number of chessboard views %d is outside 1–1000", n)
	}
	const deg = math.Pi / 180
	rng := rand.New(rand.NewPCG(seed, 0x63616c6962))
	centre := [3]float64{float64(board.Cols-1) * board.SquareM / 2, float64(board.Rows-1) * board.SquareM / 2, 0}
	var poses []BoardPose
	for attempt := 0; len(poses) < n; attempt++ {
		if attempt > 2000*n {
			return nil, fmt.Errorf("found only %d of %d chessboard poses that both cameras see whole; use a smaller board or a rig whose views overlap more", len(poses), n)
		}
		z := 7 + 8*rng.Float64()
		u := float64(rig.Size.X) * (0.1 + 0.8*rng.Float64())
		v := float64(rig.Size.Y) * (0.1 + 0.8*rng.Float64())
		xy, ok := rig.Left.Unproject([2]float64{u, v})
		if !ok {
			continue
		}
		c := [3]float64{xy[0] * z, xy[1] * z, z}
		rot := cbMul3(cbRotZ((2*rng.Float64()-1)*15*deg), cbMul3(cbRotY((2*rng.Float64()-1)*40*deg), cbRotX((2*rng.Float64()-1)*40*deg)))
		rc := cbMatVec(rot, centre)
		p := BoardPose{R: rot, T: [3]float64{c[0] - rc[0], c[1] - rc[1], c[2] - rc[2]}}
		if poseVisible(rig, board, p) {
			poses = append(poses, p)
		}
	}
	return poses, nil
}

// poseVisible applies the acceptance rules of ChessboardPoses.
func poseVisible(rig *calib.Rig, board Chessboard, p BoardPose) bool {
	const border = 20.0
	normal := [3]float64{p.R[2], p.R[5], p.R[8]} // board z axis in the left frame
	rightCentre := cbMatVec(cbTranspose(rig.R), [3]float64{-rig.T[0], -rig.T[1], -rig.T[2]})
	for side := 0; side < 2; side++ {
		project := rig.ProjectLeft
		cam := [3]float64{}
		if side == 1 {
			project, cam = rig.ProjectRight, rightCentre
		}
		// Facing: angle between the board normal and the line of sight.
		sight := [3]float64{p.T[0] - cam[0], p.T[1] - cam[1], p.T[2] - cam[2]}
		if cbDot(normal, sight) < math.Cos(60*math.Pi/180)*cbNorm(sight) {
			return false
		}
		for _, q := range board.outline() {
			X := cbAdd(cbMatVec(p.R, q), p.T)
			if side == 1 && rig.RightFromLeft(X)[2] <= 0 || X[2] <= 0 {
				return false
			}
			px := project(X)
			if !(px[0] >= border && px[1] >= border && px[0] <= float64(rig.Size.X)-1-border && px[1] <= float64(rig.Size.Y)-1-border) {
				return false
			}
		}
		corners := board.Corners()
		img := make([][2]float64, len(corners))
		for k, q := range corners {
			img[k] = project(cbAdd(cbMatVec(p.R, q), p.T))
		}
		for j := 0; j < board.Rows; j++ {
			for i := 0; i < board.Cols; i++ {
				k := j*board.Cols + i
				if i+1 < board.Cols && math.Hypot(img[k+1][0]-img[k][0], img[k+1][1]-img[k][1]) < 12 {
					return false
				}
				if j+1 < board.Rows && math.Hypot(img[k+board.Cols][0]-img[k][0], img[k+board.Cols][1]-img[k][1]) < 12 {
					return false
				}
			}
		}
	}
	return true
}

// RenderChessboard photographs the board at pose (board → camera frame:
// X_cam = R·X_board + T) with camera cam, returning an 8-bit grey image of
// the given size. Each pixel averages superSamples² rays (the pixel's
// footprint, sampled on a regular grid); rng, when not nil, adds Gaussian
// noise of 1.5 grey levels.
func RenderChessboard(cam calib.Camera, size image.Point, board Chessboard, R [9]float64, T [3]float64, rng *rand.Rand) (*image.Gray, error) {
	if size.X <= 0 || size.Y <= 0 {
		return nil, fmt.Errorf("image size %d×%d is not positive", size.X, size.Y)
	}
	// Homography from normalised image coordinates to board coordinates:
	// (bx, by, 1) ∝ H⁻¹ (x, y, 1) with H = [r1 r2 T].
	H := [9]float64{R[0], R[1], T[0], R[3], R[4], T[1], R[6], R[7], T[2]}
	Hi, ok := cbInverse3(H)
	if !ok {
		return nil, fmt.Errorf("chessboard is seen edge-on")
	}
	img := image.NewGray(image.Rect(0, 0, size.X, size.Y))
	// Bounding box of the board in the image, from its outline with a
	// generous pad; outside it every pixel is background.
	x0, y0, x1, y1 := size.X, size.Y, 0, 0
	for _, q := range board.outline() {
		if X := cbAdd(cbMatVec(R, q), T); X[2] <= 0 {
			return nil, fmt.Errorf("chessboard is partly behind the camera")
		}
	}
	// Sample the outline edges too: distortion bends them.
	for k := 0; k < 4; k++ {
		a, b := board.outline()[k], board.outline()[(k+1)%4]
		for s := 0.0; s <= 1; s += 1.0 / 32 {
			q := [3]float64{a[0] + s*(b[0]-a[0]), a[1] + s*(b[1]-a[1]), 0}
			px := cam.Project(cbAdd(cbMatVec(R, q), T))
			x0 = min(x0, int(math.Floor(px[0]))-3)
			y0 = min(y0, int(math.Floor(px[1]))-3)
			x1 = max(x1, int(math.Ceil(px[0]))+3)
			y1 = max(y1, int(math.Ceil(px[1]))+3)
		}
	}
	x0, y0 = max(x0, 0), max(y0, 0)
	x1, y1 = min(x1, size.X-1), min(y1, size.Y-1)
	for i := range img.Pix {
		img.Pix[i] = background
	}
	// Rays through the pixel corners of one row of the bounding box at a
	// time; a sample's ray is the bilinear blend of its pixel's four
	// corner rays (the undistortion is smooth on the scale of a pixel).
	nw := x1 - x0 + 2
	top := make([][2]float64, nw)
	bot := make([][2]float64, nw)
	cornerRow := func(dst [][2]float64, v float64) {
		for k := range dst {
			xy, ok := cam.Unproject([2]float64{float64(x0+k) - 0.5, v})
			if !ok {
				xy = [2]float64{math.NaN(), math.NaN()}
			}
			dst[k] = xy
		}
	}
	cornerRow(top, float64(y0)-0.5)
	const ss = superSamples
	for py := y0; py <= y1; py++ {
		cornerRow(bot, float64(py)+0.5)
		for px := x0; px <= x1; px++ {
			k := px - x0
			tl, tr, bl, br := top[k], top[k+1], bot[k], bot[k+1]
			if math.IsNaN(tl[0] + tr[0] + bl[0] + br[0]) {
				continue
			}
			sum := 0.0
			for sy := 0; sy < ss; sy++ {
				b := (float64(sy) + 0.5) / ss
				lx, ly := tl[0]+b*(bl[0]-tl[0]), tl[1]+b*(bl[1]-tl[1])
				rx, ry := tr[0]+b*(br[0]-tr[0]), tr[1]+b*(br[1]-tr[1])
				for sx := 0; sx < ss; sx++ {
					a := (float64(sx) + 0.5) / ss
					x := lx + a*(rx-lx)
					y := ly + a*(ry-ly)
					w := Hi[6]*x + Hi[7]*y + Hi[8]
					if w <= 0 {
						sum += background
						continue
					}
					bx := (Hi[0]*x + Hi[1]*y + Hi[2]) / w
					by := (Hi[3]*x + Hi[4]*y + Hi[5]) / w
					sum += board.reflectance(bx, by)
				}
			}
			img.Pix[py*img.Stride+px] = uint8(math.Round(sum / (ss * ss)))
		}
		top, bot = bot, top
	}
	if rng != nil {
		for i, v := range img.Pix {
			img.Pix[i] = uint8(math.Max(0, math.Min(255, math.Round(float64(v)+noiseSigmaDN*rng.NormFloat64()))))
		}
	}
	return img, nil
}

// RenderCalibrationViews photographs the board with both cameras of the rig
// at n poses from [ChessboardPoses] and writes the pairs as 8-bit grey PNG
// files left_NN.png and right_NN.png (NN from 01) in dir, which it creates.
// The same seed gives the same files. It returns the paths in pair order.
func RenderCalibrationViews(ctx context.Context, rig *calib.Rig, board Chessboard, n int, dir string, seed uint64) (leftPaths, rightPaths []string, err error) {
	poses, err := ChessboardPoses(rig, board, n, seed)
	if err != nil {
		return nil, nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, nil, fmt.Errorf("cannot create chessboard folder %s: %v", dir, err)
	}
	leftPaths = make([]string, n)
	rightPaths = make([]string, n)
	errs := make([]error, 2*n)
	jobs := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < min(runtime.NumCPU(), 2*n); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				if ctx.Err() != nil {
					errs[j] = ctx.Err()
					continue
				}
				v, side := j/2, j%2
				p := poses[v]
				cam, R, T, name := rig.Left, p.R, p.T, "left"
				if side == 1 {
					// Board → right frame: R_rig·(R·X + T) + T_rig.
					cam, name = rig.Right, "right"
					R = cbMul3(rig.R, p.R)
					T = rig.RightFromLeft(p.T)
				}
				rng := rand.New(rand.NewPCG(seed, uint64(j)+1))
				img, err := RenderChessboard(cam, rig.Size, board, R, T, rng)
				if err != nil {
					errs[j] = fmt.Errorf("view %d, %s camera: %v", v+1, name, err)
					continue
				}
				path := filepath.Join(dir, fmt.Sprintf("%s_%02d.png", name, v+1))
				errs[j] = writeGreyPNG(path, img)
				if side == 0 {
					leftPaths[v] = path
				} else {
					rightPaths[v] = path
				}
			}
		}()
	}
	for j := 0; j < 2*n; j++ {
		jobs <- j
	}
	close(jobs)
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, nil, err
		}
	}
	return leftPaths, rightPaths, nil
}

// writeGreyPNG encodes img as PNG and writes it atomically.
func writeGreyPNG(path string, img *image.Gray) error {
	var buf bytes.Buffer
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(&buf, img); err != nil {
		return fmt.Errorf("cannot encode %s: %v", path, err)
	}
	return atomicfile.WriteFile(path, buf.Bytes())
}

// Small 3×3 helpers (row-major).

func cbRotX(a float64) [9]float64 {
	s, c := math.Sincos(a)
	return [9]float64{1, 0, 0, 0, c, -s, 0, s, c}
}

func cbRotY(a float64) [9]float64 {
	s, c := math.Sincos(a)
	return [9]float64{c, 0, s, 0, 1, 0, -s, 0, c}
}

func cbRotZ(a float64) [9]float64 {
	s, c := math.Sincos(a)
	return [9]float64{c, -s, 0, s, c, 0, 0, 0, 1}
}

func cbMul3(a, b [9]float64) [9]float64 {
	var c [9]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			c[3*i+j] = a[3*i]*b[j] + a[3*i+1]*b[3+j] + a[3*i+2]*b[6+j]
		}
	}
	return c
}

func cbTranspose(a [9]float64) [9]float64 {
	return [9]float64{a[0], a[3], a[6], a[1], a[4], a[7], a[2], a[5], a[8]}
}

func cbMatVec(m [9]float64, v [3]float64) [3]float64 {
	return [3]float64{
		m[0]*v[0] + m[1]*v[1] + m[2]*v[2],
		m[3]*v[0] + m[4]*v[1] + m[5]*v[2],
		m[6]*v[0] + m[7]*v[1] + m[8]*v[2],
	}
}

func cbAdd(a, b [3]float64) [3]float64 { return [3]float64{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }

func cbDot(a, b [3]float64) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

func cbNorm(a [3]float64) float64 { return math.Sqrt(cbDot(a, a)) }

// inverse3 inverts a 3×3 matrix by its adjugate.
func cbInverse3(m [9]float64) ([9]float64, bool) {
	c00 := m[4]*m[8] - m[5]*m[7]
	c01 := m[5]*m[6] - m[3]*m[8]
	c02 := m[3]*m[7] - m[4]*m[6]
	det := m[0]*c00 + m[1]*c01 + m[2]*c02
	if math.Abs(det) < 1e-15 {
		return [9]float64{}, false
	}
	inv := [9]float64{
		c00, m[2]*m[7] - m[1]*m[8], m[1]*m[5] - m[2]*m[4],
		c01, m[0]*m[8] - m[2]*m[6], m[2]*m[3] - m[0]*m[5],
		c02, m[1]*m[6] - m[0]*m[7], m[0]*m[4] - m[1]*m[3],
	}
	for i := range inv {
		inv[i] /= det
	}
	return inv, true
}
