package ingest

import (
	"errors"
	"fmt"
	"image"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"gocv.io/x/gocv"
)

// StereoFrame is one synchronised pair of 8-bit single-channel (grey)
// images.
//
// Ownership of the Mats: after Next returns nil, Left and Right belong to
// the caller. Pass the same StereoFrame back to Next and the source releases
// or reuses them; to keep a pair beyond the next call, move the Mats out of
// the frame (set the fields to gocv.Mat{}) and Close them when done. Close
// them also when you stop calling Next.
type StereoFrame struct {
	// Index is the position of the pair in the record: for image pairs the
	// 0-based rank among the pairs the source tries, in time order (0 ≤
	// Index < Len()); for video the 0-based frame number in the file. Pairs
	// skipped by Next leave holes.
	Index int
	// Time in seconds: from the timestamps file, the file names or the
	// frame rate (see [OpenPairs]), or from the video stream (see
	// [OpenVideoPair]).
	Time float64
	// Left and Right are 8-bit grey images (gocv.MatTypeCV8UC1) of equal
	// size.
	Left, Right gocv.Mat
	// LeftPath and RightPath name the files the images came from (the
	// video files for video sources).
	LeftPath, RightPath string
}

// StereoSource is a stream of stereo pairs in time order. Next fills f with
// the next pair it could read, skipping and counting the others, and returns
// io.EOF after the last one. Len is the number of pairs the source will try
// (for video, as reported by the container); Skipped counts pairs not
// delivered, by reason.
type StereoSource interface {
	Next(f *StereoFrame) error
	Skipped() SkipCounts
	Close() error
	Len() int
}

var (
	_ StereoSource = (*PairSource)(nil)
	_ StereoSource = (*VideoPairSource)(nil)
)

// Reasons for skipping stereo frames, used in [SkipCounts].
const (
	// SkipNoPartner: an image (or video frame) whose partner on the other
	// side is absent.
	SkipNoPartner = "missing partner image"
	// SkipNotFound: a timestamps-file row whose two image files both do
	// not exist.
	SkipNotFound = "image files listed in the timestamps file not found"
	// SkipNotListed: an image file matched by the patterns but listed in
	// no row of the timestamps file. Counted per file, not per pair.
	SkipNotListed = "image not listed in the timestamps file"
	// SkipNoNumber: an image whose name carries no number, so it has no
	// time and cannot be paired.
	SkipNoNumber = "no time or frame number in the file name"
	// SkipDuplicate: a second image with the same time or frame number on
	// the same side, or a repeated frame number in the timestamps file.
	// The first one (in sorted path or file order) is kept.
	SkipDuplicate = "duplicate frame number or time"
	// SkipTimeOrder: a frame whose time is not later than that of the
	// frame before it in acquisition order.
	SkipTimeOrder = "time going backwards or repeated"
	// SkipUnreadable: an image that cannot be decoded (missing, truncated,
	// corrupt or of an unsupported format).
	SkipUnreadable = "unreadable or corrupt image"
	// SkipWrongSize: an image whose size differs from the expected size.
	SkipWrongSize = "image size differs from the expected size"
	// SkipSizeMismatch: a pair whose left and right images differ in size.
	SkipSizeMismatch = "left and right image sizes differ"
)

// Frame-rate limits accepted for a time base, in Hz. They are sanity bounds
// (common practice: sea-surface stereo rigs record at about 1–100 Hz), not
// physical limits.
const (
	MinFPS = 1e-3
	MaxFPS = 1e4
)

// checkFPS reports a frame rate outside [MinFPS, MaxFPS] as one sentence;
// what names the setting.
func checkFPS(fps float64, what string) error {
	if !(fps >= MinFPS && fps <= MaxFPS) {
		return fmt.Errorf("ingest: %s %g Hz is not a usable frame rate; give the camera frame rate in Hz, between %g and %g", what, fps, float64(MinFPS), float64(MaxFPS))
	}
	return nil
}

