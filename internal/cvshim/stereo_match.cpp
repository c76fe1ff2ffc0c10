// stereo_match.cpp: semi-global block matching, the left-right check and
// reprojection to 3-D, behind the C interface of stereo_match.h. Every
// function catches every exception and returns it as a malloc'd message;
// the cv::Mat values made here are locals (RAII) or members of the matcher,
// which cs_sgbm_free releases.

#include "stereo_match.h"

#include <cmath>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <vector>
#include <exception>
#include <stdexcept>
#include <string>

#include <opencv2/calib3d.hpp>
#include <opencv2/core.hpp>
#include <opencv2/ximgproc/disparity_filter.hpp>

#include "shim_errors.hpp"

struct cs_strip_matcher {
	cs_strip s;
	cv::Ptr<cv::StereoSGBM> left;
	cv::Ptr<cv::StereoMatcher> right;  // empty without the left-right check
	cv::Mat dispLeft, dispRight;        // work buffers, reused
	int before, after;                  // counts of the last call
};

struct cs_strips {
	std::vector<cs_strip_matcher> strips;
	bool lrCheck;
};

struct cs_sgbm {
	cv::Ptr<cv::StereoSGBM> left;
	cv::Ptr<cv::StereoMatcher> right;
	cv::Mat dispRight;  // work buffer of the right view, reused
	int minDisparity;
	int numDisparities;
};

namespace {

using cvshim_errors::errorString;
using cvshim_errors::fail;

cv::Mat &matRef(void *p, const char *name) {
	if (p == nullptr) {
		throw std::invalid_argument(std::string(name) + " Mat is null");
	}
	return *static_cast<cv::Mat *>(p);
}

void checkPair(const cv::Mat &l, const cv::Mat &r) {
	if (l.empty() || r.empty()) {
		throw std::invalid_argument("an input image is empty");
	}
	if (l.type() != CV_8UC1 || r.type() != CV_8UC1) {
		throw std::invalid_argument("images must be 8-bit single-channel (grey)");
	}
	if (l.size() != r.size()) {
		throw std::invalid_argument("left and right images differ in size");
	}
}

}  // namespace

