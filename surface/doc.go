// Package surface turns synchronised stereo image pairs of the sea into
// gridded sea-surface elevation maps η(t, y, x).
//
// # Model
//
// Each pair goes through five steps, all in the rig's geometry (package
// calib) and OpenCV's conventions:
//
//  1. Rectification. Both images are resampled (bilinear) through maps
//     computed once per run with cv::stereoRectify and
//     cv::initUndistortRectifyMap, so that distortion is removed and a sea
//     point appears on the same row of both rectified images.
//  2. Disparity. OpenCV's semi-global block matcher (StereoSGBM;
//     Hirschmüller 2008, IEEE TPAMI 30(2)) finds, for each pixel of the
//     rectified left image, the column offset d of its match in the right
//     image, to 1/16 pixel. Unreliable matches are removed by the
//     matcher's uniqueness test and speckle filter, and by a left-right
//     consistency check: the right view is matched too and a left
//     disparity is kept only where the right view's disparity at the
//     matched pixel agrees within a tolerance (Fua 1993; Hirschmüller 2008
//     §3.4).
//  3. Reprojection. A disparity d at rectified pixel (u, v) is the point
//     Q·(u, v, d, 1)ᵀ of the rectified left camera frame, at depth
//     Z = f·B/d (f the rectified focal length, B the baseline). Depth
//     errors grow as σ_Z ≈ Z²·σ_d/(f·B) for a disparity error σ_d (common
//     practice; Hartley & Zisserman, Multiple View Geometry, 2004).
//  4. World frame. The point is turned back into the left camera's frame
//     (R1ᵀ, R1 the left rectifying rotation) and then into the world frame
//     of the mean sea plane (calib.Plane.World: z up from the plane, x the
//     horizontal projection of the left camera's optical axis, origin
//     below the left camera). Steps 3 and 4 are one 4×4 matrix,
//     [W·R1ᵀ | T_W]·Q, applied by cv::reprojectImageTo3D.
//  5. Gridding. Points are binned on a regular (x, y) grid; a cell's
//     elevation is the mean z of its points when it holds at least
//     MinPoints of them, NaN otherwise (no interpolation). The number of
//     points per cell is kept as a quality measure. Points farther than
//     MaxAbsElevationM from the plane are taken for mismatches and dropped.
//
// # Mean sea plane
//
// When the rig has no sea plane (or a refit is asked for), the plane is
// fitted to the points, in the left camera's frame, of Plane.Frames pairs
// spread over the first Plane.SpanS seconds of the record: RANSAC
// (Fischler & Bolles 1981, Comm. ACM 24(6)) finds the plane with most
// points within Plane.ThresholdM, then a total-least-squares plane
// (smallest principal axis of the inliers' covariance; Pearson 1901) is
// fitted to its inliers, and refitted until the inliers settle. Spreading
// the pairs over several wave periods averages the waves out of the plane.
// The fit is done twice: a first plane from a quarter of the pairs matched
// on the plain rectified images sets the prewarp (below), and the final
// plane is fitted to all the pairs matched with it, because single-pass
// semi-global matching biases the disparities of a steeply slanted surface
// (measured here: the mean sea level about 5 cm too low at 640×512 px).
//
// # Prewarp
//
// With a plane known and the automatic disparity range, the right image's
// rectification map is sheared by the plane's disparity d_p = a·u + b·v + c
// (affine in the rectified pixel (u, v) for any plane), so that the sea
// plane has zero disparity and the matcher searches only the waves'
// residual disparity e about it: a narrower search (faster), no loss of the
// left image band a wide search cannot match, and a smoothness prior that
// follows the sea rather than fronto-parallel planes. The disparity of the
// plain rectified pair is d = d_p + (1 − a)·e, folded into the reprojection
// matrix.
//
// # Disparity search range
//
// With a sea plane known, the range searched is the one the sea can
// produce: the disparities (residual ones, when prewarped), over the whole
// rectified image, of the planes ElevationMarginM above and below the mean
// plane (within MaxRangeM when set). Without a plane the plane pass searches from 0 to a quarter of the
// image width (the sea at least about 4·f/W baselines away), unless a
// range is configured.
//
// # Default grid
//
// With no grid configured the grid is chosen from the plane-pass pairs:
// the extent is the largest rectangle aligned with the world x axis whose
// cells hold at least MinPoints points in at least Coverage of the pairs
// (largest rectangle of a binary matrix by the histogram-and-stack
// method), and the spacing GSDFactor times the longer side of a rectified
// pixel's footprint on the mean plane at the far edge of that rectangle
// (the ground sampling distance, rounded up to two significant digits).
// Coverage is counted at several spacings at once, from the one the far
// edge of the whole view asks for down to a quarter of it; the largest
// qualifying rectangle wins (the finest spacing among those within 10 % of
// its area). Without MaxRangeM the view is considered out to 10 camera
// heights.
//
// # Whitecaps
//
// With Options.Foam enabled, each rectified left image is searched for foam
// (FoamDetector): pixels much brighter than the local background (a median
// of block means) seed regions grown by hysteresis, cleaned by opening and
// closing and kept above a minimum area; a stereo check keeps a pixel only
// when its match in the right image is bright too, since sky glints are seen
// by one camera at a time. Foam pixels vote for grid cells through their 3-D
// points, or through their ray's intersection with the sea plane where
// disparity is missing, and a cell is foam when at least CellFraction of its
// pixels are. Saturated and black images are skipped and counted, never
// taken as foam; their elevation map is still written.
//
// # Parallelism and determinism
//
// Pairs are read in time order by one goroutine, reconstructed by Workers
// goroutines (each with its own matcher and buffers) and handed to the
// [Sink] in time order, so the output is the same for any worker count.
// OpenCV's own thread pool is set to cores/Workers threads so that the two
// levels of parallelism do not oversubscribe the cores. Memory does not
// grow with the record: at most 2·Workers pairs are in flight.
package surface