// PairSpec says where the images of a stereo record are and how to time
// them. Give the images by Dir, by LeftGlob and RightGlob, or by a
// TimestampsFile alone. The yaml names are those of the settings.
type PairSpec struct {
	// Dir is a record folder in one of two layouts: Dir/left_*.EXT with
	// Dir/right_*.EXT, or Dir/left/*.EXT with Dir/right/*.EXT, where EXT
	// is png, tif, tiff, jpg or jpeg (any case). When Dir holds
	// timestamps.csv and TimestampsFile is empty, that file is used.
	// Dir excludes LeftGlob and RightGlob.
	Dir string `yaml:"frames"`
	// LeftGlob and RightGlob are path/filepath.Match patterns for the
	// left and right images, for example "run1/cam0_*.tif".
	LeftGlob  string `yaml:"left"`
	RightGlob string `yaml:"right"`
	// TimestampsFile is an optional CSV file whose header names the
	// columns frame, time_s and/or utc, left and right, in any order
	// (more columns are ignored): the frame number in acquisition order,
	// the time in seconds, the absolute instant (ISO 8601, see
	// [ParseInstant]), and the image paths, relative to the CSV file's
	// folder unless absolute. It gives both the times and the pairing.
	// With utc alone, times are seconds from the whole second of the
	// first frame kept (or from StartUTC when set).
	TimestampsFile string `yaml:"timestamps"`
	// FPS is the frame rate in Hz, the time base when names carry only a
	// frame number and there is no timestamps file (time = number / FPS).
	// Given, it makes bare numbers frame numbers, whatever their length.
	// 0 = none.
	FPS float64 `yaml:"fps"`
	// StartUTC, when set, is the absolute instant of time 0 (ISO 8601,
	// see [ParseInstant]); it takes precedence over a utc column and the
	// images' EXIF dates. Default "": none.
	StartUTC string `yaml:"start_utc"`
	// MaxSpanS is the longest plausible record in seconds: a time farther
	// than this from the median time of the record is skipped and counted
	// (SkipTimeSpan). 0 means [DefaultMaxSpanS] (two days).
	MaxSpanS float64 `yaml:"max_record_span_s"`
	// ExpectedSize, when non-zero, is the image size of the rig (width X,
	// height Y); images of another size are skipped and counted.
	ExpectedSize image.Point `yaml:"-"`
}

// DefaultPairSpec returns the defaults of the settings of [PairSpec]; the
// images are still to be given.
func DefaultPairSpec() PairSpec { return PairSpec{MaxSpanS: DefaultMaxSpanS} }

// TimestampsName is the timestamps file [OpenPairs] looks for in a record
// folder ([PairSpec.Dir]).
const TimestampsName = "timestamps.csv"

// pairItem is one candidate pair.
type pairItem struct {
	time        float64
	left, right string
	line        int       // row of the timestamps file; 0 when none
	utc         time.Time // the row's utc cell, when hasUTC
	hasUTC      bool
}

// PairSource streams the image pairs of a stereo record in time order. It
// is not safe for concurrent use.
type PairSource struct {
	items     []pairItem
	next      int
	visited   int // pairs [0, visited) have been examined by Next
	size      image.Point
	log       skipLog
	rule      string
	origin    TimeOrigin
	hasOrigin bool
	closed    bool
}

