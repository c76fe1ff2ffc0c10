package ingest

import (
	"fmt"
	"strings"
)

// MaxNamedSkips is the number of skipped items a source names in its
// [SkipList]; the items beyond it are only counted, so that a record in
// which every file is bad does not hold a list as long as itself.
const MaxNamedSkips = 100

// SkippedItem names one item (an image pair, a point file, a video frame,
// a row of a timestamps file) that a source left out, and why.
type SkippedItem struct {
	// Files are the files concerned: the left and the right image of a
	// pair (either may be empty when it is the missing one), a point
	// file, a video file, or the timestamps file.
	Files []string
	// Line is the line of the timestamps file the item comes from; 0 when
	// none.
	Line int
	// Reason is the reason it is counted under in Skipped (one of the
	// Skip* constants).
	Reason string
	// Detail says more in words, when there is more to say: the time in
	// the row, the frame number in the video, the place of the fault in
	// the file. May be empty.
	Detail string
}

// String gives the item as one line: files, line, reason and detail.
func (it SkippedItem) String() string {
	var b strings.Builder
	files := make([]string, 0, len(it.Files))
	for _, f := range it.Files {
		if f != "" {
			files = append(files, oneLineText(f))
		}
	}
	b.WriteString(strings.Join(files, " + "))
	if it.Line > 0 {
		fmt.Fprintf(&b, " (line %d)", it.Line)
	}
	if b.Len() > 0 {
		b.WriteString(": ")
	}
	b.WriteString(it.Reason)
	if it.Detail != "" {
		b.WriteString(" (" + oneLineText(it.Detail) + ")")
	}
	return b.String()
}

// SkipList names the first [MaxNamedSkips] items a source skipped, in the
// order it met them (first those found when the record was opened, then
// those met while reading), and counts the rest. The counts by reason of
// all of them are the source's Skipped.
type SkipList struct {
	Items []SkippedItem
	// Unnamed is the number of skipped items beyond Items.
	Unnamed int
}

// skipLog counts skipped items by reason and names the first few.
type skipLog struct {
	counts SkipCounts
	list   SkipList
}

func newSkipLog() skipLog { return skipLog{counts: SkipCounts{}} }

// add counts one skipped item and names it while the list has room.
func (l *skipLog) add(it SkippedItem) {
	if l.counts == nil {
		l.counts = SkipCounts{}
	}
	l.counts[it.Reason]++
	if len(l.list.Items) < MaxNamedSkips {
		l.list.Items = append(l.list.Items, it)
	} else {
		l.list.Unnamed++
	}
}

// Counts returns a copy of the counts, without empty reasons.
func (l *skipLog) Counts() SkipCounts {
	c := SkipCounts{}
	for k, v := range l.counts {
		if v > 0 {
			c[k] = v
		}
	}
	return c
}

// List returns a copy of the list.
func (l *skipLog) List() SkipList {
	return SkipList{Items: append([]SkippedItem(nil), l.list.Items...), Unnamed: l.list.Unnamed}
}

// first returns the first named item, for error messages.
func (l *skipLog) first() (SkippedItem, bool) {
	if len(l.list.Items) == 0 {
		return SkippedItem{}, false
	}
	return l.list.Items[0], true
}
