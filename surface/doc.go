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
//     MaxAbsElevationM from the plane, or than the half-width of the
//     automatic disparity band (see below), are taken for mismatches and
//     dropped. Optionally (OutlierRatio) cells that fail the normalised
//     median test against their neighbours (Westerweel & Scarano 2005,
//     Exp. Fluids 39) are set to NaN.
//
// # Settling a record, then reconstructing it in parts
//
// Everything shared by the pairs of a record is settled once, before any
// map is made, by [Settle]: Plane.Frames pairs are sampled evenly over the
// whole record (by index; over its first Plane.SpanS seconds when that is
// positive), and the mean sea plane, the sea state, the disparity band and
// the grid are all measured on them. The result, a [Geometry], can be
// saved beside the rig file ([Geometry.Save]) and loaded back bit for bit
// ([LoadGeometry]). [ReconstructRange] then reconstructs any contiguous
// range of pairs with it; since each map depends only on its pair and the
// geometry, the maps of consecutive ranges are those of one run over the
// whole record, bit for bit, for any worker count ([WritePart] writes a
// range to its own file). [Run] is Settle followed by one range over the
// whole record. Sources that can seek ([IndexSeeker]) are read only where
// needed; others are read from their start (Settle then keeps its sampled
// pairs in memory: Plane.Frames pairs of images).
//
// A sampled pair of another image size than the rig's is skipped and
// named like any other; only when the first three sampled pairs all have
// another size is the rig taken for the wrong one ([SizeError]).
//
// # Mean sea plane
//
// When the rig has no sea plane (or a refit is asked for), the plane is
// fitted to the points, in the left camera's frame, of the sampled pairs:
// RANSAC (Fischler & Bolles 1981, Comm. ACM 24(6)) finds the plane with
// most points within Plane.ThresholdM, then a total-least-squares plane
// (smallest principal axis of the inliers' covariance; Pearson 1901) is
// fitted to its inliers, and refitted until the inliers settle. Spreading
// the pairs over the record averages the waves out of the plane. The fit
// is done twice: a first plane from a quarter of the pairs matched on the
// plain rectified images sets the prewarp (below), and the final plane is
// fitted to all the pairs matched with it, because single-pass semi-global
// matching biases the disparities of a steeply slanted surface (measured
// here: the mean sea level about 5 cm too low at 640×512 px).
//
// # Sea state
//
// The standard deviation σ_η of the sea-surface elevation is measured on
// the points of the sampled pairs about the mean plane ([SeaSigma]): the
// standard deviation of their heights after the matcher's gross outliers
// are clipped at 3 robust standard deviations (1.4826 times the median
// absolute deviation). The stereo error adds to it, which errs on the
// wide side for the band; a footprint smaller than the longest waves, or a
// record shorter than their period, shows less than the sea's variance,
// so the band of such records should be given a wider Band.MarginM (or
// Band.Sigmas 0, the band ±ElevationMarginM).
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
// # Disparity band
//
// With a sea plane known, the matcher searches the disparities that water
// within ±h of the mean plane can have at each pixel, where h =
// Band.Sigmas·σ_η + Band.MarginM (default 4 σ_η + 0.3 m), at most
// ElevationMarginM (which is also the band of the settle step's own
// passes, before σ_η is known): a point of the pixel's ray at height z has
// depth Z·(H − z)/H for a camera H above the plane, so its disparity
// grows as H/(H − z). One pixel each side is added for the matcher's noise,
// and MaxRangeM, when set, bounds the rays. Where the sea's depth varies
// down the image, as from a mast, the rectified image is matched in
// horizontal strips ([cvshim.StripMatcher]), each searching only the
// disparities of its own rows (of the pixels that see the grid, once it is
// known); the strips are chosen by dynamic programming to minimise the
// matcher's work and are matched in parallel. Each strip also matches the
// 16 rows above its own, so that the matcher's top-down paths have built
// up where its disparities are kept. Without a plane the plane pass
// searches from 0 to a quarter of the image width (the sea at least about
// 4·f/W baselines away), unless a range is configured; a configured range
// is searched over the whole image.
//
// # Default grid
//
// With no grid configured the grid is chosen from the sampled pairs. A
// cell is supported when it holds at least MinPoints points in at least
// Coverage of the pairs. With Grid.Extent "footprint" (the default) the
// grid is the rectangle, aligned with the world x axis, around the largest
// connected set of supported cells: it covers the sea both cameras see as
// far as the data support it, and its cells outside the footprint are NaN.
// With "inscribed" it is the largest rectangle all of whose cells are
// supported (largest rectangle of a binary matrix by the
// histogram-and-stack method). Support is counted at several spacings at
// once, from GSDFactor times the longer side of a rectified pixel's
// footprint on the mean plane at the far edge of the whole view down to a
// quarter of it; a finer spacing is eligible when the far edge of its own
// supported cells asks for no more than it (the ground sampling distance
// there, times GSDFactor, rounded up to two significant digits), so that
// cells grow where the pixel footprint grows only as far as the grid
// reaches. Of the eligible spacings the one of largest supported area
// wins, the finest of those within 10 % of it. The choice is returned
// ([GridChoice]) and written in the output's attributes. Without MaxRangeM
// the view is considered out to 10 camera heights.
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
// OpenCV's own thread pool is set to cores/Workers threads (it runs the
// strips of a pair in parallel) so that the two levels of parallelism do
// not oversubscribe the cores. The strips, like everything else settled,
// do not depend on the worker count. Memory does not grow with the
// record: at most 2·Workers pairs are in flight.
package surface
