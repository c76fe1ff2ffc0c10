/*
 * cvshim.h: the C interface of crestspeed's OpenCV shim.
 *
 * Conventions, for every function declared here:
 *   - The return value is NULL on success or an error message allocated with
 *     malloc, which the caller frees with free(). C++ exceptions never cross
 *     this interface.
 *   - Small matrices travel as row-major double arrays owned by the caller;
 *     point lists as float arrays owned by the caller. The shim reads and
 *     writes them only during the call and never keeps a pointer to them.
 *   - Images and maps travel as void* pointing to a cv::Mat owned by the
 *     caller (a gocv.Mat). The shim may reallocate the Mat's data through
 *     cv::Mat::create, as any OpenCV function does, but never frees the Mat
 *     itself and never keeps the pointer.
 *   - Every cv::Mat the shim makes lives on the C++ stack and is released
 *     when the function returns, on success and on error alike.
 */
#ifndef CRESTSPEED_CVSHIM_H
#define CRESTSPEED_CVSHIM_H

#ifdef __cplusplus
extern "C" {
#endif

/* cs_criteria is cv::TermCriteria(COUNT+EPS, max_iter, eps). */
typedef struct {
	int max_iter;
	double eps;
} cs_criteria;

/*
 * cs_calibrate_camera wraps cv::calibrateCamera (the overload with
 * per-view errors). obj holds 3 floats per point, img 2 floats per point,
 * counts[v] points for view v. K (9) and D (5) are read as the initial guess
 * when flags ask for it and always receive the result. per_view receives
 * nviews RMS values.
 */
char *cs_calibrate_camera(const float *obj, const float *img, const int *counts, int nviews,
                          int width, int height, int flags, cs_criteria crit,
                          double *K, double *D, double *rms, double *per_view);

/*
 * cs_stereo_calibrate wraps cv::stereoCalibrate (the overload with per-view
 * errors). K1, D1, K2, D2 are read as the initial intrinsics and receive the
 * result; R (9), T (3), E (9), F (9) receive the extrinsics. per_view
 * receives 2*nviews values: view v's RMS in camera 1 then camera 2.
 */
char *cs_stereo_calibrate(const float *obj, const float *img1, const float *img2,
                          const int *counts, int nviews, int width, int height,
                          int flags, cs_criteria crit,
                          double *K1, double *D1, double *K2, double *D2,
                          double *R, double *T, double *E, double *F,
                          double *rms, double *per_view);

/*
 * cs_stereo_rectify wraps cv::stereoRectify. R1, R2 receive 9 values, P1, P2
 * 12, Q 16, roi1 and roi2 4 ints each (x, y, width, height).
 */
char *cs_stereo_rectify(const double *K1, const double *D1, const double *K2, const double *D2,
                        int width, int height, const double *R, const double *T,
                        int flags, double alpha, int new_width, int new_height,
                        double *R1, double *R2, double *P1, double *P2, double *Q,
                        int *roi1, int *roi2);

/*
 * cs_init_rectify_map wraps cv::initUndistortRectifyMap with CV_32FC1 maps:
 * map_x and map_y are caller-owned cv::Mat* that receive width x height maps.
 * R is 3x3, P is 3x4 (only its left 3x3 block matters to OpenCV).
 */
char *cs_init_rectify_map(const double *K, const double *D, const double *R, const double *P,
                          int width, int height, void *map_x, void *map_y);

#ifdef __cplusplus
}
#endif

#endif