// OpenPairs lists the images of a record, pairs left with right and orders
// the pairs by time. The rules, in order of precedence:
//
//  1. A timestamps file (given, or timestamps.csv in Dir) gives the pairs
//     and their times. Rows are taken in frame-number order. When
//     patterns or Dir are also given, they select the rows: a row is used
//     when either of its files is among the matches, and matched files
//     that no row lists are counted. A row that cannot be read (a stray
//     quote, a missing field, a cell that is not a number) or whose time
//     is not finite is skipped, counted and named, and so is a time
//     farther than MaxSpanS from the median time of the rows. Of the rest,
//     the largest set of rows whose times increase with the frame number
//     is kept (the earliest such set when several are as large), and the
//     others are skipped as time going backwards or repeated: one time
//     out of place costs its own row, never the rows after it.
//  2. Otherwise the times come from the file names (the base name without
//     extension). A name whose last number carries its unit is read as a
//     time: "_t12.345s" (or "_12.345s") in seconds, "_ms000123" (or
//     "_123ms") in milliseconds. Otherwise the last run of digits is a
//     frame number and, when FPS is given, the time is that number
//     divided by FPS. With no FPS, numbers of at least 9 digits,
//     zero-padded, are read as milliseconds (the layout left_000001234.png
//     of crestspeed's renderer) provided that consecutive numbers step by
//     at least 5 (a frame rate of at most 200 Hz): numbers stepping by
//     less look like a frame counter and OpenPairs fails, asking for FPS
//     or a timestamps file; shorter numbers leave no time base and
//     OpenPairs fails too. FPS is not used when the timestamps file or
//     names with units give the times. A left and a right image form a
//     pair when their names carry the same time or number; every name of
//     a record must follow the same convention. [PairSource.TimeRule]
//     says which rule was used, in a sentence.
//
// The absolute time of time 0 ([PairSource.Origin]) comes from StartUTC,
// else from the utc column of the timestamps file, else from the EXIF
// DateTimeOriginal of the first JPEG or TIFF left images (see
// [ReadCaptureTime]), else is unknown.
//
// Images without a partner, without a number, or with a number already
// seen on their side are counted in Skipped, named in SkippedFiles and
// left out; OpenPairs fails, with one sentence, when no file matches, when
// there is no time base, when FPS, StartUTC or MaxSpanS is out of range,
// when the timestamps file cannot be read, or when no pair is left.
func OpenPairs(spec PairSpec) (*PairSource, error) {
	if spec.FPS != 0 {
		if err := checkFPS(spec.FPS, "FPS"); err != nil {
			return nil, err
		}
	}
	if spec.ExpectedSize != (image.Point{}) && (spec.ExpectedSize.X <= 0 || spec.ExpectedSize.Y <= 0) {
		return nil, fmt.Errorf("ingest: expected image size %dx%d is invalid; give a positive width and height, or zero for no check", spec.ExpectedSize.X, spec.ExpectedSize.Y)
	}
	maxSpan, err := checkMaxSpan(spec.MaxSpanS)
	if err != nil {
		return nil, err
	}
	start, haveStart, err := originFromSetting(spec.StartUTC)
	if err != nil {
		return nil, err
	}
	left, right, tsFile, err := spec.list()
	if err != nil {
		return nil, err
	}
	s := &PairSource{size: spec.ExpectedSize, log: newSkipLog()}
	if tsFile != "" {
		err = s.pairFromTimestamps(tsFile, left, right, maxSpan, start, haveStart)
	} else {
		err = s.pairFromNames(left, right, spec.FPS, maxSpan)
	}
	if err != nil {
		return nil, err
	}
	if len(s.items) == 0 {
		first := ""
		if it, ok := s.log.first(); ok {
			first = "; the first: " + it.String()
		}
		return nil, fmt.Errorf("ingest: no usable image pair was found (%s%s); check that left and right names share their numbers, or the rows of the timestamps file", describeSkips(s.log.Counts()), first)
	}
	switch {
	case haveStart:
		if !s.hasOrigin || s.origin.From != OriginSetting {
			if s.hasOrigin {
				start.From = fmt.Sprintf("%s (the %s would put it at %s)", OriginSetting, s.origin.From, FormatInstant(s.origin.UTC))
			}
			s.origin, s.hasOrigin = start, true
		}
	case !s.hasOrigin:
		s.origin, s.hasOrigin = s.exifOrigin()
	}
	return s, nil
}

// checkMaxSpan applies the default of MaxSpanS and checks it.
func checkMaxSpan(v float64) (float64, error) {
	if v == 0 {
		return DefaultMaxSpanS, nil
	}
	if !(v > 0) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("ingest: max_record_span_s %g s is not a usable record length; give the longest plausible record in seconds, or 0 for the default of %d s", v, DefaultMaxSpanS)
	}
	return v, nil
}

// exifCandidates is the number of first pairs whose left image is searched
// for an EXIF date.
const exifCandidates = 8

