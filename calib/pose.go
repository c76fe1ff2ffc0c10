package calib

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// boardPose finds the pose of a planar board (object points with z = 0,
// board frame) in the left camera's frame that best explains its corners
// seen by both cameras of the rig, and returns the reprojection residuals
// (projected − detected, pixels) in each camera.
//
// Method: the homography from board to undistorted left image points by
// the normalised direct linear transform (Hartley & Zisserman, "Multiple
// View Geometry", 2nd ed., 2004, alg. 4.2), decomposed into a rotation and
// translation as in Zhang (2000, IEEE TPAMI 22(11), §3.1), then refined by
// Levenberg–Marquardt on the reprojection error in both cameras — the same
// error cv::stereoCalibrate minimises, with the rig held fixed.
func boardPose(rig *Rig, obj [][3]float32, left, right [][2]float32) (R [9]float64, t [3]float64, resL, resR [][2]float64, ok bool) {
	R, t, ok = initialPose(rig.Left, obj, left)
	if !ok {
		return R, t, nil, nil, false
	}
	n := len(obj)
	resid := func(R *[9]float64, t [3]float64, out []float64) float64 {
		ss := 0.0
		for k, o := range obj {
			X := add3(mulMV(R, [3]float64{float64(o[0]), float64(o[1]), float64(o[2])}), t)
			pl := rig.ProjectLeft(X)
			pr := rig.ProjectRight(X)
			r := [4]float64{pl[0] - float64(left[k][0]), pl[1] - float64(left[k][1]),
				pr[0] - float64(right[k][0]), pr[1] - float64(right[k][1])}
			copy(out[4*k:], r[:])
			for _, v := range r {
				ss += v * v
			}
		}
		return ss
	}
	m := 4 * n
	r0 := make([]float64, m)
	rp := make([]float64, m)
	rm := make([]float64, m)
	jac := mat.NewDense(m, 6, nil)
	cost := resid(&R, t, r0)
	if math.IsNaN(cost) {
		return R, t, nil, nil, false
	}
	perturb := func(d [6]float64) ([9]float64, [3]float64) {
		dr := Rodrigues([3]float64{d[0], d[1], d[2]})
		return mulMM(&dr, &R), add3(t, [3]float64{d[3], d[4], d[5]})
	}
	lambda := 1e-3
	var jtj mat.SymDense
	var jtr, step mat.VecDense
	converged := false
	for it := 0; it < 50 && !converged; it++ {
		scale := math.Max(1, math.Sqrt(t[0]*t[0]+t[1]*t[1]+t[2]*t[2]))
		for p := 0; p < 6; p++ {
			h := 1e-6
			if p >= 3 {
				h *= scale
			}
			var d [6]float64
			d[p] = h
			Rp, tp := perturb(d)
			resid(&Rp, tp, rp)
			d[p] = -h
			Rm, tm := perturb(d)
			resid(&Rm, tm, rm)
			for i := 0; i < m; i++ {
				jac.Set(i, p, (rp[i]-rm[i])/(2*h))
			}
		}
		jtj.SymOuterK(1, jac.T())
		jtr.MulVec(jac.T(), mat.NewVecDense(m, r0))
		improved := false
		for try := 0; try < 10; try++ {
			a := mat.NewSymDense(6, nil)
			a.CopySym(&jtj)
			for p := 0; p < 6; p++ {
				a.SetSym(p, p, jtj.At(p, p)*(1+lambda))
			}
			var ch mat.Cholesky
			if !ch.Factorize(a) {
				lambda *= 10
				continue
			}
			if err := ch.SolveVecTo(&step, &jtr); err != nil {
				lambda *= 10
				continue
			}
			var d [6]float64
			for p := range d {
				d[p] = -step.AtVec(p)
			}
			Rn, tn := perturb(d)
			c := resid(&Rn, tn, rp)
			if c < cost {
				R, t, cost = Rn, tn, c
				copy(r0, rp)
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				converged = cost == 0 || math.Sqrt(d[0]*d[0]+d[1]*d[1]+d[2]*d[2]) < 1e-13
				break
			}
			lambda *= 10
		}
		if !improved {
			break
		}
	}
	resL, resR = splitResiduals(r0, n)
	return R, t, resL, resR, true
}

// splitResiduals unpacks the stacked residual vector (left x, left y,
// right x, right y per corner) into per-camera residuals of n corners.
func splitResiduals(r0 []float64, n int) (resL, resR [][2]float64) {
	resL = make([][2]float64, n)
	resR = make([][2]float64, n)
	for k := range resL {
		resL[k] = [2]float64{r0[4*k], r0[4*k+1]}
		resR[k] = [2]float64{r0[4*k+2], r0[4*k+3]}
	}
	return resL, resR
}

