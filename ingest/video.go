package ingest

import (
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"os"

	"gocv.io/x/gocv"
)

// Reasons for skipping video frames, used in [SkipCounts] besides
// SkipTimeOrder, SkipWrongSize and SkipUnreadable.
const (
	// SkipVideoLength: frames of one video beyond the last frame of the
	// other.
	SkipVideoLength = "no partner frame (one video ends before the other)"
	// SkipUnsynced: a pair whose left and right stream times differ by
	// more than half a frame interval.
	SkipUnsynced = "left and right frame times differ"
)

// VideoOptions configure [OpenVideoPair] and [OpenSideBySideVideo]. The zero
// value times frames by the stream and checks no size.
type VideoOptions struct {
	// FPS, when non-zero, is the frame rate in Hz, and frame k is at time
	// k/FPS, whatever the stream says. Use it when the container's
	// timestamps are missing or wrong.
	FPS float64
	// ExpectedSize, when non-zero, is the image size of the rig (width X,
	// height Y; for a side-by-side video the size of one half). A video of
	// another size is an error at open; a frame of another size later on
	// is skipped and counted.
	ExpectedSize image.Point
	// StartUTC, when set, is the absolute instant of the video's time 0
	// (ISO 8601, see [ParseInstant]). Default "": none.
	StartUTC string
}

// videoBackends are the OpenCV video readers tried, in order: FFmpeg, then
// OpenCV's own MJPEG reader. The image-sequence reader is left out on
// purpose, since it would turn a numbered file name into a pattern.
var videoBackends = []gocv.VideoCaptureAPI{gocv.VideoCaptureFFmpeg, gocv.VideoCaptureOpencvMjpeg}

// videoSide is one opened video file with a frame buffer.
type videoSide struct {
	path  string
	which string // "left", "right" or "side-by-side"
	vc    *gocv.VideoCapture
	buf   gocv.Mat // last decoded frame, as the decoder gives it
	t     float64  // stream time of buf, seconds (NaN when not given)
	fps   float64  // container frame rate; 0 when unknown
	count int      // container frame count; 0 when unknown
}

func openVideo(path, which string) (*videoSide, error) {
	st, err := os.Stat(path)
	switch {
	case err != nil && errors.Is(err, os.ErrNotExist):
		return nil, fmt.Errorf("ingest: %s video file %s does not exist; check the path", which, path)
	case err != nil:
		return nil, fmt.Errorf("ingest: %s video file %s cannot be read (%v); check its permissions", which, path, err)
	case !st.Mode().IsRegular():
		return nil, fmt.Errorf("ingest: %s video %s is not a regular file; give the path of a video file", which, path)
	}
	var vc *gocv.VideoCapture
	for _, api := range videoBackends {
		c, err := gocv.VideoCaptureFileWithAPI(path, api)
		if err == nil && c.IsOpened() {
			vc = c
			break
		}
		c.Close()
	}
	if vc == nil {
		return nil, fmt.Errorf("ingest: %s video file %s cannot be opened by OpenCV (damaged, or in a format without a decoder here); check the file or convert it to MJPG or H.264", which, path)
	}
	v := &videoSide{path: path, which: which, vc: vc, buf: gocv.NewMat()}
	if fps := vc.Get(gocv.VideoCaptureFPS); fps >= MinFPS && fps <= MaxFPS {
		v.fps = fps
	}
	if n := vc.Get(gocv.VideoCaptureFrameCount); n > 0 && n < math.MaxInt32 {
		v.count = int(n)
	}
	return v, nil
}

// read decodes the next frame into buf and notes its stream time.
func (v *videoSide) read() bool {
	if !v.vc.Read(&v.buf) || v.buf.Empty() {
		return false
	}
	v.t = math.NaN()
	if ms := v.vc.Get(gocv.VideoCapturePosMsec); ms >= 0 && !math.IsInf(ms, 0) {
		v.t = ms * 1e-3
	}
	return true
}

func (v *videoSide) close() {
	if v == nil {
		return
	}
	v.buf.Close()
	v.vc.Close()
}

// VideoPairSource streams stereo pairs from video: two synchronised files,
// frame k of one with frame k of the other, or one side-by-side file. It is
// not safe for concurrent use.
type VideoPairSource struct {
	left, right *videoSide // right is nil for side-by-side video
	size        image.Point
	fps         float64 // time base for indexTime and the sync tolerance; 0 if unknown
	indexTime   bool    // time = frame / fps instead of the stream time
	n           int

	frame    int  // index of the frame in the buffers
	have     bool // the buffers hold a frame not yet examined
	ended    bool
	haveLast bool
	lastTime float64
	log      skipLog
	rule     string
	origin   TimeOrigin
	hasOrig  bool
	closed   bool
}

