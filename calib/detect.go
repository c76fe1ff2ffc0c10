package calib

import (
	"fmt"
	"image"
	"math"
	"strconv"
	"strings"

	"gocv.io/x/gocv"
)

// Corner detectors.
const (
	// DetectorClassic is cv::findChessboardCorners (quad grouping on an
	// adaptively thresholded image) followed by cv::cornerSubPix.
	DetectorClassic = "classic"
	// DetectorSB is cv::findChessboardCornersSB (Duda & Frese, "Accurate
	// detection and localization of checkerboard corners for calibration",
	// BMVC 2018), sub-pixel by construction.
	DetectorSB = "sb"
)

// Pattern is a chessboard: its inner corners (where four squares meet)
// counted along a row (Cols) and along a column (Rows), and the side of
// one square in metres.
type Pattern struct {
	Cols, Rows int
	SquareM    float64
}

// ParsePattern reads "COLSxROWS" (inner corners, like "9x6").
func ParsePattern(s string) (cols, rows int, err error) {
	a, b, ok := strings.Cut(strings.ToLower(strings.ReplaceAll(strings.TrimSpace(s), "×", "x")), "x")
	if ok {
		cols, err = strconv.Atoi(strings.TrimSpace(a))
		if err == nil {
			rows, err = strconv.Atoi(strings.TrimSpace(b))
		}
	}
	if !ok || err != nil || cols < 2 || rows < 2 || cols > 100 || rows > 100 {
		return 0, 0, fmt.Errorf("chessboard pattern %q is not COLSxROWS with 2–100 inner corners each way (like \"9x6\")", s)
	}
	return cols, rows, nil
}

// String returns "COLSxROWS".
func (p Pattern) String() string { return fmt.Sprintf("%dx%d", p.Cols, p.Rows) }

// Validate reports what is wrong with the pattern.
func (p Pattern) Validate() error {
	if p.Cols < 2 || p.Rows < 2 || p.Cols > 100 || p.Rows > 100 {
		return fmt.Errorf("chessboard pattern %s needs 2–100 inner corners each way", p)
	}
	if !(p.SquareM > 0) || p.SquareM > 10 {
		return fmt.Errorf("chessboard square side %g m is not in (0, 10] m; give the measured side of one square in metres", p.SquareM)
	}
	return nil
}

// ObjectPoints returns the inner corners in the board frame (metres, z = 0)
// in OpenCV's order: row by row, Cols corners per row.
func (p Pattern) ObjectPoints() [][3]float32 {
	pts := make([][3]float32, 0, p.Cols*p.Rows)
	for j := 0; j < p.Rows; j++ {
		for i := 0; i < p.Cols; i++ {
			pts = append(pts, [3]float32{float32(float64(i) * p.SquareM), float32(float64(j) * p.SquareM), 0})
		}
	}
	return pts
}

// DetectCorners finds the pattern's inner corners in an 8-bit grey image
// and refines them to sub-pixel precision. found is false when the whole
// pattern is not visible.
func DetectCorners(gray gocv.Mat, p Pattern, detector string) (corners [][2]float32, found bool, err error) {
	if gray.Empty() || gray.Type() != gocv.MatTypeCV8UC1 {
		return nil, false, fmt.Errorf("corner detection needs a non-empty 8-bit grey image")
	}
	size := image.Pt(p.Cols, p.Rows)
	mat := gocv.NewMat()
	defer mat.Close()
	switch detector {
	case DetectorClassic, "":
		found = gocv.FindChessboardCorners(gray, size, &mat,
			gocv.CalibCBAdaptiveThresh|gocv.CalibCBNormalizeImage|gocv.CalibCBFastCheck)
		if found {
			pts, err := matPoints(mat, p.Cols*p.Rows)
			if err != nil {
				return nil, false, err
			}
			h := subPixHalfWindow(pts, p)
			gocv.CornerSubPix(gray, &mat, image.Pt(h, h), image.Pt(-1, -1),
				gocv.NewTermCriteria(gocv.Count|gocv.EPS, 100, 1e-4))
		}
	case DetectorSB:
		found = gocv.FindChessboardCornersSB(gray, size, &mat, gocv.CalibCBNormalizeImage|gocv.CalibCBExhaustive|gocv.CalibCBAccuracy)
	default:
		return nil, false, fmt.Errorf("corner detector %q is unknown; use %q or %q", detector, DetectorClassic, DetectorSB)
	}
	if !found {
		return nil, false, nil
	}
	corners, err = matPoints(mat, p.Cols*p.Rows)
	if err != nil {
		return nil, false, err
	}
	return corners, true, nil
}

func matPoints(m gocv.Mat, n int) ([][2]float32, error) {
	if m.Total() != n || m.Type() != gocv.MatTypeCV32FC2 {
		return nil, fmt.Errorf("corner detector returned %d points of type %v, expected %d CV_32FC2", m.Total(), m.Type(), n)
	}
	data, err := m.DataPtrFloat32()
	if err != nil {
		return nil, fmt.Errorf("corner detector output cannot be read: %v", err)
	}
	pts := make([][2]float32, n)
	for i := range pts {
		pts[i] = [2]float32{data[2*i], data[2*i+1]}
	}
	return pts, nil
}

// subPixHalfWindow picks the cornerSubPix half window: 40 % of the
// smallest distance between neighbouring corners, so that the window never
// reaches the next corner, between 2 and 11 pixels (common practice).
func subPixHalfWindow(pts [][2]float32, p Pattern) int {
	dmin := math.Inf(1)
	dist := func(a, b [2]float32) float64 {
		return math.Hypot(float64(a[0]-b[0]), float64(a[1]-b[1]))
	}
	for j := 0; j < p.Rows; j++ {
		for i := 0; i < p.Cols; i++ {
			k := j*p.Cols + i
			if i+1 < p.Cols {
				dmin = math.Min(dmin, dist(pts[k], pts[k+1]))
			}
			if j+1 < p.Rows {
				dmin = math.Min(dmin, dist(pts[k], pts[k+p.Cols]))
			}
		}
	}
	h := int(0.4 * dmin)
	return max(2, min(11, h))
}

// alignOrder reverses the right view's corner order when it runs opposite
// to the left view's (the detector may start from either end of a board
// that looks the same turned half round). Stereo rigs see the board nearly
// the same way up in both cameras, so the first-to-last corner vectors must
// point the same way.
func alignOrder(left, right [][2]float32) {
	n := len(left)
	dl := [2]float32{left[n-1][0] - left[0][0], left[n-1][1] - left[0][1]}
	dr := [2]float32{right[n-1][0] - right[0][0], right[n-1][1] - right[0][1]}
	if dl[0]*dr[0]+dl[1]*dr[1] < 0 {
		for i, j := 0, n-1; i < j; i, j = i+1, j-1 {
			right[i], right[j] = right[j], right[i]
		}
	}
}