// exifOrigin reads the capture time of the first left images that carry
// one and returns the instant of time 0 it implies.
func (s *PairSource) exifOrigin() (TimeOrigin, bool) {
	for i := 0; i < len(s.items) && i < exifCandidates; i++ {
		it := s.items[i]
		if !isEXIFImage(it.left) {
			continue
		}
		c, ok, err := ReadCaptureTime(it.left)
		if err != nil || !ok {
			continue
		}
		t0 := c.UTC.Add(-secondsToDuration(it.time))
		return TimeOrigin{UTC: t0, From: fmt.Sprintf("%s %s (%s, at time %g s; %s)", OriginEXIF, it.left, FormatInstant(c.UTC), it.time, c.Describe())}, true
	}
	return TimeOrigin{}, false
}

// TimeRule says in one sentence how the times of the pairs were found:
// from which timestamps file and column, or how the file names were read.
func (s *PairSource) TimeRule() string { return s.rule }

// Origin returns the absolute instant of time 0 and where it came from; ok
// is false when the record gives none.
func (s *PairSource) Origin() (o TimeOrigin, ok bool) { return s.origin, s.hasOrigin }

// SkippedFiles names the pairs and files skipped so far with their reasons
// (the first [MaxNamedSkips]; the rest are counted in Unnamed). Skipped
// gives the counts of all of them by reason.
func (s *PairSource) SkippedFiles() SkipList { return s.log.List() }

// describeSkips lists skip counts as "n reason, ...", in a fixed order.
func describeSkips(c SkipCounts) string {
	if len(c) == 0 {
		return "no image was found"
	}
	keys := slices.Sorted(maps.Keys(c))
	parts := make([]string, len(keys))
	for i, k := range keys {
		parts[i] = fmt.Sprintf("%d %s", c[k], k)
	}
	return "skipped: " + strings.Join(parts, ", ")
}

// imageExts are the extensions a record folder is searched for.
var imageExts = []string{".png", ".tif", ".tiff", ".jpg", ".jpeg"}

// list expands the spec into sorted left and right file lists (absolute,
// cleaned) and the timestamps file to use ("" for none). Lists are nil
// when only a timestamps file is given.
func (spec PairSpec) list() (left, right []string, tsFile string, err error) {
	tsFile = spec.TimestampsFile
	switch {
	case spec.Dir != "" && (spec.LeftGlob != "" || spec.RightGlob != ""):
		return nil, nil, "", fmt.Errorf("ingest: both a record folder (%s) and image patterns are given; give either the folder or the left and right patterns", spec.Dir)
	case spec.Dir != "":
		left, right, err = listDir(spec.Dir)
		if err != nil {
			return nil, nil, "", err
		}
		if tsFile == "" {
			p := filepath.Join(spec.Dir, TimestampsName)
			if st, err := os.Stat(p); err == nil && st.Mode().IsRegular() {
				tsFile = p
			}
		}
	case spec.LeftGlob != "" || spec.RightGlob != "":
		for _, g := range []struct {
			side, pattern string
			out           *[]string
		}{{"left", spec.LeftGlob, &left}, {"right", spec.RightGlob, &right}} {
			if g.pattern == "" {
				return nil, nil, "", fmt.Errorf("ingest: no %s image pattern is given; give both a left and a right pattern, such as \"run1/%s_*.png\"", g.side, g.side)
			}
			m, err := filepath.Glob(g.pattern)
			if err != nil {
				return nil, nil, "", fmt.Errorf("ingest: %s image pattern %q is not a valid pattern (%v); fix its brackets or escapes", g.side, g.pattern, err)
			}
			m = regularFiles(m)
			if len(m) == 0 {
				return nil, nil, "", fmt.Errorf("ingest: %s image pattern %q matches no file; check the folder and quote the pattern so that the shell does not expand it", g.side, g.pattern)
			}
			*g.out, err = absSorted(m)
			if err != nil {
				return nil, nil, "", err
			}
		}
	case tsFile == "":
		return nil, nil, "", errors.New("ingest: no stereo images are given; give a record folder, left and right image patterns, or a timestamps file")
	}
	return left, right, tsFile, nil
}

