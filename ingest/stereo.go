package ingest

import (
	"encoding/csv"
	"errors"
	"fmt"
	"image"
	"io"
	"io/fs"
	"maps"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"

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
// TimestampsFile alone.
type PairSpec struct {
	// Dir is a record folder in one of two layouts: Dir/left_*.EXT with
	// Dir/right_*.EXT, or Dir/left/*.EXT with Dir/right/*.EXT, where EXT
	// is png, tif, tiff, jpg or jpeg (any case). When Dir holds
	// timestamps.csv and TimestampsFile is empty, that file is used.
	// Dir excludes LeftGlob and RightGlob.
	Dir string
	// LeftGlob and RightGlob are path/filepath.Match patterns for the
	// left and right images, for example "run1/cam0_*.tif".
	LeftGlob, RightGlob string
	// TimestampsFile is an optional CSV file with the header
	// frame,time_s,left,right (more columns are ignored): the frame number
	// in acquisition order, the time in seconds, and the image paths,
	// relative to the CSV file's folder unless absolute. It gives both
	// the times and the pairing.
	TimestampsFile string
	// FPS is the frame rate in Hz, the time base when names carry only a
	// frame number and there is no timestamps file (time = number / FPS).
	// Given, it makes bare numbers frame numbers, whatever their length.
	FPS float64
	// ExpectedSize, when non-zero, is the image size of the rig (width X,
	// height Y); images of another size are skipped and counted.
	ExpectedSize image.Point
}

// TimestampsName is the timestamps file [OpenPairs] looks for in a record
// folder ([PairSpec.Dir]).
const TimestampsName = "timestamps.csv"

// pairItem is one candidate pair.
type pairItem struct {
	time        float64
	left, right string
}

// PairSource streams the image pairs of a stereo record in time order. It
// is not safe for concurrent use.
type PairSource struct {
	items   []pairItem
	next    int
	visited int // pairs [0, visited) have been examined by Next
	size    image.Point
	skipped SkipCounts
	closed  bool
}

// OpenPairs lists the images of a record, pairs left with right and orders
// the pairs by time. The rules, in order of precedence:
//
//  1. A timestamps file (given, or timestamps.csv in Dir) gives the pairs
//     and their times. Rows are taken in frame-number order; a row whose
//     time is not later than the last row kept is skipped (time going
//     backwards or repeated). When patterns or Dir are also given, they
//     select the rows: a row is used when either of its files is among the
//     matches, and matched files that no row lists are counted.
//  2. Otherwise the times come from the file names (the base name without
//     extension). A name whose last number carries its unit is read as a
//     time: "_t12.345s" (or "_12.345s") in seconds, "_ms000123" (or
//     "_123ms") in milliseconds. Otherwise the last run of digits is a
//     frame number and, when FPS is given, the time is that number
//     divided by FPS. With no FPS, numbers of at least 9 digits,
//     zero-padded, are read as milliseconds (the layout left_000001234.png
//     of crestspeed's renderer); shorter numbers then leave no time base
//     and OpenPairs fails. FPS is not used when the timestamps file or
//     names with units give the times. A left and a right image form a
//     pair when their names carry the same time or number; every name of
//     a record must follow the same convention.
//
// Images without a partner, without a number, or with a number already
// seen on their side are counted in Skipped and left out; OpenPairs fails,
// with one sentence, when no file matches, when there is no time base,
// when FPS is out of range, when the timestamps file is malformed, or when
// no pair is left.
func OpenPairs(spec PairSpec) (*PairSource, error) {
	if spec.FPS != 0 {
		if err := checkFPS(spec.FPS, "FPS"); err != nil {
			return nil, err
		}
	}
	if spec.ExpectedSize != (image.Point{}) && (spec.ExpectedSize.X <= 0 || spec.ExpectedSize.Y <= 0) {
		return nil, fmt.Errorf("ingest: expected image size %dx%d is invalid; give a positive width and height, or zero for no check", spec.ExpectedSize.X, spec.ExpectedSize.Y)
	}
	left, right, tsFile, err := spec.list()
	if err != nil {
		return nil, err
	}
	s := &PairSource{size: spec.ExpectedSize, skipped: SkipCounts{}}
	if tsFile != "" {
		err = s.pairFromTimestamps(tsFile, left, right)
	} else {
		err = s.pairFromNames(left, right, spec.FPS)
	}
	if err != nil {
		return nil, err
	}
	if len(s.items) == 0 {
		return nil, fmt.Errorf("ingest: no usable image pair was found (%s); check that left and right names share their numbers, or the rows of the timestamps file", describeSkips(s.skipped))
	}
	return s, nil
}

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

// Name conventions, applied to the base name without its extension.
var (
	reSeconds = regexp.MustCompile(`(?:^|[_\-.])t?(\d+(?:\.\d+)?)s(?:$|[_\-.])`)
	reMillis  = regexp.MustCompile(`(?:^|[_\-.])(?:ms(\d+)|(\d+)ms)(?:$|[_\-.])`)
	reDigits  = regexp.MustCompile(`\d+`)
)

// nameKind is the convention a file name follows.
type nameKind int

const (
	kindNone    nameKind = iota // no number
	kindSeconds                 // explicit time in seconds
	kindMillis                  // explicit time in milliseconds
	kindNumber                  // bare number
)

func (k nameKind) String() string {
	switch k {
	case kindSeconds:
		return "a time in seconds (_t12.345s)"
	case kindMillis:
		return "a time in milliseconds (_ms000123)"
	case kindNumber:
		return "a bare number"
	}
	return "no number"
}

// parsedName is what a file name says about its time.
type parsedName struct {
	kind   nameKind
	value  float64 // seconds, milliseconds or the number, by kind
	digits int     // length of a bare number
}

// parseName reads the time or number a file name carries. A time with its
// unit counts only when it holds the last run of digits of the name, so that
// a label earlier in the name (say "run_10s_left_0001") is not taken for
// the time.
func parseName(path string) parsedName {
	base := filepath.Base(path)
	base = strings.TrimSuffix(base, filepath.Ext(base))
	all := reDigits.FindAllStringIndex(base, -1)
	if len(all) == 0 {
		return parsedName{}
	}
	lastDigit := all[len(all)-1][1] - 1
	for _, c := range []struct {
		re   *regexp.Regexp
		kind nameKind
	}{{reSeconds, kindSeconds}, {reMillis, kindMillis}} {
		ms := c.re.FindAllStringSubmatchIndex(base, -1)
		if len(ms) == 0 {
			continue
		}
		m := ms[len(ms)-1]
		for g := 2; g+1 < len(m); g += 2 {
			if m[g] < 0 || lastDigit < m[g] || lastDigit >= m[g+1] {
				continue
			}
			if v, err := strconv.ParseFloat(base[m[g]:m[g+1]], 64); err == nil {
				return parsedName{kind: c.kind, value: v}
			}
		}
	}
	last := all[len(all)-1]
	d := base[last[0]:last[1]]
	v, err := strconv.ParseFloat(d, 64)
	if err != nil {
		return parsedName{}
	}
	return parsedName{kind: kindNumber, value: v, digits: len(d)}
}

// millisDigits is the least length of a zero-padded bare number read as
// milliseconds when no frame rate is given.
const millisDigits = 9

// pairFromNames pairs left and right files by the time or number in their
// names.
func (s *PairSource) pairFromNames(left, right []string, fps float64) error {
	type named struct {
		path string
		p    parsedName
	}
	var sides [2][]named
	var kind nameKind
	var kindFile string
	for i, list := range [][]string{left, right} {
		for _, path := range list {
			p := parseName(path)
			if p.kind == kindNone {
				s.skipped[SkipNoNumber]++
				continue
			}
			if kind == kindNone {
				kind, kindFile = p.kind, path
			} else if p.kind != kind {
				return fmt.Errorf("ingest: image names mix conventions: %s carries %s but %s carries %s; name all images of a record the same way or give a timestamps file", kindFile, kind, path, p.kind)
			}
			sides[i] = append(sides[i], named{path, p})
		}
	}
	if kind == kindNone {
		return fmt.Errorf("ingest: no image name carries a number (for example %s); give a timestamps file, or names with a time or frame number", left[0])
	}
	// Time of a parsed name.
	var toTime func(p parsedName) float64
	switch {
	case kind == kindSeconds:
		toTime = func(p parsedName) float64 { return p.value }
	case kind == kindMillis:
		toTime = func(p parsedName) float64 { return p.value * 1e-3 }
	case fps > 0:
		toTime = func(p parsedName) float64 { return p.value / fps }
	default:
		for _, side := range sides {
			for _, n := range side {
				if n.p.digits < millisDigits {
					return fmt.Errorf("ingest: image names such as %s carry a frame number but no time, and there is no timestamps file; give the frame rate (FPS) or a timestamps file", n.path)
				}
			}
		}
		toTime = func(p parsedName) float64 { return p.value * 1e-3 }
	}
	// Index each side by its number; the first path in sorted order wins.
	var byKey [2]map[float64]string
	for i, side := range sides {
		byKey[i] = make(map[float64]string, len(side))
		for _, n := range side {
			if _, dup := byKey[i][n.p.value]; dup {
				s.skipped[SkipDuplicate]++
				continue
			}
			byKey[i][n.p.value] = n.path
		}
	}
	for key, lp := range byKey[0] {
		rp, ok := byKey[1][key]
		if !ok {
			s.skipped[SkipNoPartner]++
			continue
		}
		s.items = append(s.items, pairItem{time: toTime(parsedName{kind: kind, value: key}), left: lp, right: rp})
	}
	for key := range byKey[1] {
		if _, ok := byKey[0][key]; !ok {
			s.skipped[SkipNoPartner]++
		}
	}
	slices.SortFunc(s.items, func(a, b pairItem) int {
		if c := cmpFloat(a.time, b.time); c != 0 {
			return c
		}
		return strings.Compare(a.left, b.left)
	})
	// Distinct numbers give distinct times except through rounding of
	// huge values; keep the order strict whatever happens.
	kept := s.items[:0]
	for _, it := range s.items {
		if len(kept) > 0 && !(it.time > kept[len(kept)-1].time) {
			s.skipped[SkipTimeOrder]++
			continue
		}
		kept = append(kept, it)
	}
	s.items = kept
	return nil
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// tsRow is one row of a timestamps file.
type tsRow struct {
	frame       int
	time        float64
	left, right string
}

// pairFromTimestamps takes pairs and times from a timestamps file. left and
// right, when non-nil, select the rows.
func (s *PairSource) pairFromTimestamps(path string, left, right []string) error {
	rows, err := readTimestamps(path)
	if err != nil {
		return err
	}
	selecting := left != nil
	inL, inR := setOf(left), setOf(right)
	listed := map[string]bool{}
	slices.SortStableFunc(rows, func(a, b tsRow) int { return a.frame - b.frame })
	haveLast := false
	var last float64
	seen := map[int]bool{}
	for _, r := range rows {
		listed[r.left], listed[r.right] = true, true
		if selecting && !inL[r.left] && !inR[r.right] {
			continue // outside the selection
		}
		if seen[r.frame] {
			s.skipped[SkipDuplicate]++
			continue
		}
		seen[r.frame] = true
		var okL, okR bool
		if selecting {
			okL, okR = inL[r.left], inR[r.right]
		} else {
			okL, okR = isFile(r.left), isFile(r.right)
		}
		switch {
		case !okL && !okR:
			s.skipped[SkipNotFound]++
			continue
		case !okL || !okR:
			s.skipped[SkipNoPartner]++
			continue
		}
		if haveLast && !(r.time > last) {
			s.skipped[SkipTimeOrder]++
			continue
		}
		haveLast, last = true, r.time
		s.items = append(s.items, pairItem{time: r.time, left: r.left, right: r.right})
	}
	for _, list := range [][]string{left, right} {
		for _, p := range list {
			if !listed[p] {
				s.skipped[SkipNotListed]++
			}
		}
	}
	return nil
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

// readTimestamps reads and checks a timestamps file. Image paths are made
// absolute relative to the file's folder; empty cells stay empty.
func readTimestamps(path string) ([]tsRow, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("ingest: timestamps file %s does not exist; check the path", path)
		}
		return nil, fmt.Errorf("ingest: cannot open timestamps file %s (%v); check its permissions", path, err)
	}
	defer f.Close()
	base, err := filepath.Abs(filepath.Dir(path))
	if err != nil {
		return nil, fmt.Errorf("ingest: cannot resolve the folder of timestamps file %s (%v); give an absolute path", path, err)
	}
	cr := csv.NewReader(f)
	cr.Comment = '#'
	cr.TrimLeadingSpace = true
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		if err == io.EOF {
			return nil, fmt.Errorf("ingest: timestamps file %s is empty; it needs the header frame,time_s,left,right and one row per pair", path)
		}
		return nil, fmt.Errorf("ingest: timestamps file %s cannot be read as CSV (%v); write it as comma-separated text with the header frame,time_s,left,right", path, err)
	}
	col := map[string]int{"frame": -1, "time_s": -1, "left": -1, "right": -1}
	for i, h := range head {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if j, ok := col[h]; ok && j < 0 {
			col[h] = i
		}
	}
	for _, name := range []string{"frame", "time_s", "left", "right"} {
		if col[name] < 0 {
			return nil, fmt.Errorf("ingest: timestamps file %s has no %q column in its header (%s); the header must name frame,time_s,left,right", path, name, strings.Join(head, ","))
		}
	}
	resolve := func(p string) string {
		p = strings.TrimSpace(p)
		if p == "" {
			return ""
		}
		if !filepath.IsAbs(p) {
			p = filepath.Join(base, p)
		}
		return filepath.Clean(p)
	}
	var rows []tsRow
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		line, _ := cr.FieldPos(0)
		if err != nil {
			return nil, fmt.Errorf("ingest: timestamps file %s is malformed near line %d (%v); every row needs the same columns as the header", path, line, err)
		}
		fr, err := strconv.Atoi(strings.TrimSpace(rec[col["frame"]]))
		if err != nil {
			return nil, fmt.Errorf("ingest: timestamps file %s line %d has frame %q, which is not a whole number; fix or remove that row", path, line, rec[col["frame"]])
		}
		t, err := strconv.ParseFloat(strings.TrimSpace(rec[col["time_s"]]), 64)
		if err != nil || math.IsNaN(t) || math.IsInf(t, 0) {
			return nil, fmt.Errorf("ingest: timestamps file %s line %d has time_s %q, which is not a finite number of seconds; fix or remove that row", path, line, rec[col["time_s"]])
		}
		rows = append(rows, tsRow{frame: fr, time: t,
			left: resolve(rec[col["left"]]), right: resolve(rec[col["right"]])})
	}
	if len(rows) == 0 {
		return nil, fmt.Errorf("ingest: timestamps file %s has a header but no rows; it needs one row per image pair", path)
	}
	return rows, nil
}

