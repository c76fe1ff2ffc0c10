package surface

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"crestspeed/calib"
)

// PlaneFit is the result of [FitPlane].
type PlaneFit struct {
	Plane   calib.Plane // in the frame of the points; Normal toward the origin's side
	Points  int         // points given
	Inliers int         // points within the threshold of the final plane
	RMSM    float64     // RMS distance of the inliers from the plane, metres
	// Pairs and SpanS are the number of pairs fitted and the time from
	// the first to the last (set by Run; zero from FitPlane).
	Pairs int
	SpanS float64
}

// maxRefits bounds the least-squares refits on the inliers.
const maxRefits = 10

// ransacSample is the number of points each RANSAC hypothesis is scored on
// (a fixed random subset, for speed; the final fits use every point).
const ransacSample = 20000

// FitPlane fits a plane to points by RANSAC and total least squares. The
// normal is oriented so that the origin (the left camera's centre, for
// points in its frame) lies on its positive side: OffsetM is then the
// origin's height above the plane.
//
// Method: RANSAC (Fischler & Bolles 1981, "Random sample consensus",
// Comm. ACM 24(6)) with planes through three random points, each scored by
// the number of points of a fixed random subset within thresholdM; then
// the total-least-squares plane of the inliers (through their centroid,
// normal along the eigenvector of the smallest eigenvalue of their
// covariance: Pearson 1901, "On lines and planes of closest fit", Phil.
// Mag. 2), refitted to the inliers of each fit until their number no longer
// changes (at most 10 fits). The same seed gives the same plane.
func FitPlane(points [][3]float32, iterations int, thresholdM float64, seed uint64) (PlaneFit, error) {
	n := len(points)
	if n < 3 {
		return PlaneFit{}, fmt.Errorf("surface: only %d points to fit the sea plane; the pairs gave too few matches (check the images and the disparity range)", n)
	}
	if iterations < 1 || !(thresholdM > 0) {
		return PlaneFit{}, fmt.Errorf("surface: RANSAC needs a positive iteration count and threshold, got %d and %g m", iterations, thresholdM)
	}
	rng := rand.New(rand.NewPCG(seed, 0x5ea91a7e))
	// Scoring subset.
	sub := points
	if n > ransacSample {
		sub = make([][3]float32, ransacSample)
		for i := range sub {
			sub[i] = points[rng.IntN(n)]
		}
	}
	best, bestN := [4]float64{}, -1
	for it := 0; it < iterations; it++ {
		a, b, c := points[rng.IntN(n)], points[rng.IntN(n)], points[rng.IntN(n)]
		pl, ok := planeThrough(a, b, c)
		if !ok {
			continue
		}
		cnt := 0
		for _, p := range sub {
			if math.Abs(pl[0]*float64(p[0])+pl[1]*float64(p[1])+pl[2]*float64(p[2])+pl[3]) <= thresholdM {
				cnt++
			}
		}
		if cnt > bestN {
			best, bestN = pl, cnt
		}
	}
	if bestN < 3 {
		return PlaneFit{}, fmt.Errorf("surface: RANSAC found no plane among %d points (they are collinear or repeated); check the images", n)
	}
	pl := best
	var inl int
	var rms float64
	prev := -1
	for round := 0; round < maxRefits; round++ {
		var ok bool
		pl, inl, ok = leastSquaresPlane(points, pl, thresholdM)
		if !ok {
			return PlaneFit{}, fmt.Errorf("surface: the sea-plane inliers are degenerate (%d points); check the images and the disparity range", inl)
		}
		if inl == prev {
			break
		}
		prev = inl
	}
	// Final inliers and their RMS distance.
	inl, rms = 0, 0
	for _, p := range points {
		d := pl[0]*float64(p[0]) + pl[1]*float64(p[1]) + pl[2]*float64(p[2]) + pl[3]
		if math.Abs(d) <= thresholdM {
			inl++
			rms += d * d
		}
	}
	if inl > 0 {
		rms = math.Sqrt(rms / float64(inl))
	}
	if pl[3] < 0 {
		for i := range pl {
			pl[i] = -pl[i]
		}
	}
	return PlaneFit{
		Plane:  calib.Plane{Normal: [3]float64{pl[0], pl[1], pl[2]}, OffsetM: pl[3]},
		Points: n, Inliers: inl, RMSM: rms,
	}, nil
}

// planeThrough returns the plane (unit normal, offset) through three points.
func planeThrough(a, b, c [3]float32) ([4]float64, bool) {
	u := [3]float64{float64(b[0] - a[0]), float64(b[1] - a[1]), float64(b[2] - a[2])}
	v := [3]float64{float64(c[0] - a[0]), float64(c[1] - a[1]), float64(c[2] - a[2])}
	n := [3]float64{u[1]*v[2] - u[2]*v[1], u[2]*v[0] - u[0]*v[2], u[0]*v[1] - u[1]*v[0]}
	l := math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2])
	if !(l > 1e-9) {
		return [4]float64{}, false
	}
	n[0], n[1], n[2] = n[0]/l, n[1]/l, n[2]/l
	return [4]float64{n[0], n[1], n[2], -(n[0]*float64(a[0]) + n[1]*float64(a[1]) + n[2]*float64(a[2]))}, true
}

// leastSquaresPlane fits the total-least-squares plane to the points within
// threshold of pl.
func leastSquaresPlane(points [][3]float32, pl [4]float64, threshold float64) ([4]float64, int, bool) {
	var sx, sy, sz float64
	n := 0
	in := func(p [3]float32) bool {
		return math.Abs(pl[0]*float64(p[0])+pl[1]*float64(p[1])+pl[2]*float64(p[2])+pl[3]) <= threshold
	}
	for _, p := range points {
		if in(p) {
			sx += float64(p[0])
			sy += float64(p[1])
			sz += float64(p[2])
			n++
		}
	}
	if n < 3 {
		return pl, n, false
	}
	cx, cy, cz := sx/float64(n), sy/float64(n), sz/float64(n)
	var c [6]float64 // xx xy xz yy yz zz
	for _, p := range points {
		if !in(p) {
			continue
		}
		dx, dy, dz := float64(p[0])-cx, float64(p[1])-cy, float64(p[2])-cz
		c[0] += dx * dx
		c[1] += dx * dy
		c[2] += dx * dz
		c[3] += dy * dy
		c[4] += dy * dz
		c[5] += dz * dz
	}
	cov := mat.NewSymDense(3, []float64{c[0], c[1], c[2], c[1], c[3], c[4], c[2], c[4], c[5]})
	var eig mat.EigenSym
	if !eig.Factorize(cov, true) {
		return pl, n, false
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	k := 0
	for i := 1; i < 3; i++ {
		if vals[i] < vals[k] {
			k = i
		}
	}
	nv := [3]float64{vecs.At(0, k), vecs.At(1, k), vecs.At(2, k)}
	l := math.Sqrt(nv[0]*nv[0] + nv[1]*nv[1] + nv[2]*nv[2])
	if !(l > 0) || !(vals[(k+1)%3] > 0) || !(vals[(k+2)%3] > 0) {
		return pl, n, false
	}
	nv[0], nv[1], nv[2] = nv[0]/l, nv[1]/l, nv[2]/l
	// Keep the orientation of the previous plane.
	if nv[0]*pl[0]+nv[1]*pl[1]+nv[2]*pl[2] < 0 {
		nv[0], nv[1], nv[2] = -nv[0], -nv[1], -nv[2]
	}
	return [4]float64{nv[0], nv[1], nv[2], -(nv[0]*cx + nv[1]*cy + nv[2]*cz)}, n, true
}