// listDir finds the images of a record folder in the left_*/right_* or the
// left/ right/ layout.
func listDir(dir string) (left, right []string, err error) {
	st, err := os.Stat(dir)
	if err != nil || !st.IsDir() {
		return nil, nil, fmt.Errorf("ingest: record folder %s does not exist or is not a folder; check the path", dir)
	}
	find := func(prefix string) []string {
		var out []string
		for _, ext := range imageExts {
			for _, e := range []string{ext, strings.ToUpper(ext)} {
				m, _ := filepath.Glob(filepath.Join(dir, prefix+"*"+e))
				out = append(out, m...)
			}
		}
		return regularFiles(out)
	}
	flatL, flatR := find("left_"), find("right_")
	sep := string(filepath.Separator)
	subL, subR := find("left"+sep), find("right"+sep)
	flat, sub := len(flatL)+len(flatR) > 0, len(subL)+len(subR) > 0
	switch {
	case flat && sub:
		return nil, nil, fmt.Errorf("ingest: record folder %s holds both left_*/right_* images and left/ right/ subfolders; keep one layout or give the left and right patterns", dir)
	case sub:
		left, right = subL, subR
	default:
		left, right = flatL, flatR
	}
	if len(left) == 0 || len(right) == 0 {
		return nil, nil, fmt.Errorf("ingest: record folder %s holds %d left and %d right images; put the images in left_*.png and right_*.png (or left/ and right/ subfolders; png, tif, tiff, jpg or jpeg)", dir, len(left), len(right))
	}
	if left, err = absSorted(left); err != nil {
		return nil, nil, err
	}
	if right, err = absSorted(right); err != nil {
		return nil, nil, err
	}
	return left, right, nil
}

// regularFiles keeps the paths that name regular files (or links to them),
// without repeats.
func regularFiles(paths []string) []string {
	out := paths[:0]
	seen := map[string]bool{}
	for _, p := range paths {
		if seen[p] {
			continue
		}
		seen[p] = true
		if st, err := os.Stat(p); err == nil && st.Mode().IsRegular() {
			out = append(out, p)
		}
	}
	return out
}

func absSorted(paths []string) ([]string, error) {
	out := make([]string, len(paths))
	for i, p := range paths {
		a, err := filepath.Abs(p)
		if err != nil {
			return nil, fmt.Errorf("ingest: cannot resolve the path %s (%v); give an absolute path", p, err)
		}
		out[i] = a
	}
	slices.Sort(out)
	return out, nil
}

// pairFromNames pairs left and right files by the time or number in their
// names.
func (s *PairSource) pairFromNames(left, right []string, fps, maxSpan float64) error {
	var sides [2][]namedFile
	var all []namedFile
	for i, list := range [][]string{left, right} {
		for _, path := range list {
			p := parseName(path)
			if p.kind == kindNone {
				s.skipSide(i, path, SkipNoNumber, "")
				continue
			}
			sides[i] = append(sides[i], namedFile{path, p})
			all = append(all, namedFile{path, p})
		}
	}
	if len(all) == 0 {
		return fmt.Errorf("ingest: no image name carries a number (for example %s); give a timestamps file, or names with a time or frame number", oneLineText(left[0]))
	}
	rule, err := chooseNameRule(all, fps, "image")
	if err != nil {
		return err
	}
	s.rule = rule.note
	// Index each side by its number; the first path in sorted order wins.
	var byKey [2]map[float64]string
	for i, side := range sides {
		byKey[i] = make(map[float64]string, len(side))
		for _, n := range side {
			if first, dup := byKey[i][n.p.value]; dup {
				s.skipSide(i, n.path, SkipDuplicate, "same number as "+filepath.Base(first))
				continue
			}
			byKey[i][n.p.value] = n.path
		}
	}
	// Pairs and lone images, in sorted path order so that the list of
	// skipped files does not depend on map order.
	for i := range sides {
		for _, n := range sides[i] {
			if byKey[i][n.p.value] != n.path {
				continue // a duplicate, already counted
			}
			other, ok := byKey[1-i][n.p.value]
			switch {
			case !ok:
				s.skipSide(i, n.path, SkipNoPartner, "")
			case i == 0:
				s.items = append(s.items, pairItem{time: rule.toTime(n.p.value), left: n.path, right: other})
			}
		}
	}
	slices.SortFunc(s.items, func(a, b pairItem) int {
		if c := compareOrder(a.time, b.time); c != 0 {
			return c
		}
		return strings.Compare(a.left, b.left)
	})
	s.screen(maxSpan, false)
	return nil
}