// Len returns the number of pairs the source tries, in time order; Next
// delivers at most that many.
func (s *PairSource) Len() int { return len(s.items) }

// Times returns the times of the pairs the source tries, in seconds, in
// order.
func (s *PairSource) Times() []float64 {
	t := make([]float64, len(s.items))
	for i, it := range s.items {
		t[i] = it.time
	}
	return t
}

// Skipped returns the number of frames left out so far, by reason: those
// found at open (no partner, no number, duplicates, time order, files not
// listed) and those met by Next (unreadable images, sizes). Reasons with no
// frames are left out.
func (s *PairSource) Skipped() SkipCounts {
	c := SkipCounts{}
	for k, v := range s.skipped {
		if v > 0 {
			c[k] = v
		}
	}
	return c
}

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
		reason, l, r := s.decode(it)
		if reason != "" {
			if s.next >= s.visited {
				s.skipped[reason]++
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

// decode reads both images of a pair; on failure it returns the reason and
// releases what it read.
func (s *PairSource) decode(it pairItem) (reason string, l, r gocv.Mat) {
	l = gocv.IMRead(it.left, gocv.IMReadGrayScale)
	if l.Empty() {
		l.Close()
		return SkipUnreadable, gocv.Mat{}, gocv.Mat{}
	}
	if s.size != (image.Point{}) && (l.Cols() != s.size.X || l.Rows() != s.size.Y) {
		l.Close()
		return SkipWrongSize, gocv.Mat{}, gocv.Mat{}
	}
	r = gocv.IMRead(it.right, gocv.IMReadGrayScale)
	switch {
	case r.Empty():
		reason = SkipUnreadable
	case s.size != (image.Point{}) && (r.Cols() != s.size.X || r.Rows() != s.size.Y):
		reason = SkipWrongSize
	case r.Cols() != l.Cols() || r.Rows() != l.Rows():
		reason = SkipSizeMismatch
	}
	if reason != "" {
		l.Close()
		r.Close()
		return reason, gocv.Mat{}, gocv.Mat{}
	}
	return "", l, r
}

// release closes m if it holds an OpenCV matrix.
func release(m *gocv.Mat) {
	if m.Ptr() != nil {
		m.Close()
	}
}