// OpenVideoPair opens two synchronised videos, the left and the right
// camera, and pairs their frames by position: frame k of one with frame k
// of the other. Both files are opened and their first frames decoded before
// it returns, so a missing, damaged or unsuitable file is an error (one
// sentence) before any work starts; so are videos of different sizes, a size
// other than opt.ExpectedSize, and a video with no time base.
//
// Time: frame k is at k/opt.FPS when opt.FPS is set; otherwise at the time
// the decoder gives for the frame (OpenCV's CAP_PROP_POS_MSEC read after
// decoding it, counted from the start of the stream), or at k divided by the
// container's frame rate if the decoder gives no time. A pair whose left and
// right stream times differ by more than half a frame interval, or whose
// time is not later than the previous pair's, is skipped and counted; so are
// the frames of the longer video beyond the end of the shorter one.
func OpenVideoPair(leftPath, rightPath string, opt VideoOptions) (*VideoPairSource, error) {
	return openVideoSource(leftPath, rightPath, false, opt)
}

// OpenSideBySideVideo opens one video whose frames hold the left camera's
// image in their left half and the right camera's in their right half; see
// [OpenVideoPair] for times, checks and errors. The frame width must be
// even.
func OpenSideBySideVideo(path string, opt VideoOptions) (*VideoPairSource, error) {
	return openVideoSource(path, "", true, opt)
}

func openVideoSource(leftPath, rightPath string, sbs bool, opt VideoOptions) (src *VideoPairSource, err error) {
	if opt.FPS != 0 {
		if err := checkFPS(opt.FPS, "video frame rate"); err != nil {
			return nil, err
		}
	}
	if opt.ExpectedSize != (image.Point{}) && (opt.ExpectedSize.X <= 0 || opt.ExpectedSize.Y <= 0) {
		return nil, fmt.Errorf("ingest: expected image size %dx%d is invalid; give a positive width and height, or zero for no check", opt.ExpectedSize.X, opt.ExpectedSize.Y)
	}
	start, haveStart, err := originFromSetting(opt.StartUTC)
	if err != nil {
		return nil, err
	}
	s := &VideoPairSource{log: newSkipLog(), origin: start, hasOrig: haveStart}
	defer func() {
		if err != nil {
			s.Close()
		}
	}()
	which := "left"
	if sbs {
		which = "side-by-side"
	}
	if s.left, err = openVideo(leftPath, which); err != nil {
		return nil, err
	}
	if !sbs {
		if s.right, err = openVideo(rightPath, "right"); err != nil {
			return nil, err
		}
	}
	// Decode the first frames now so that a file OpenCV opens but cannot
	// decode fails here.
	for _, v := range []*videoSide{s.left, s.right} {
		if v != nil && !v.read() {
			return nil, fmt.Errorf("ingest: %s video %s holds no frame OpenCV can decode; check that the file is complete", v.which, v.path)
		}
	}
	s.have = true
	size := image.Pt(s.left.buf.Cols(), s.left.buf.Rows())
	if sbs {
		if size.X%2 != 0 {
			return nil, fmt.Errorf("ingest: side-by-side video %s is %d pixels wide, an odd number, so it cannot be split into two equal halves; give the left and right videos separately", leftPath, size.X)
		}
		size.X /= 2
	} else if rs := image.Pt(s.right.buf.Cols(), s.right.buf.Rows()); rs != size {
		return nil, fmt.Errorf("ingest: left video %s is %dx%d but right video %s is %dx%d; give the two videos of one synchronised rig", leftPath, size.X, size.Y, rightPath, rs.X, rs.Y)
	}
	if opt.ExpectedSize != (image.Point{}) && size != opt.ExpectedSize {
		return nil, fmt.Errorf("ingest: %s video %s has %dx%d images per camera but the rig expects %dx%d; check the rig file or the video", which, leftPath, size.X, size.Y, opt.ExpectedSize.X, opt.ExpectedSize.Y)
	}
	s.size = size
	switch {
	case opt.FPS != 0:
		s.fps, s.indexTime = opt.FPS, true
		s.rule = fmt.Sprintf("times of the video frames taken as frame number / %g Hz (the frame rate given)", opt.FPS)
	case !math.IsNaN(s.left.t):
		s.fps = s.left.fps
		s.rule = "times of the video frames read from the stream (the decoder's time of each frame, from the start of the stream)"
	case s.left.fps > 0:
		s.fps, s.indexTime = s.left.fps, true
		s.rule = fmt.Sprintf("times of the video frames taken as frame number / %g Hz (the container's frame rate; the stream gives no frame times)", s.left.fps)
	default:
		return nil, fmt.Errorf("ingest: %s video %s gives neither frame times nor a frame rate; give the frame rate (FPS)", which, leftPath)
	}
	s.n = s.left.count
	if s.right != nil && (s.right.count < s.n || s.n == 0) {
		s.n = s.right.count
	}
	return s, nil
}

// Len returns the number of frames the container reports (the smaller of
// the two for a pair of videos); 0 when it reports none. For some formats
// the figure is an estimate from the duration.
func (s *VideoPairSource) Len() int { return s.n }

// Skipped returns the number of frames left out so far, by reason.
func (s *VideoPairSource) Skipped() SkipCounts { return s.log.Counts() }

// SkippedFiles names the frames skipped so far with their reasons (the
// first [MaxNamedSkips]; the rest are counted in Unnamed).
func (s *VideoPairSource) SkippedFiles() SkipList { return s.log.List() }