// skipSide counts a lone image of side i (0 left, 1 right).
func (s *PairSource) skipSide(i int, path, reason, detail string) {
	files := []string{path, ""}
	if i == 1 {
		files = []string{"", path}
	}
	s.log.add(SkippedItem{Files: files, Reason: reason, Detail: detail})
}

// screen drops the candidate pairs whose time cannot belong to the record:
// not finite, farther than maxSpan from the median time, or (when
// inFileOrder, the items being in frame order) out of time order, keeping
// the longest increasing run; then sorts the rest by time.
func (s *PairSource) screen(maxSpan float64, inFileOrder bool) {
	s.items = screenItems(s.items, maxSpan, inFileOrder, &s.log, func(it pairItem) []string { return []string{it.left, it.right} })
}

// screenItems is [PairSource.screen] on a list of items; files gives the
// files of an item for the list of skipped items.
func screenItems(items []pairItem, maxSpan float64, inFileOrder bool, log *skipLog, files func(pairItem) []string) []pairItem {
	s := struct{ items []pairItem }{items}
	skip := func(it pairItem, reason string) {
		log.add(SkippedItem{Files: files(it), Line: it.line, Reason: reason, Detail: fmt.Sprintf("time %g s", it.time)})
	}
	kept := s.items[:0]
	for _, it := range s.items {
		if math.IsNaN(it.time) || math.IsInf(it.time, 0) {
			skip(it, SkipBadTime)
			continue
		}
		kept = append(kept, it)
	}
	s.items = kept
	times := make([]float64, len(s.items))
	for i, it := range s.items {
		times[i] = it.time
	}
	ok := plausibleSpan(times, maxSpan)
	kept = s.items[:0]
	times = times[:0]
	for i, it := range s.items {
		if !ok[i] {
			skip(it, SkipTimeSpan)
			continue
		}
		kept = append(kept, it)
		times = append(times, it.time)
	}
	s.items = kept
	if inFileOrder {
		inc := longestIncreasing(times)
		kept = s.items[:0]
		for i, it := range s.items {
			if !inc[i] {
				skip(it, SkipTimeOrder)
				continue
			}
			kept = append(kept, it)
		}
		return kept
	}
	// Sorted by time already: distinct numbers give distinct times
	// except through rounding of huge values; keep the order strict.
	kept = s.items[:0]
	for _, it := range s.items {
		if len(kept) > 0 && !(it.time > kept[len(kept)-1].time) {
			skip(it, SkipTimeOrder)
			continue
		}
		kept = append(kept, it)
	}
	return kept
}

// compareOrder orders a before b (−1), after (1) or neither (0); unlike
// cmp.Compare it treats a NaN as equal to everything, as the sorts of
// timestamp rows always have.
func compareOrder[T int | float64](a, b T) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// pairFromTimestamps takes pairs and times from a timestamps file. left and
// right, when non-nil, select the rows. start, when haveStart, is the
// instant of time 0 set by the caller.
func (s *PairSource) pairFromTimestamps(path string, left, right []string, maxSpan float64, start TimeOrigin, haveStart bool) error {
	tab, err := readTimestamps(path, []string{"left", "right"})
	if err != nil {
		return err
	}
	s.pairFromTable(tab, left, right, maxSpan, start, haveStart)
	return nil
}

