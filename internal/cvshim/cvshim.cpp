// cvshim.cpp: OpenCV calls that gocv v0.31.0 does not wrap, behind the C
// interface of cvshim.h. Every function catches every exception and returns
// it as a malloc'd message; all cv::Mat values made here are locals (RAII),
// so they are released on every path.

#include "cvshim.h"

#include <cstdlib>
#include <cstring>
#include <exception>
#include <stdexcept>
#include <string>
#include <vector>

#include <opencv2/calib3d.hpp>
#include <opencv2/core.hpp>

#include "shim_errors.hpp"

namespace {

using cvshim_errors::errorString;
using cvshim_errors::fail;

// pointViews makes per-view Mat headers over caller-owned float arrays of
// dim floats per point. The headers do not own the data.
std::vector<cv::Mat> pointViews(const float *data, const int *counts, int nviews, int dim) {
	std::vector<cv::Mat> views;
	views.reserve(nviews);
	size_t off = 0;
	for (int v = 0; v < nviews; v++) {
		views.push_back(cv::Mat(counts[v], 1, CV_MAKETYPE(CV_32F, dim),
		                        const_cast<float *>(data + off)));
		off += static_cast<size_t>(counts[v]) * dim;
	}
	return views;
}

// matIn copies a caller-owned double array into a new rows x cols Mat.
cv::Mat matIn(const double *src, int rows, int cols) {
	return cv::Mat(rows, cols, CV_64F, const_cast<double *>(src)).clone();
}

// copyOut writes the first n elements of m, converted to double, to dst.
void copyOut(const cv::Mat &m, double *dst, int n, const char *name) {
	if (m.empty() || static_cast<int>(m.total() * m.channels()) < n) {
		throw std::runtime_error(std::string("OpenCV returned no ") + name);
	}
	cv::Mat d;
	m.reshape(1, 1).convertTo(d, CV_64F);
	const double *p = d.ptr<double>(0);
	for (int i = 0; i < n; i++) {
		dst[i] = p[i];
	}
}

// distIn makes a 1x5 distortion row from a caller-owned array.
cv::Mat distIn(const double *D) { return matIn(D, 1, 5); }

cv::TermCriteria criteria(cs_criteria c) {
	return cv::TermCriteria(cv::TermCriteria::COUNT + cv::TermCriteria::EPS, c.max_iter, c.eps);
}

void rectOut(const cv::Rect &r, int *dst) {
	dst[0] = r.x;
	dst[1] = r.y;
	dst[2] = r.width;
	dst[3] = r.height;
}

}  // namespace

extern "C" {

char *cs_calibrate_camera(const float *obj, const float *img, const int *counts, int nviews,
                          int width, int height, int flags, cs_criteria crit,
                          double *K, double *D, double *rms, double *per_view) {
	try {
		std::vector<cv::Mat> objv = pointViews(obj, counts, nviews, 3);
		std::vector<cv::Mat> imgv = pointViews(img, counts, nviews, 2);
		cv::Mat k = matIn(K, 3, 3), d = distIn(D);
		std::vector<cv::Mat> rvecs, tvecs;
		cv::Mat sdi, sde, pve;
		*rms = cv::calibrateCamera(objv, imgv, cv::Size(width, height), k, d, rvecs, tvecs,
		                           sdi, sde, pve, flags, criteria(crit));
		copyOut(k, K, 9, "camera matrix");
		copyOut(d, D, 5, "distortion coefficients");
		copyOut(pve, per_view, nviews, "per-view errors");
		return nullptr;
	} catch (...) {
		return fail("cv::calibrateCamera");
	}
}

char *cs_stereo_calibrate(const float *obj, const float *img1, const float *img2,
                          const int *counts, int nviews, int width, int height,
                          int flags, cs_criteria crit,
                          double *K1, double *D1, double *K2, double *D2,
                          double *R, double *T, double *E, double *F,
                          double *rms, double *per_view) {
	try {
		std::vector<cv::Mat> objv = pointViews(obj, counts, nviews, 3);
		std::vector<cv::Mat> imgv1 = pointViews(img1, counts, nviews, 2);
		std::vector<cv::Mat> imgv2 = pointViews(img2, counts, nviews, 2);
		cv::Mat k1 = matIn(K1, 3, 3), d1 = distIn(D1);
		cv::Mat k2 = matIn(K2, 3, 3), d2 = distIn(D2);
		cv::Mat r, t, e, f, pve;
		if (flags & cv::CALIB_USE_EXTRINSIC_GUESS) {
			r = matIn(R, 3, 3);
			t = matIn(T, 3, 1);
		}
		*rms = cv::stereoCalibrate(objv, imgv1, imgv2, k1, d1, k2, d2, cv::Size(width, height),
		                           r, t, e, f, pve, flags, criteria(crit));
		copyOut(k1, K1, 9, "camera matrix 1");
		copyOut(d1, D1, 5, "distortion coefficients 1");
		copyOut(k2, K2, 9, "camera matrix 2");
		copyOut(d2, D2, 5, "distortion coefficients 2");
		copyOut(r, R, 9, "rotation");
		copyOut(t, T, 3, "translation");
		copyOut(e, E, 9, "essential matrix");
		copyOut(f, F, 9, "fundamental matrix");
		copyOut(pve, per_view, 2 * nviews, "per-view errors");
		return nullptr;
	} catch (...) {
		return fail("cv::stereoCalibrate");
	}
}

char *cs_stereo_rectify(const double *K1, const double *D1, const double *K2, const double *D2,
                        int width, int height, const double *R, const double *T,
                        int flags, double alpha, int new_width, int new_height,
                        double *R1, double *R2, double *P1, double *P2, double *Q,
                        int *roi1, int *roi2) {
	try {
		cv::Mat k1 = matIn(K1, 3, 3), d1 = distIn(D1);
		cv::Mat k2 = matIn(K2, 3, 3), d2 = distIn(D2);
		cv::Mat r = matIn(R, 3, 3), t = matIn(T, 3, 1);
		cv::Mat r1, r2, p1, p2, q;
		cv::Rect v1, v2;
		cv::stereoRectify(k1, d1, k2, d2, cv::Size(width, height), r, t, r1, r2, p1, p2, q,
		                  flags, alpha, cv::Size(new_width, new_height), &v1, &v2);
		copyOut(r1, R1, 9, "rectifying rotation 1");
		copyOut(r2, R2, 9, "rectifying rotation 2");
		copyOut(p1, P1, 12, "projection matrix 1");
		copyOut(p2, P2, 12, "projection matrix 2");
		copyOut(q, Q, 16, "disparity-to-depth matrix");
		rectOut(v1, roi1);
		rectOut(v2, roi2);
		return nullptr;
	} catch (...) {
		return fail("cv::stereoRectify");
	}
}

char *cs_init_rectify_map(const double *K, const double *D, const double *R, const double *P,
                          int width, int height, void *map_x, void *map_y) {
	try {
		if (map_x == nullptr || map_y == nullptr) {
			throw std::invalid_argument("map Mat is null");
		}
		cv::Mat k = matIn(K, 3, 3), d = distIn(D);
		cv::Mat r = matIn(R, 3, 3), p = matIn(P, 3, 4);
		cv::initUndistortRectifyMap(k, d, r, p, cv::Size(width, height), CV_32FC1,
		                            *static_cast<cv::Mat *>(map_x),
		                            *static_cast<cv::Mat *>(map_y));
		return nullptr;
	} catch (...) {
		return fail("cv::initUndistortRectifyMap");
	}
}

}  // extern "C"
