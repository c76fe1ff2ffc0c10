package ingest

import (
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// tsRecord writes n tiny image pairs img/l_K.png, img/r_K.png and a
// timestamps file whose header is head and whose row k is row(k) (a row
// "" is left out), and returns the file's path.
func tsRecord(t *testing.T, n int, head string, row func(k int, l, r string) string) string {
	t.Helper()
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString(head + "\n")
	for k := 0; k < n; k++ {
		l, r := fmt.Sprintf("img/l_%d.png", k), fmt.Sprintf("img/r_%d.png", k)
		writePNG(t, filepath.Join(dir, l), greyPattern(8, 8, 2*k))
		writePNG(t, filepath.Join(dir, r), greyPattern(8, 8, 2*k+1))
		if s := row(k, l, r); s != "" {
			b.WriteString(s + "\n")
		}
	}
	p := filepath.Join(dir, TimestampsName)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// wantTimes fails unless got equals want exactly.
func wantTimes(t *testing.T, what string, got, want []float64) {
	t.Helper()
	if !slicesEqual(got, want) {
		t.Errorf("%s: times %v, want %v", what, got, want)
	}
}

// skipNamed fails unless the source names a skipped item at line with
// reason.
func skipNamed(t *testing.T, list SkipList, line int, reason string) {
	t.Helper()
	for _, it := range list.Items {
		if it.Line == line && it.Reason == reason {
			if s := it.String(); !strings.Contains(s, fmt.Sprintf("line %d", line)) || strings.Contains(s, "\n") {
				t.Errorf("skipped item %q does not name line %d in one line", s, line)
			}
			return
		}
	}
	t.Errorf("no skipped item at line %d with reason %q in %v", line, reason, list.Items)
}

// A stray quote in a row used to make the reader panic (FieldPos called on
// the failed read). Now a quote within one row skips that row, named by its
// line, and the pairs before and after it stay; a quote left open across
// lines, which hides an unknown number of rows, is one sentence naming both
// lines.
func TestTimestampsStrayQuote(t *testing.T) {
	checkMats(t)
	p := tsRecord(t, 5, "frame,time_s,left,right", func(k int, l, r string) string {
		switch k {
		case 2:
			return fmt.Sprintf(`%d,0.%d,img/l_"%d.png,%s`, k, k, k, r) // bare quote
		case 3:
			return fmt.Sprintf(`%d"`, k) // bare quote in the first field: the panic of old
		}
		return fmt.Sprintf("%d,0.%d,%s,%s", k, k, l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	// Check: the times typed in the rows other than the bad ones.
	wantTimes(t, "stray quote", src.Times(), []float64{0, 0.1, 0.4})
	if got, want := src.Skipped(), (SkipCounts{SkipBadRow: 2}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
	skipNamed(t, src.SkippedFiles(), 4, SkipBadRow) // header is line 1, frame 2 line 4
	skipNamed(t, src.SkippedFiles(), 5, SkipBadRow)

	open := tsRecord(t, 4, "frame,time_s,left,right", func(k int, l, r string) string {
		if k == 1 {
			return fmt.Sprintf(`"%d,0.%d,%s,%s`, k, k, l, r) // quote never closed
		}
		return fmt.Sprintf("%d,0.%d,%s,%s", k, k, l, r)
	})
	_, err = OpenPairs(PairSpec{TimestampsFile: open})
	oneLine(t, err, "quote opened on line 3", "remove the stray quote", open)
}

// oneLine fails unless err is one line beginning "ingest: " and holding
// every fragment.
func oneLine(t *testing.T, err error, frags ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error, want one holding %q", frags)
	}
	msg := err.Error()
	if !strings.HasPrefix(msg, "ingest: ") || strings.Contains(msg, "\n") {
		t.Errorf("error %q is not one line beginning \"ingest: \"", msg)
	}
	for _, f := range frags {
		if !strings.Contains(msg, f) {
			t.Errorf("error %q lacks %q", msg, f)
		}
	}
}

// Absurd times in single rows: each costs its own row, skipped with its
// reason and line, and never the rows after it (a 1e300 used to drop all
// the 20 pairs that followed it, and made the time axis unusable).
func TestTimestampsAbsurdTimes(t *testing.T) {
	checkMats(t)
	const n = 40
	bad := map[int]string{
		3:  "1e300",  // huge: out of span
		7:  "NaN",    // not finite
		9:  "-Inf",   // not finite
		11: "1e400",  // overflows float64: not finite
		15: "-3.0",   // negative in the middle: out of order
		20: "20.5",   // a typo within span: out of order (too late)
		25: "abc",    // not a number: malformed row
		30: "1.0e6",  // a one-off jump of 1e6 s: out of span
		33: "0.0330", // repeated time of the previous row: out of order
	}
	reason := map[int]string{3: SkipTimeSpan, 7: SkipBadTime, 9: SkipBadTime, 11: SkipBadTime,
		15: SkipTimeOrder, 20: SkipTimeOrder, 25: SkipBadRow, 30: SkipTimeSpan, 33: SkipTimeOrder}
	timeOf := func(k int) string { return fmt.Sprintf("%.4f", 0.1*float64(k)) }
	p := tsRecord(t, n, "frame,time_s,left,right", func(k int, l, r string) string {
		ts := timeOf(k)
		if v, ok := bad[k]; ok {
			ts = v
		}
		if k == 33 {
			ts = timeOf(32)
		}
		return fmt.Sprintf("%d,%s,%s,%s", k, ts, l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	// Check: every good row is kept with the time typed in it.
	var want []float64
	wantSkips := SkipCounts{}
	for k := 0; k < n; k++ {
		if r, ok := reason[k]; ok {
			wantSkips[r]++
			continue
		}
		var v float64
		fmt.Sscan(timeOf(k), &v)
		want = append(want, v)
	}
	wantTimes(t, "absurd rows", src.Times(), want)
	if got := src.Skipped(); !maps.Equal(got, wantSkips) {
		t.Errorf("Skipped = %v, want %v", got, wantSkips)
	}
	list := src.SkippedFiles()
	for k, r := range reason {
		skipNamed(t, list, k+2, r)
	}
	if list.Unnamed != 0 || len(list.Items) != len(reason) {
		t.Errorf("%d named and %d unnamed skipped items, want %d named", len(list.Items), list.Unnamed, len(reason))
	}
}

// A clock that jumps by 1e6 s for the rest of the record, or a first row
// at -1e6 s: the side of the median is kept, the far side skipped as out
// of span (with the default span of two days), and max_record_span_s
// widens it.
func TestTimestampsSpan(t *testing.T) {
	checkMats(t)
	const n = 12
	p := tsRecord(t, n, "frame,time_s,left,right", func(k int, l, r string) string {
		ts := 0.5 * float64(k)
		switch {
		case k == 0:
			ts = -1e6
		case k >= 9:
			ts += 1e6
		}
		return fmt.Sprintf("%d,%g,%s,%s", k, ts, l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	// Check: rows 1-8 at 0.5 k s, the times typed in the file.
	wantTimes(t, "jump", src.Times(), []float64{0.5, 1, 1.5, 2, 2.5, 3, 3.5, 4})
	if got, want := src.Skipped(), (SkipCounts{SkipTimeSpan: 4}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
	wide, err := OpenPairs(PairSpec{TimestampsFile: p, MaxSpanS: 3e6})
	if err != nil {
		t.Fatal(err)
	}
	if wide.Len() != n {
		t.Errorf("with max_record_span_s 3e6: %d pairs, want %d", wide.Len(), n)
	}
	for _, v := range []float64{-1, math.NaN(), math.Inf(1)} {
		_, err := OpenPairs(PairSpec{TimestampsFile: p, MaxSpanS: v})
		oneLine(t, err, "max_record_span_s")
	}
}

// Rows with the wrong number of fields, bad frame numbers, a file of one
// bad row, a header only, a line without end: each a counted skip or one
// sentence.
func TestTimestampsMalformed(t *testing.T) {
	checkMats(t)
	p := tsRecord(t, 4, "frame,time_s,left,right", func(k int, l, r string) string {
		switch k {
		case 1:
			return fmt.Sprintf("%d,0.%d,%s", k, k, l) // a field short (truncated row)
		case 2:
			return fmt.Sprintf("two,0.%d,%s,%s", k, l, r)
		}
		return fmt.Sprintf("%d,0.%d,%s,%s", k, k, l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, "malformed", src.Times(), []float64{0, 0.3})
	skipNamed(t, src.SkippedFiles(), 3, SkipBadRow)
	skipNamed(t, src.SkippedFiles(), 4, SkipBadRow)

	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	for _, c := range []struct {
		name, text string
		frags      []string
	}{
		{"empty.csv", "", []string{"is empty"}},
		{"headonly.csv", "frame,time_s,left,right\n", []string{"header but no rows"}},
		{"nofile.csv", "frame,time_s,left\n1,2,x\n", []string{`no "right" column`}},
		{"long.csv", strings.Repeat("x", maxCSVLine+10), []string{"longer than"}},
		{"onebad.csv", "frame,time_s,left,right\n0,nan,a.png,b.png\n", []string{"no usable image pair", "line 2", "time not a finite number"}},
	} {
		_, err := OpenPairs(PairSpec{TimestampsFile: write(c.name, c.text)})
		oneLine(t, err, append(c.frags, c.name)...)
	}
}

// One time out of place within the span: the longest run of increasing
// times is kept, so the spike alone is skipped (the rule before kept the
// spike and dropped every row until the times passed it).
func TestTimestampsSpikeKeepsNeighbours(t *testing.T) {
	checkMats(t)
	p := tsRecord(t, 25, "frame,time_s,left,right", func(k int, l, r string) string {
		ts := fmt.Sprintf("%.2f", 0.1*float64(k))
		if k == 2 {
			ts = "100.00"
		}
		return fmt.Sprintf("%d,%s,%s,%s", k, ts, l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	if src.Len() != 24 {
		t.Errorf("%d pairs, want 24", src.Len())
	}
	if got, want := src.Skipped(), (SkipCounts{SkipTimeOrder: 1}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
	skipNamed(t, src.SkippedFiles(), 4, SkipTimeOrder)
}

// longestIncreasing against a brute force over all subsets of short
// sequences: the same length, and the lexicographically first of the
// longest.
func TestLongestIncreasing(t *testing.T) {
	seqs := [][]float64{
		{}, {1}, {2, 1}, {1, 2, 3}, {3, 1, 2}, {1, 5, 2, 3, 4}, {10, 0, 1, 2, 11, 3},
		{1, 1, 1}, {0, 0.25, 0.5, 0.4, 0.75, 0.75, 1.5}, {5, 4, 3, 2, 1}, {2, 2, 3, 1, 4, 0, 5},
	}
	for _, s := range seqs {
		got := longestIncreasing(s)
		// Brute force: subsets in lexicographic order of their index
		// lists, longest first.
		best := []int(nil)
		for mask := 0; mask < 1<<len(s); mask++ {
			var idx []int
			ok := true
			for i := range s {
				if mask&(1<<i) != 0 {
					if len(idx) > 0 && !(s[i] > s[idx[len(idx)-1]]) {
						ok = false
						break
					}
					idx = append(idx, i)
				}
			}
			if !ok {
				continue
			}
			if len(idx) > len(best) || (len(idx) == len(best) && lexLess(idx, best)) {
				best = idx
			}
		}
		var gotIdx []int
		for i, k := range got {
			if k {
				gotIdx = append(gotIdx, i)
			}
		}
		if fmt.Sprint(gotIdx) != fmt.Sprint(best) {
			t.Errorf("%v: kept %v, want %v", s, gotIdx, best)
		}
	}
}

func lexLess(a, b []int) bool {
	for i := range a {
		if a[i] != b[i] {
			return a[i] < b[i]
		}
	}
	return false
}

// A utc column, with the columns in another order: times are seconds from
// the whole second of the first pair, and that second is time 0.
func TestTimestampsUTCColumn(t *testing.T) {
	checkMats(t)
	p := tsRecord(t, 4, "left,utc,frame,right", func(k int, l, r string) string {
		u := []string{"2026-06-14T09:00:00.250Z", "2026-06-14T11:00:00.350+02:00", "2026-06-14 09:00:00.45", "not a time"}[k]
		return fmt.Sprintf("%s,%s,%d,%s", l, u, k, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	// Check: the instants typed above less 09:00:00Z (ISO 8601: +02:00 is
	// two hours east of UTC; no offset is read as UTC by the column's
	// name); the fourth row is not an instant and is skipped.
	wantTimes(t, "utc", src.Times(), []float64{0.25, 0.35, 0.45})
	skipNamed(t, src.SkippedFiles(), 5, SkipBadRow)
	o, ok := src.Origin()
	if !ok || !o.UTC.Equal(time.Date(2026, 6, 14, 9, 0, 0, 0, time.UTC)) || !strings.HasPrefix(o.From, OriginUTCColumn) {
		t.Errorf("Origin = %v, %v; want 2026-06-14T09:00:00Z from the utc column", o, ok)
	}
	if r := src.TimeRule(); !strings.Contains(r, "utc column") {
		t.Errorf("TimeRule %q does not name the utc column", r)
	}
	// start_utc puts time 0 elsewhere: the times follow it.
	src2, err := OpenPairs(PairSpec{TimestampsFile: p, StartUTC: "2026-06-14T08:59:59Z"})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, "utc from start_utc", src2.Times(), []float64{1.25, 1.35, 1.45})
	if o, _ := src2.Origin(); o.From != OriginSetting {
		t.Errorf("Origin from %q, want %q", o.From, OriginSetting)
	}
}

// time_s and utc together: time_s gives the times, the median of utc −
// time_s gives time 0; start_utc overrides it and says what it overrode.
func TestTimestampsTimeAndUTC(t *testing.T) {
	checkMats(t)
	utc := []string{"2026-06-14T09:00:10.000Z", "2026-06-14T09:00:10.101Z", "2026-06-14T09:00:10.199Z", ""}
	p := tsRecord(t, 4, "frame,time_s,utc,left,right", func(k int, l, r string) string {
		return fmt.Sprintf("%d,%.1f,%s,%s,%s", k, 0.1*float64(k), utc[k], l, r)
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: p})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, "time_s", src.Times(), []float64{0, 0.1, 0.2, 0.3})
	// Check: offsets utc − time_s are 10.000, 10.001 and 9.999 s past
	// 09:00:00 (typed above); their median is 10.000 s.
	o, ok := src.Origin()
	if !ok || !o.UTC.Equal(time.Date(2026, 6, 14, 9, 0, 10, 0, time.UTC)) {
		t.Errorf("Origin = %v, %v; want 2026-06-14T09:00:10Z", o, ok)
	}
	if !strings.Contains(o.From, "median of 3 rows") || !strings.Contains(o.From, "spread 0.001 s") {
		t.Errorf("Origin.From %q does not give the rows and the spread", o.From)
	}
	set, err := OpenPairs(PairSpec{TimestampsFile: p, StartUTC: "2026-06-14T09:00:00Z"})
	if err != nil {
		t.Fatal(err)
	}
	o, _ = set.Origin()
	if !o.UTC.Equal(time.Date(2026, 6, 14, 9, 0, 0, 0, time.UTC)) || !strings.HasPrefix(o.From, OriginSetting) || !strings.Contains(o.From, "2026-06-14T09:00:10Z") {
		t.Errorf("with start_utc: Origin %v, want the setting, naming what the utc column gives", o)
	}
	_, err = OpenPairs(PairSpec{TimestampsFile: p, StartUTC: "14/06/2026"})
	oneLine(t, err, "start_utc", "14/06/2026")
}

// ParseInstant against instants worked out by hand from ISO 8601's rules
// (an offset east of UTC is subtracted; no offset is UTC here).
func TestParseInstant(t *testing.T) {
	for _, c := range []struct {
		in   string
		want time.Time
	}{
		{"2026-06-14T09:00:00Z", time.Date(2026, 6, 14, 9, 0, 0, 0, time.UTC)},
		{"2026-06-14t09:00:00.5z", time.Date(2026, 6, 14, 9, 0, 0, 5e8, time.UTC)},
		{"2026-06-14T09:00:00,25+01:30", time.Date(2026, 6, 14, 7, 30, 0, 25e7, time.UTC)},
		{"2026-06-14 09:00:00-0300", time.Date(2026, 6, 14, 12, 0, 0, 0, time.UTC)},
		{"20260614T090000Z", time.Date(2026, 6, 14, 9, 0, 0, 0, time.UTC)},
		{" 2026-06-14T09:00:00.123456789 ", time.Date(2026, 6, 14, 9, 0, 0, 123456789, time.UTC)},
	} {
		got, err := ParseInstant(c.in)
		if err != nil || !got.Equal(c.want) || got.Location() != time.UTC {
			t.Errorf("ParseInstant(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"", "2026-06-14", "2026-13-01T00:00:00Z", "2026-06-14T25:00:00Z", "2026-06-14T09:00:60Z", "yesterday at noon", strings.Repeat("9", 100)} {
		if _, err := ParseInstant(bad); err == nil {
			t.Errorf("ParseInstant(%q) accepted", bad)
		}
	}
}