// pairFromTable takes pairs and times from a timestamps table; see
// pairFromTimestamps.
func (s *PairSource) pairFromTable(tab *tsTable, left, right []string, maxSpan float64, start TimeOrigin, haveStart bool) {
	path := tab.path
	selecting := left != nil
	inL, inR := setOf(left), setOf(right)
	listed := map[string]bool{}
	// A row is selected when either of its files is among the matches;
	// one that names no file at all is always examined (and counted).
	selected := func(l, r string) bool { return !selecting || inL[l] || inR[r] || (l == "" && r == "") }
	for _, it := range tab.skips {
		l, r := it.Files[1], it.Files[2]
		listed[l], listed[r] = true, true
		if selected(l, r) {
			s.log.add(it)
		}
	}
	rows := tab.rows
	slices.SortStableFunc(rows, func(a, b tsRow) int { return compareOrder(a.frame, b.frame) })
	seen := map[int]bool{}
	for _, r := range rows {
		l, rr := r.files[0], r.files[1]
		listed[l], listed[rr] = true, true
		if !selected(l, rr) {
			continue // outside the selection
		}
		item := func(reason, detail string) SkippedItem {
			return SkippedItem{Files: []string{l, rr}, Line: r.line, Reason: reason, Detail: detail}
		}
		if seen[r.frame] {
			s.log.add(item(SkipDuplicate, fmt.Sprintf("frame %d", r.frame)))
			continue
		}
		seen[r.frame] = true
		var okL, okR bool
		if selecting {
			okL, okR = inL[l], inR[rr]
		} else {
			okL, okR = isFile(l), isFile(rr)
		}
		switch {
		case !okL && !okR:
			s.log.add(item(SkipNotFound, ""))
			continue
		case !okL || !okR:
			s.log.add(item(SkipNoPartner, ""))
			continue
		}
		s.items = append(s.items, pairItem{time: r.time, left: l, right: rr, line: r.line, utc: r.utc, hasUTC: r.hasUTC})
	}
	for _, list := range [][]string{left, right} {
		for _, p := range list {
			if !listed[p] {
				s.log.add(SkippedItem{Files: []string{p}, Reason: SkipNotListed})
			}
		}
	}
	s.screen(maxSpan, true)
	col := colTime
	switch {
	case tab.haveTime:
		kept := make([]tsRow, len(s.items))
		for i, it := range s.items {
			kept[i] = tsRow{time: it.time, utc: it.utc, hasUTC: it.hasUTC}
		}
		s.origin, s.hasOrigin = tab.origin(kept)
	case len(s.items) > 0:
		// Times from the utc column alone: seconds from the instant of
		// time 0, the start_utc setting or the first pair's whole
		// second.
		col = colUTC
		t0 := s.items[0].utc.Truncate(time.Second)
		from := fmt.Sprintf("%s %s (time 0 at the whole second of the first pair)", OriginUTCColumn, path)
		if haveStart {
			t0, from = start.UTC, start.From
		}
		for i := range s.items {
			s.items[i].time = s.items[i].utc.Sub(t0).Seconds()
		}
		s.origin, s.hasOrigin = TimeOrigin{UTC: t0, From: from}, true
	}
	s.rule = fmt.Sprintf("times read from the %s column of timestamps file %s", col, path)
}

func setOf(paths []string) map[string]bool {
	m := make(map[string]bool, len(paths))
	for _, p := range paths {
		m[p] = true
	}
	return m
}

func isFile(p string) bool {
	if p == "" {
		return false
	}
	st, err := os.Stat(p)
	return err == nil && st.Mode().IsRegular()
}

// Len returns the number of pairs the source tries, in time order; Next
// delivers at most that many.
func (s *PairSource) Len() int { return len(s.items) }

// Files returns the image files of pair i (0 ≤ i < Len), in time order.
func (s *PairSource) Files(i int) (left, right string) {
	return s.items[i].left, s.items[i].right
}

// Times returns the times of the pairs the source tries, in seconds, in
// order.
func (s *PairSource) Times() []float64 {
	t := make([]float64, len(s.items))
	for i, it := range s.items {
		t[i] = it.time
	}
	return t
}