extern "C" {

char *cs_sgbm_new(cs_sgbm_params p, cs_sgbm **out) {
	try {
		if (out == nullptr) {
			throw std::invalid_argument("no place for the matcher");
		}
		*out = nullptr;
		cs_sgbm *m = new cs_sgbm();
		try {
			m->left = cv::StereoSGBM::create(p.min_disparity, p.num_disparities, p.block_size,
			                                 p.p1, p.p2, p.disp12_max_diff, p.pre_filter_cap,
			                                 p.uniqueness_ratio, p.speckle_window_size,
			                                 p.speckle_range, p.mode);
			m->right = cv::ximgproc::createRightMatcher(m->left);
			m->minDisparity = p.min_disparity;
			m->numDisparities = p.num_disparities;
		} catch (...) {
			delete m;
			throw;
		}
		*out = m;
		return nullptr;
	} catch (...) {
		return fail("cv::StereoSGBM::create");
	}
}

char *cs_sgbm_free(cs_sgbm *m) {
	try {
		delete m;
		return nullptr;
	} catch (...) {
		return fail("cs_sgbm_free");
	}
}

char *cs_sgbm_compute(cs_sgbm *m, void *left, void *right, void *disp) {
	try {
		if (m == nullptr) {
			throw std::invalid_argument("matcher is null");
		}
		cv::Mat &l = matRef(left, "left image"), &r = matRef(right, "right image");
		cv::Mat &d = matRef(disp, "disparity");
		checkPair(l, r);
		m->left->compute(l, r, d);
		return nullptr;
	} catch (...) {
		return fail("cv::StereoSGBM::compute");
	}
}

char *cs_sgbm_compute_checked(cs_sgbm *m, void *left, void *right, void *disp, int max_diff16,
                              int *valid_before, int *valid_after) {
	try {
		if (m == nullptr) {
			throw std::invalid_argument("matcher is null");
		}
		if (max_diff16 < 0) {
			throw std::invalid_argument("left-right tolerance is negative");
		}
		cv::Mat &l = matRef(left, "left image"), &r = matRef(right, "right image");
		cv::Mat &d = matRef(disp, "disparity");
		checkPair(l, r);
		m->left->compute(l, r, d);
		// The right view's matcher searches the mirrored range, so its
		// disparities are the negated left-view disparities:
		// right(x) ~ left(x - dR), dR in [-(min+num)+1, -min].
		m->right->compute(r, l, m->dispRight);
		if (d.type() != CV_16SC1 || m->dispRight.type() != CV_16SC1 || m->dispRight.size() != d.size()) {
			throw std::runtime_error("StereoSGBM returned an unexpected disparity type");
		}
		const int invalidL = (m->minDisparity - 1) * 16;
		const int minValidL = m->minDisparity * 16;
		const int minValidR = (-(m->minDisparity + m->numDisparities) + 1) * 16;
		const int cols = d.cols;
		int before = 0, after = 0;
		for (int y = 0; y < d.rows; y++) {
			short *pl = d.ptr<short>(y);
			const short *pr = m->dispRight.ptr<short>(y);
			for (int x = 0; x < cols; x++) {
				const int dl = pl[x];
				if (dl < minValidL) {
					continue;
				}
				before++;
				// Nearest right-view pixel of the match, rounding half up.
				const int xr = x - ((dl + 8) >> 4);
				bool ok = xr >= 0 && xr < cols;
				if (ok) {
					const int dr = pr[xr];
					ok = dr >= minValidR && std::abs(dl + dr) <= max_diff16;
				}
				if (ok) {
					after++;
				} else {
					pl[x] = static_cast<short>(invalidL);
				}
			}
		}
		if (valid_before != nullptr) {
			*valid_before = before;
		}
		if (valid_after != nullptr) {
			*valid_after = after;
		}
		return nullptr;
	} catch (...) {
		return fail("cv::StereoSGBM::compute (left-right checked)");
	}
}

char *cs_disparity_to_float(void *disp16, void *out, int min_raw, int max_raw) {
	try {
		cv::Mat &d = matRef(disp16, "disparity");
		cv::Mat &o = matRef(out, "disparity in pixels");
		if (d.empty() || d.type() != CV_16SC1) {
			throw std::invalid_argument("disparity must be a non-empty CV_16SC1 Mat");
		}
		o.create(d.size(), CV_32FC1);
		const float nan = std::numeric_limits<float>::quiet_NaN();
		const float scale = 1.0f / 16;
		for (int y = 0; y < d.rows; y++) {
			const short *dp = d.ptr<short>(y);
			float *op = o.ptr<float>(y);
			for (int x = 0; x < d.cols; x++) {
				const int raw = dp[x];
				op[x] = (raw < min_raw || raw >= max_raw) ? nan : raw * scale;
			}
		}
		return nullptr;
	} catch (...) {
		return fail("disparity conversion");
	}
}

char *cs_reproject(void *disp, const double *Q, void *xyz) {
	try {
		cv::Mat &d = matRef(disp, "disparity");
		cv::Mat &out = matRef(xyz, "3-D image");
		if (Q == nullptr) {
			throw std::invalid_argument("Q is null");
		}
		cv::Mat q = cv::Mat(4, 4, CV_64F, const_cast<double *>(Q)).clone();
		cv::reprojectImageTo3D(d, out, q, false, CV_32F);
		return nullptr;
	} catch (...) {
		return fail("cv::reprojectImageTo3D");
	}
}

char *cs_strips_new(cs_sgbm_params p, const cs_strip *strips, int n, int lr_check, cs_strips **out) {
	try {
		if (out == nullptr) {
			throw std::invalid_argument("no place for the strip matchers");
		}
		*out = nullptr;
		if (strips == nullptr || n < 1) {
			throw std::invalid_argument("no strips given");
		}
		cs_strips *m = new cs_strips();
		try {
			m->lrCheck = lr_check != 0;
			m->strips.resize(n);
			int prev = 0;
			for (int i = 0; i < n; i++) {
				const cs_strip &s = strips[i];
				if (s.top < 0 || s.top > s.row0 || s.row0 >= s.row1 || s.row0 < prev) {
					throw std::invalid_argument("strip rows are not increasing and disjoint");
				}
				if (s.col0 < 0) {
					throw std::invalid_argument("a strip's first column is negative");
				}
				if (s.num_disparities < 16 || s.num_disparities % 16 != 0) {
					throw std::invalid_argument("a strip's number of disparities is not a positive multiple of 16");
				}
				prev = s.row1;
				cs_strip_matcher &sm = m->strips[i];
				sm.s = s;
				sm.left = cv::StereoSGBM::create(s.min_disparity, s.num_disparities, p.block_size,
				                                  p.p1, p.p2, p.disp12_max_diff, p.pre_filter_cap,
				                                  p.uniqueness_ratio, p.speckle_window_size,
				                                  p.speckle_range, p.mode);
				if (m->lrCheck) {
					sm.right = cv::ximgproc::createRightMatcher(sm.left);
				}
				sm.before = sm.after = 0;
			}
		} catch (...) {
			delete m;
			throw;
		}
		*out = m;
		return nullptr;
	} catch (...) {
		return fail("strip matchers");
	}
}

char *cs_strips_free(cs_strips *m) {
	try {
		delete m;
		return nullptr;
	} catch (...) {
		return fail("cs_strips_free");
	}
}

namespace {

// matchStrip matches one strip and writes its kept rows of out (CV_32FC1).
void matchStrip(cs_strip_matcher &sm, bool lrCheck, const cv::Mat &l, const cv::Mat &r, cv::Mat &out,
                int maxDiff16) {
	const cs_strip &s = sm.s;
	const cv::Rect roi(s.col0, s.top, l.cols - s.col0, s.row1 - s.top);
	const cv::Mat lr = l(roi), rr = r(roi);  // headers, no copy
	sm.left->compute(lr, rr, sm.dispLeft);
	if (lrCheck) {
		sm.right->compute(rr, lr, sm.dispRight);
		if (sm.dispRight.type() != CV_16SC1 || sm.dispRight.size() != sm.dispLeft.size()) {
			throw std::runtime_error("StereoSGBM returned an unexpected disparity type");
		}
	}
	if (sm.dispLeft.type() != CV_16SC1 || sm.dispLeft.rows != s.row1 - s.top || sm.dispLeft.cols != out.cols - s.col0) {
		throw std::runtime_error("StereoSGBM returned an unexpected disparity type");
	}
	const int minValidL = s.min_disparity * 16;
	const int minValidR = (-(s.min_disparity + s.num_disparities) + 1) * 16;
	const int useLo = (s.min_disparity + 1) * 16, useHi = (s.min_disparity + s.num_disparities - 1) * 16;
	const float nan = std::numeric_limits<float>::quiet_NaN();
	const float scale = 1.0f / 16;
	const int cols = out.cols - s.col0;  // of the strip
	int before = 0, after = 0;
	for (int y = s.row0; y < s.row1; y++) {
		const short *pl = sm.dispLeft.ptr<short>(y - s.top);
		const short *pr = lrCheck ? sm.dispRight.ptr<short>(y - s.top) : nullptr;
		float *row = out.ptr<float>(y);
		for (int x = 0; x < s.col0; x++) {
			row[x] = nan;
		}
		float *po = row + s.col0;
		for (int x = 0; x < cols; x++) {
			const int dl = pl[x];
			po[x] = nan;
			if (dl < minValidL) {
				continue;
			}
			before++;
			if (lrCheck) {
				// As in cs_sgbm_compute_checked.
				const int xr = x - ((dl + 8) >> 4);
				if (xr < 0 || xr >= cols) {
					continue;
				}
				const int dr = pr[xr];
				if (dr < minValidR || std::abs(dl + dr) > maxDiff16) {
					continue;
				}
			}
			after++;
			if (dl >= useLo && dl < useHi) {
				po[x] = dl * scale;
			}
		}
	}
	sm.before = before;
	sm.after = after;
}

}  // namespace

char *cs_strips_compute(cs_strips *m, void *left, void *right, void *disp, int max_diff16,
                        int *valid_before, int *valid_after) {
	try {
		if (m == nullptr) {
			throw std::invalid_argument("strip matchers are null");
		}
		if (max_diff16 < 0) {
			throw std::invalid_argument("left-right tolerance is negative");
		}
		cv::Mat &l = matRef(left, "left image"), &r = matRef(right, "right image");
		cv::Mat &d = matRef(disp, "disparity");
		checkPair(l, r);
		if (m->strips.back().s.row1 > l.rows) {
			throw std::invalid_argument("the strips reach below the image");
		}
		for (const cs_strip_matcher &sm : m->strips) {
			if (sm.s.col0 + sm.s.num_disparities + 16 > l.cols) {
				throw std::invalid_argument("a strip's first column leaves too few columns to match");
			}
		}
		d.create(l.size(), CV_32FC1);
		// Rows of no strip.
		const float nan = std::numeric_limits<float>::quiet_NaN();
		int y = 0;
		for (const cs_strip_matcher &sm : m->strips) {
			for (; y < sm.s.row0; y++) {
				d.row(y).setTo(cv::Scalar(nan));
			}
			y = sm.s.row1;
		}
		for (; y < l.rows; y++) {
			d.row(y).setTo(cv::Scalar(nan));
		}
		const bool lrCheck = m->lrCheck;
		std::vector<std::string> errs(m->strips.size());
		cv::parallel_for_(cv::Range(0, static_cast<int>(m->strips.size())), [&](const cv::Range &range) {
			for (int i = range.start; i < range.end; i++) {
				try {
					matchStrip(m->strips[i], lrCheck, l, r, d, max_diff16);
				} catch (const cv::Exception &e) {
					errs[i] = e.err;
				} catch (const std::exception &e) {
					errs[i] = e.what();
				} catch (...) {
					errs[i] = "unknown C++ exception";
				}
			}
		}, static_cast<double>(m->strips.size()));
		int before = 0, after = 0;
		for (size_t i = 0; i < m->strips.size(); i++) {
			if (!errs[i].empty()) {
				throw std::runtime_error("strip " + std::to_string(i) + ": " + errs[i]);
			}
			before += m->strips[i].before;
			after += m->strips[i].after;
		}
		if (valid_before != nullptr) {
			*valid_before = before;
		}
		if (valid_after != nullptr) {
			*valid_after = after;
		}
		return nullptr;
	} catch (...) {
		return fail("cv::StereoSGBM::compute (strips)");
	}
}

char *cs_set_num_threads(int n) {
	try {
		cv::setNumThreads(n);
		return nullptr;
	} catch (...) {
		return fail("cv::setNumThreads");
	}
}

char *cs_get_num_threads(int *n) {
	try {
		*n = cv::getNumThreads();
		return nullptr;
	} catch (...) {
		return fail("cv::getNumThreads");
	}
}

}  // extern "C"
