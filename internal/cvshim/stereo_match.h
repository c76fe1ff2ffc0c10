/*
 * stereo_match.h: dense stereo matching and reprojection to 3-D, part of
 * crestspeed's OpenCV shim. The conventions of cvshim.h apply: every
 * function returns NULL or a malloc'd error message, catches every C++
 * exception, and never owns the cv::Mat objects it is given (void*
 * pointing to a caller-owned cv::Mat, which the shim may reallocate
 * through cv::Mat::create but never frees or keeps).
 *
 * The one object the shim owns is the matcher, cs_sgbm: created by
 * cs_sgbm_new, released by cs_sgbm_free. It keeps OpenCV's work buffers
 * between calls, so one matcher must not be used by two threads at once.
 */
#ifndef CRESTSPEED_STEREO_MATCH_H
#define CRESTSPEED_STEREO_MATCH_H

#ifdef __cplusplus
extern "C" {
#endif

/* cs_sgbm_params are the arguments of cv::StereoSGBM::create, in its order. */
typedef struct {
	int min_disparity;
	int num_disparities;
	int block_size;
	int p1;
	int p2;
	int disp12_max_diff;
	int pre_filter_cap;
	int uniqueness_ratio;
	int speckle_window_size;
	int speckle_range;
	int mode;
} cs_sgbm_params;

/* cs_sgbm is an opaque left matcher with its right-view twin. */
typedef struct cs_sgbm cs_sgbm;

/*
 * cs_sgbm_new creates a matcher with cv::StereoSGBM::create and, for the
 * left-right check, a right-view matcher with
 * cv::ximgproc::createRightMatcher. *out receives the matcher, to be
 * released with cs_sgbm_free.
 */
char *cs_sgbm_new(cs_sgbm_params p, cs_sgbm **out);

/* cs_sgbm_free releases a matcher (NULL is allowed); it returns NULL. */
char *cs_sgbm_free(cs_sgbm *m);

/*
 * cs_sgbm_compute runs the left matcher on two 8-bit single-channel Mats
 * of equal size; disp receives the CV_16SC1 disparity of the left view in
 * 1/16 pixel, (min_disparity - 1) * 16 where there is none.
 */
char *cs_sgbm_compute(cs_sgbm *m, void *left, void *right, void *disp);

/*
 * cs_sgbm_compute_checked runs both matchers and keeps a left disparity
 * d_L(x) only where the right view's disparity at x - round(d_L) agrees
 * with it within max_diff16 (1/16 pixel); others become invalid
 * ((min_disparity - 1) * 16). *valid_before and *valid_after receive the
 * numbers of valid pixels before and after the check.
 */
char *cs_sgbm_compute_checked(cs_sgbm *m, void *left, void *right, void *disp, int max_diff16,
                              int *valid_before, int *valid_after);

/*
 * cs_disparity_to_float converts a raw CV_16SC1 disparity map (1/16 px)
 * into a CV_32FC1 map in pixels (out, caller-owned), NaN where the raw
 * value lies outside [min_raw, max_raw).
 */
char *cs_disparity_to_float(void *disp16, void *out, int min_raw, int max_raw);

/*
 * cs_reproject wraps cv::reprojectImageTo3D (no missing-value handling,
 * CV_32FC3 output): xyz receives Q * (x, y, d, 1) dehomogenised for each
 * pixel of disp (CV_16SC1 or CV_32FC1; d is the stored value, so fold any
 * 1/16 scale into Q). Q is a row-major 4x4 double array.
 */
char *cs_reproject(void *disp, const double *Q, void *xyz);

/*
 * Matching in horizontal strips, each with its own disparity range.
 *
 * cs_strip is one strip: its disparities are written for the rows
 * [row0, row1) and computed on the rows [top, row1) (top <= row0: the rows
 * above row0 let the matcher's top-down paths build up before the rows
 * kept) and the columns [col0, width), searched over [min_disparity,
 * min_disparity + num_disparities). Columns left of col0 are NaN.
 */
typedef struct {
	int row0;
	int row1;
	int top;
	int col0;
	int min_disparity;
	int num_disparities;
} cs_strip;

/* cs_strips is an opaque set of strip matchers (a left matcher, and a
 * right-view twin when lr_check is set, per strip). */
typedef struct cs_strips cs_strips;

/*
 * cs_strips_new creates one matcher per strip with the parameters of base
 * and the strip's range. The strips must not overlap in their kept rows
 * and must be given top to bottom.
 */
char *cs_strips_new(cs_sgbm_params base, const cs_strip *strips, int n, int lr_check, cs_strips **out);

/* cs_strips_free releases the strip matchers (NULL is allowed). */
char *cs_strips_free(cs_strips *m);

/*
 * cs_strips_compute matches a rectified pair strip by strip, the strips in
 * parallel on OpenCV's thread pool (cv::parallel_for_). disp (caller-owned)
 * receives a CV_32FC1 map of the left view's disparity in pixels: for a
 * raw disparity r (1/16 px) of a strip of range [m, m + n), r / 16 where
 * (m + 1) * 16 <= r < (m + n - 1) * 16 (the two end pixels of the range,
 * where the cost minimum sits on its edge, are not used) and, with the
 * left-right check, the right view agrees within max_diff16 (as in
 * cs_sgbm_compute_checked); NaN elsewhere and in rows of no strip.
 * *valid_before and *valid_after count the pixels with a disparity before
 * and after the left-right check.
 */
char *cs_strips_compute(cs_strips *m, void *left, void *right, void *disp, int max_diff16,
                        int *valid_before, int *valid_after);

/* cs_set_num_threads wraps cv::setNumThreads; cs_get_num_threads
 * cv::getNumThreads. */
char *cs_set_num_threads(int n);
char *cs_get_num_threads(int *n);

#ifdef __cplusplus
}
#endif

#endif