// PairNames returns the left and right file names of pair i of the
// record (in the source's order), "" for an index outside it.
func (s *PairSource) PairNames(i int) (left, right string) {
	if i < 0 || i >= len(s.items) {
		return "", ""
	}
	return s.items[i].left, s.items[i].right
}

// Skipped returns the number of frames left out so far, by reason: those
// found at open (no partner, no number, duplicates, malformed rows, times
// that are not finite, out of span or out of order, files not listed) and
// those met by Next (unreadable images, sizes). Reasons with no frames are
// left out. [PairSource.SkippedFiles] names them.
func (s *PairSource) Skipped() SkipCounts { return s.log.Counts() }

// Rewind makes the next call to Next return the first pair again. Pairs
// skipped by Next are counted once however often the record is read.
func (s *PairSource) Rewind() { s.next = 0 }

// Close ends the stream; Next fails after Close. The Mats already handed
// out stay the caller's.
func (s *PairSource) Close() error {
	s.closed = true
	return nil
}

// Next decodes the next pair that can be read into f as 8-bit grey images
// and returns io.EOF after the last one. A pair with an image that cannot be
// decoded, of a size other than the expected one, or whose left and right
// sizes differ is skipped and counted. Mats already in f are released (see
// [StereoFrame]).
func (s *PairSource) Next(f *StereoFrame) error {
	if s.closed {
		return errors.New("ingest: the stereo image source is closed; open it again to read more pairs")
	}
	for ; s.next < len(s.items); s.next++ {
		it := s.items[s.next]
		reason, detail, l, r := s.decode(it)
		if reason != "" {
			if s.next >= s.visited {
				s.log.add(SkippedItem{Files: []string{it.left, it.right}, Line: it.line, Reason: reason, Detail: detail})
			}
			s.visit()
			continue
		}
		s.visit()
		release(&f.Left)
		release(&f.Right)
		f.Left, f.Right = l, r
		f.Index, f.Time = s.next, it.time
		f.LeftPath, f.RightPath = it.left, it.right
		s.next++
		return nil
	}
	return io.EOF
}

// visit records that pair s.next has been examined.
func (s *PairSource) visit() {
	if s.next >= s.visited {
		s.visited = s.next + 1
	}
}

// decode reads both images of a pair; on failure it returns the reason,
// which image it concerns, and releases what it read.
func (s *PairSource) decode(it pairItem) (reason, detail string, l, r gocv.Mat) {
	size := func(side string, m gocv.Mat) string {
		return fmt.Sprintf("%s image %dx%d", side, m.Cols(), m.Rows())
	}
	l = gocv.IMRead(it.left, gocv.IMReadGrayScale)
	if l.Empty() {
		l.Close()
		return SkipUnreadable, "left image", gocv.Mat{}, gocv.Mat{}
	}
	if s.size != (image.Point{}) && (l.Cols() != s.size.X || l.Rows() != s.size.Y) {
		detail = fmt.Sprintf("%s, expected %dx%d", size("left", l), s.size.X, s.size.Y)
		l.Close()
		return SkipWrongSize, detail, gocv.Mat{}, gocv.Mat{}
	}
	r = gocv.IMRead(it.right, gocv.IMReadGrayScale)
	switch {
	case r.Empty():
		reason, detail = SkipUnreadable, "right image"
	case s.size != (image.Point{}) && (r.Cols() != s.size.X || r.Rows() != s.size.Y):
		reason, detail = SkipWrongSize, fmt.Sprintf("%s, expected %dx%d", size("right", r), s.size.X, s.size.Y)
	case r.Cols() != l.Cols() || r.Rows() != l.Rows():
		reason, detail = SkipSizeMismatch, size("left", l)+", "+size("right", r)
	}
	if reason != "" {
		l.Close()
		r.Close()
		return reason, detail, gocv.Mat{}, gocv.Mat{}
	}
	return "", "", l, r
}

// release closes m if it holds an OpenCV matrix.
func release(m *gocv.Mat) {
	if m.Ptr() != nil {
		m.Close()
	}
}
