// Package ingest turns recordings into a stream of frames for the later
// stages of crestspeed, one frame at a time, with the time base of the record
// and a count of everything it had to skip. It knows about files, times and
// validity masks; it knows nothing about crests.
//
// # Elevation maps
//
// An elevation-map record is a NetCDF file (NetCDF-4 or classic) following
// the CF-1.8 conventions: the sea surface η(t, y, x) sampled on a fixed,
// regular horizontal grid at a sequence of instants. The tool's own layout is
//
//	dimensions:  time (usually unlimited), y, x
//	time(time)   seconds, CF units "seconds since <reference instant>"
//	y(y), x(x)   cell centres in metres, strictly increasing, regular spacing
//	eta(time, y, x)   float32 metres, positive up from the mean water level;
//	                  NaN or _FillValue where the surface is unknown
//	foam(time, y, x)  optional byte mask, non-zero where the surface is whitecap
//	:water_depth_m    optional global attribute; absent or <= 0 means deep water
//
// and files of other origins are read as they come ([ElevationOptions]): the
// elevation variable is the one named in the settings, else the one with a
// CF sea-surface height standard_name ([ElevationStandardNames]), else eta;
// its three dimensions may come in any order, found by the CF axis or
// standard_name of their coordinate variables, their names, or the settings;
// a decreasing axis is flipped; 2-D coordinate arrays x(y,x), y(y,x) are
// accepted when they describe a regular grid; CF packed data (integers with
// scale_factor and add_offset, CF-1.8 §8.1) are unpacked, and elevations in
// centimetres or millimetres converted. A grid cell (ix, iy) of frame k
// holds η at (x[ix], y[iy], time[k]); a [Frame] stores the cells row by row,
// Eta[iy*nx+ix], so a row runs along x.
//
// [OpenElevation] checks the whole contract before the first frame is read
// and reports any breach as one sentence naming the file and what to change
// or which setting to set. A classic-format header is checked in Go first,
// and a file shorter than its header says is refused as truncated.
// [ElevationSource.Next] then hands out one frame per call into the
// caller's [Frame], reusing its slices. Underneath, frames are read a chunk
// row along time at a time (every frame of one chunk along the time
// dimension), so that each chunk is decompressed once per pass whatever the
// chunking, and the next block is read on a goroutine while the caller works;
// memory is two such blocks, bounded by ElevationOptions.ReadBlockLimitMB.
//
// Values equal to _FillValue or missing_value, outside valid_range,
// valid_min or valid_max (CF-1.8 §2.5.1, tested on the stored values), and
// non-finite values become NaN and are marked invalid in Frame.Valid. So do
// implausible elevations: beyond ±MaxAbsElevationM, or spikes farther than
// SpikeFactor robust standard deviations from the frame's median; those are
// counted by reason in [ElevationSource.MaskedCells].
//
// Several files in time order (a list, a glob, or the index of a
// partitioned run) are read as one record by a [MultiSource], with the same
// methods; [OpenElevations] picks the kind from the input.
//
// # Time base and skipped frames
//
// The frame interval is the median of the time steps. A step longer than
// GapFactor (default 1.5) times the median is a dropped-frame gap; the number
// of frames missing there is the step divided by the median, rounded, less
// one. Frames in which every cell is unknown, and frames that cannot be read
// (a damaged chunk), are skipped by Next; a record with more unreadable
// frames than MaxUnreadableFraction is refused. All are counted by reason in
// [ElevationSource.Skipped] so that nothing is lost silently; the gaps
// themselves are listed by [ElevationSource.Gaps].
//
// # Writing
//
// [CreateElevation] writes the tool's layout (it is also the output of
// stereo reconstruction): an unlimited time dimension, eta chunked one frame
// per chunk and deflated, CF-1.8 attributes (units, axis, _FillValue NaN,
// foam flags), ACDD-1.3 discovery attributes (title, summary, time and, with
// a [Georef], space coverage) and provenance (source, history,
// water_depth_m). The file is written under a temporary name and appears
// under its final name only on [ElevationWriter.Commit].
//
// # Stereo frames
//
// A [StereoSource] yields the synchronised image pairs of a stereo rig as
// [StereoFrame] values (two 8-bit grey gocv.Mat images and a time in
// seconds), in time order, one pair per call to Next: [OpenPairs] reads image
// files (PNG, TIFF, JPEG; a record folder or left and right globs), timed by
// a timestamps file (frame,time_s,left,right), by the time or frame number in
// the file names, or by a frame rate, and pairs left with right by that time
// or number; [OpenVideoPair] and [OpenSideBySideVideo] read video files
// through OpenCV, timed by the stream or by a frame rate. Problems with the
// whole record (no files, no time base, a size that does not match the rig
// for video) are errors at open; problems with single frames (a missing
// partner, an unreadable image, a wrong size, a time going backwards or
// repeated) are skipped and counted by reason in Skipped, like the frames of
// elevation maps.
//
// # Times, absolute time and skipped files
//
// Every source of stereo pairs or point clouds says in one sentence how it
// timed its frames (TimeRule: which column of which timestamps file, or how
// the file names were read), gives the absolute instant of time 0 when the
// record has one (Origin: the start_utc setting, the utc column of the
// timestamps file, or the EXIF DateTimeOriginal of the images, see
// [ReadCaptureTime]), and names the first [MaxNamedSkips] items it skipped
// with their reasons ([SkipList], from SkippedFiles). A bad row of a
// timestamps file costs that row only: rows that cannot be read, times that
// are not finite, farther than the longest plausible record from the median
// time, or out of order are skipped, counted and named by line.
//
// # Point clouds
//
// [OpenPoints] reads a record of point clouds, one file per frame (PLY,
// ASCII or binary, through [PLYReader]; text columns through
// [XYZReader]), timed like image pairs: by a timestamps file
// (frame,time_s,file), by the file names, or by a frame rate. Each call to
// Next reads one file into the caller's reused buffer; a malformed file is
// skipped and named with the line or byte offset of the fault.
package ingest
