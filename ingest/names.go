package ingest

import (
	"fmt"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
)

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

// maxNameLen is the longest base name parseName reads; longer names carry
// no time.
const maxNameLen = 1024

// parseName reads the time or number a file name carries. A time with its
// unit counts only when it holds the last run of digits of the name, so that
// a label earlier in the name (say "run_10s_left_0001") is not taken for
// the time. A number too large for a float64 is no number.
func parseName(path string) parsedName {
	base := filepath.Base(path)
	base = strings.TrimSuffix(base, filepath.Ext(base))
	if len(base) > maxNameLen {
		return parsedName{}
	}
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

// minMillisStep is the smallest median step, in milliseconds, between the
// numbers of consecutive names for bare numbers to be read as
// milliseconds: 5 ms, a frame rate of 200 Hz. Sea-surface stereo rigs
// record at 1–100 Hz (common practice), so their millisecond names step by
// 10 ms or more, while a frame counter steps by 1 (or a few, with frames
// dropped or decimated).
const minMillisStep = 5

// namedFile is a file and what its name says.
type namedFile struct {
	path string
	p    parsedName
}

// nameRule is how the names of a record give times.
type nameRule struct {
	kind   nameKind
	fps    float64 // frame rate for bare numbers; 0 when they are milliseconds
	note   string  // how the names were read, one sentence
	toTime func(v float64) float64
}

// chooseNameRule decides how names give times: by their unit, by fps for
// bare numbers, or, with no fps, as milliseconds when every number has at
// least millisDigits digits and they step like milliseconds. files must
// all carry a number; what names the files ("image", "point file").
func chooseNameRule(files []namedFile, fps float64, what string) (nameRule, error) {
	if len(files) == 0 {
		return nameRule{}, fmt.Errorf("ingest: no %s name carries a number; give a timestamps file, or names with a time or frame number", what)
	}
	kind, kindFile := files[0].p.kind, files[0].path
	for _, f := range files[1:] {
		if f.p.kind != kind {
			return nameRule{}, fmt.Errorf("ingest: %s names mix conventions: %s carries %s but %s carries %s; name all files of a record the same way or give a timestamps file", what, oneLineText(kindFile), kind, oneLineText(f.path), f.p.kind)
		}
	}
	switch {
	case kind == kindSeconds:
		return nameRule{kind: kind, toTime: func(v float64) float64 { return v },
			note: "times read from the file names: the number marked s (as in _t12.345s) in seconds"}, nil
	case kind == kindMillis:
		return nameRule{kind: kind, toTime: func(v float64) float64 { return v * 1e-3 },
			note: "times read from the file names: the number marked ms (as in _ms000123 or _123ms) in milliseconds"}, nil
	case fps > 0:
		return nameRule{kind: kind, fps: fps, toTime: func(v float64) float64 { return v / fps },
			note: fmt.Sprintf("times read from the file names: the last number of each name taken as a frame number at %g Hz (time = number / %g s)", fps, fps)}, nil
	}
	for _, f := range files {
		if f.p.digits < millisDigits {
			return nameRule{}, fmt.Errorf("ingest: %s names such as %s carry a frame number but no time, and there is no timestamps file; give the frame rate (FPS) or a timestamps file", what, oneLineText(f.path))
		}
	}
	vals := make([]float64, len(files))
	for i, f := range files {
		vals[i] = f.p.value
	}
	slices.Sort(vals)
	vals = slices.Compact(vals)
	rule := nameRule{kind: kind, toTime: func(v float64) float64 { return v * 1e-3 }}
	if len(vals) < 2 {
		rule.note = fmt.Sprintf("times read from the file names: the last number of each name (%d or more digits, no frame rate given) taken as milliseconds (time = number / 1000 s); with a single number its step could not be checked", millisDigits)
		return rule, nil
	}
	steps := make([]float64, len(vals)-1)
	for i := range steps {
		steps[i] = vals[i+1] - vals[i]
	}
	slices.Sort(steps)
	step := steps[(len(steps)-1)/2]
	if step < minMillisStep {
		return nameRule{}, fmt.Errorf("ingest: %s names such as %s carry numbers of %d or more digits that step by %g, like a frame counter, so they cannot be told from milliseconds (that would be %g Hz); give the frame rate (FPS) or a timestamps file", what, oneLineText(files[0].path), millisDigits, step, 1000/step)
	}
	rule.note = fmt.Sprintf("times read from the file names: the last number of each name (%d or more digits, no frame rate given) taken as milliseconds (time = number / 1000 s), stepping by %g ms (%.4g Hz)", millisDigits, step, 1000/step)
	return rule, nil
}