// initialPose estimates the board pose in cam's frame from one view, by
// homography decomposition.
func initialPose(cam Camera, obj [][3]float32, img [][2]float32) (R [9]float64, t [3]float64, ok bool) {
	n := len(obj)
	if n < 4 {
		return R, t, false
	}
	src := make([][2]float64, n)
	dst := make([][2]float64, n)
	for k := range obj {
		src[k] = [2]float64{float64(obj[k][0]), float64(obj[k][1])}
		xy, good := cam.Unproject([2]float64{float64(img[k][0]), float64(img[k][1])})
		if !good {
			return R, t, false
		}
		dst[k] = xy
	}
	Ts, sn := normalise2(src)
	Td, dn := normalise2(dst)
	a := mat.NewDense(2*n, 9, nil)
	for k := 0; k < n; k++ {
		X, Y := sn[k][0], sn[k][1]
		x, y := dn[k][0], dn[k][1]
		a.SetRow(2*k, []float64{-X, -Y, -1, 0, 0, 0, x * X, x * Y, x})
		a.SetRow(2*k+1, []float64{0, 0, 0, -X, -Y, -1, y * X, y * Y, y})
	}
	var svd mat.SVD
	if !svd.Factorize(a, mat.SVDThin) {
		return R, t, false
	}
	var v mat.Dense
	svd.VTo(&v)
	var hn [9]float64
	for i := range hn {
		hn[i] = v.At(i, 8)
	}
	// Undo the normalisations: H = Td⁻¹ · Hn · Ts.
	tdi := invSimilarity(Td)
	tmp := mulMM(&hn, &Ts)
	H := mulMM(&tdi, &tmp)
	h1 := [3]float64{H[0], H[3], H[6]}
	h2 := [3]float64{H[1], H[4], H[7]}
	h3 := [3]float64{H[2], H[5], H[8]}
	lam := 2 / (norm3(h1) + norm3(h2))
	if h3[2]*lam < 0 {
		lam = -lam
	}
	r1 := scale3(h1, lam)
	r2 := scale3(h2, lam)
	r3 := cross3(r1, r2)
	t = scale3(h3, lam)
	// Nearest rotation to [r1 r2 r3] (orthogonal Procrustes).
	q := mat.NewDense(3, 3, []float64{r1[0], r2[0], r3[0], r1[1], r2[1], r3[1], r1[2], r2[2], r3[2]})
	var qs mat.SVD
	if !qs.Factorize(q, mat.SVDFull) {
		return R, t, false
	}
	var u, vt mat.Dense
	qs.UTo(&u)
	qs.VTo(&vt)
	var rm mat.Dense
	rm.Mul(&u, vt.T())
	if mat.Det(&rm) < 0 {
		return R, t, false
	}
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			R[3*i+j] = rm.At(i, j)
		}
	}
	return R, t, true
}

// normalise2 moves the points' centroid to the origin and scales their
// mean distance from it to √2 (Hartley's normalisation); it returns the
// similarity used and the moved points.
func normalise2(p [][2]float64) (T [9]float64, out [][2]float64) {
	var cx, cy float64
	for _, q := range p {
		cx += q[0]
		cy += q[1]
	}
	cx /= float64(len(p))
	cy /= float64(len(p))
	d := 0.0
	for _, q := range p {
		d += math.Hypot(q[0]-cx, q[1]-cy)
	}
	d /= float64(len(p))
	s := math.Sqrt2 / math.Max(d, 1e-300)
	out = make([][2]float64, len(p))
	for i, q := range p {
		out[i] = [2]float64{s * (q[0] - cx), s * (q[1] - cy)}
	}
	return [9]float64{s, 0, -s * cx, 0, s, -s * cy, 0, 0, 1}, out
}

// invSimilarity inverts a similarity from normalise2.
func invSimilarity(T [9]float64) [9]float64 {
	s := T[0]
	return [9]float64{1 / s, 0, -T[2] / s, 0, 1 / s, -T[5] / s, 0, 0, 1}
}

func norm3(a [3]float64) float64 { return math.Sqrt(a[0]*a[0] + a[1]*a[1] + a[2]*a[2]) }

func scale3(a [3]float64, s float64) [3]float64 { return [3]float64{a[0] * s, a[1] * s, a[2] * s} }

func cross3(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}