// TimeRule says in one sentence how the times of the frames are found.
func (s *VideoPairSource) TimeRule() string { return s.rule }

// Origin returns the absolute instant of time 0 (from VideoOptions.StartUTC)
// and where it came from; ok is false when none was given.
func (s *VideoPairSource) Origin() (o TimeOrigin, ok bool) { return s.origin, s.hasOrig }

// skip counts and names a skipped frame.
func (s *VideoPairSource) skip(reason, detail string) {
	files := []string{s.left.path, ""}
	if s.right != nil {
		files[1] = s.right.path
	}
	s.log.add(SkippedItem{Files: files, Reason: reason, Detail: detail})
}

// Close releases the video files and buffers; Next fails after Close. The
// Mats already handed out stay the caller's.
func (s *VideoPairSource) Close() error {
	if s.closed {
		return nil
	}
	s.closed = true
	s.left.close()
	s.right.close()
	return nil
}

// readPair decodes the next frame of each video. At the end of the shorter
// video it counts the frames left in the other and reports false.
func (s *VideoPairSource) readPair() bool {
	if s.ended {
		return false
	}
	okL := s.left.read()
	if s.right == nil {
		s.ended = !okL
		return okL
	}
	okR := s.right.read()
	if okL && okR {
		return true
	}
	s.ended = true
	if okL != okR {
		longer := s.left
		if okR {
			longer = s.right
		}
		n := 1
		for longer.read() {
			n++
		}
		for k := 0; k < n; k++ {
			s.skip(SkipVideoLength, fmt.Sprintf("frame %d of %s", s.frame+1+k, longer.path))
		}
	}
	return false
}

// Next decodes the next usable pair into f as 8-bit grey images (colour
// frames are converted with OpenCV's BGR-to-grey weights) and returns io.EOF
// at the end of the shorter video. Mats already in f are reused.
func (s *VideoPairSource) Next(f *StereoFrame) error {
	if s.closed {
		return errors.New("ingest: the video source is closed; open it again to read more frames")
	}
	for {
		if !s.have {
			if !s.readPair() {
				return io.EOF
			}
			s.frame++
		}
		s.have = false
		t := s.left.t
		if s.indexTime {
			t = float64(s.frame) / s.fps
		}
		if reason := s.check(t); reason != "" {
			s.skip(reason, fmt.Sprintf("frame %d, time %g s", s.frame, t))
			continue
		}
		if !s.deliver(f) {
			s.skip(SkipUnreadable, fmt.Sprintf("frame %d: pixel format %v", s.frame, s.left.buf.Type()))
			continue
		}
		s.haveLast, s.lastTime = true, t
		f.Index, f.Time = s.frame, t
		f.LeftPath = s.left.path
		if s.right != nil {
			f.RightPath = s.right.path
		} else {
			f.RightPath = s.left.path
		}
		return nil
	}
}

// check returns why the buffered pair at time t must be skipped, or "".
func (s *VideoPairSource) check(t float64) string {
	lw, lh := s.left.buf.Cols(), s.left.buf.Rows()
	if s.right == nil {
		lw /= 2
	}
	if image.Pt(lw, lh) != s.size {
		return SkipWrongSize
	}
	if s.right != nil {
		if image.Pt(s.right.buf.Cols(), s.right.buf.Rows()) != s.size {
			return SkipWrongSize
		}
		if !s.indexTime && s.fps > 0 && math.Abs(s.left.t-s.right.t) > 0.5/s.fps {
			return SkipUnsynced
		}
	}
	if math.IsNaN(t) || (s.haveLast && !(t > s.lastTime)) {
		return SkipTimeOrder
	}
	return ""
}

// deliver converts the buffered frames to grey into f; false when the
// decoder gave a pixel format this package does not handle.
func (s *VideoPairSource) deliver(f *StereoFrame) bool {
	if s.right != nil {
		return toGrey(s.left.buf, &f.Left) && toGrey(s.right.buf, &f.Right)
	}
	w, h := s.size.X, s.size.Y
	l := s.left.buf.Region(image.Rect(0, 0, w, h))
	r := s.left.buf.Region(image.Rect(w, 0, 2*w, h))
	ok := toGrey(l, &f.Left) && toGrey(r, &f.Right)
	l.Close()
	r.Close()
	return ok
}

// toGrey writes src as an 8-bit single-channel image into dst, allocating
// dst only when it holds no matrix yet.
func toGrey(src gocv.Mat, dst *gocv.Mat) bool {
	switch src.Type() {
	case gocv.MatTypeCV8UC1, gocv.MatTypeCV8UC3, gocv.MatTypeCV8UC4:
	default:
		return false
	}
	if dst.Ptr() == nil {
		*dst = gocv.NewMat()
	}
	switch src.Type() {
	case gocv.MatTypeCV8UC1:
		src.CopyTo(dst)
	case gocv.MatTypeCV8UC3:
		gocv.CvtColor(src, dst, gocv.ColorBGRToGray)
	default:
		gocv.CvtColor(src, dst, gocv.ColorBGRAToGray)
	}
	return true
}
