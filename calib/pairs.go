package calib

import (
	"fmt"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
)

// Pair is one calibration view: the left and right image of the same
// instant.
type Pair struct {
	Name        string // label in reports: the shared number, or the left file's base name
	Left, Right string // image paths
}

// PairGlobs expands two glob patterns (path/filepath.Match syntax) and
// pairs the files with [PairFiles].
func PairGlobs(leftGlob, rightGlob string) ([]Pair, error) {
	var lists [2][]string
	for i, g := range []struct{ flag, pattern string }{{"left", leftGlob}, {"right", rightGlob}} {
		if g.pattern == "" {
			return nil, fmt.Errorf("no %s image pattern given; set --%s to a glob such as \"calib/%s*.png\"", g.flag, g.flag, g.flag)
		}
		m, err := filepath.Glob(g.pattern)
		if err != nil {
			return nil, fmt.Errorf("%s image pattern %q is not a valid glob: %v", g.flag, g.pattern, err)
		}
		if len(m) == 0 {
			return nil, fmt.Errorf("%s image pattern %q matches no file; check the folder and quote the pattern", g.flag, g.pattern)
		}
		lists[i] = m
	}
	return PairFiles(lists[0], lists[1])
}

// PairFiles matches left and right image files. When every file name
// carries a number (the last run of digits in its base name) and no number
// repeats on either side, files are matched by that number; otherwise they
// are matched in sorted order. Files without a partner make an error that
// lists them.
func PairFiles(left, right []string) ([]Pair, error) {
	if len(left) == 0 || len(right) == 0 {
		return nil, fmt.Errorf("calibration needs left and right images, got %d left and %d right", len(left), len(right))
	}
	l := append([]string(nil), left...)
	r := append([]string(nil), right...)
	sort.Strings(l)
	sort.Strings(r)
	ln, lok := numbered(l)
	rn, rok := numbered(r)
	if lok && rok {
		var pairs []Pair
		var unmatched []string
		for _, n := range sortedKeys(ln) {
			if rf, ok := rn[n]; ok {
				pairs = append(pairs, Pair{Name: strconv.Itoa(n), Left: ln[n], Right: rf})
			} else {
				unmatched = append(unmatched, ln[n])
			}
		}
		for _, n := range sortedKeys(rn) {
			if _, ok := ln[n]; !ok {
				unmatched = append(unmatched, rn[n])
			}
		}
		if len(unmatched) > 0 {
			return nil, fmt.Errorf("%s %s no partner with the same number on the other side; remove %s or add the missing image",
				listFiles(unmatched), plural(len(unmatched), "has", "have"), plural(len(unmatched), "it", "them"))
		}
		return pairs, nil
	}
	if len(l) != len(r) {
		var extra []string
		if len(l) > len(r) {
			extra = l[len(r):]
		} else {
			extra = r[len(l):]
		}
		return nil, fmt.Errorf("there are %d left and %d right images and their names carry no shared numbers, so %s %s no partner; give both sides the same images or number the files",
			len(l), len(r), listFiles(extra), plural(len(extra), "has", "have"))
	}
	pairs := make([]Pair, len(l))
	for i := range l {
		pairs[i] = Pair{Name: strings.TrimSuffix(filepath.Base(l[i]), filepath.Ext(l[i])), Left: l[i], Right: r[i]}
	}
	return pairs, nil
}

// numbered maps each file's number to the file; ok is false when a file
// has no number or a number repeats.
func numbered(files []string) (map[int]string, bool) {
	m := make(map[int]string, len(files))
	for _, f := range files {
		n, ok := fileNumber(f)
		if !ok {
			return nil, false
		}
		if _, dup := m[n]; dup {
			return nil, false
		}
		m[n] = f
	}
	return m, true
}

// fileNumber returns the last run of digits in the file's base name
// (extension removed).
func fileNumber(path string) (int, bool) {
	base := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	end := strings.LastIndexFunc(base, isDigit)
	if end < 0 {
		return 0, false
	}
	start := end
	for start > 0 && isDigit(rune(base[start-1])) {
		start--
	}
	n, err := strconv.Atoi(base[start : end+1])
	return n, err == nil
}

func isDigit(r rune) bool { return r >= '0' && r <= '9' }

func sortedKeys(m map[int]string) []int {
	keys := make([]int, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Ints(keys)
	return keys
}

func listFiles(files []string) string {
	const max = 8
	s := strings.Join(files[:min(len(files), max)], ", ")
	if len(files) > max {
		s += fmt.Sprintf(" and %d more", len(files)-max)
	}
	return s
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}
