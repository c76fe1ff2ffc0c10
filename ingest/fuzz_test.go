package ingest

import (
	"bytes"
	"io"
	"math"
	"strings"
	"testing"
)

// Fuzz targets of the parsers of this package. Each has a seed corpus in
// testdata/fuzz/<name>; run one with, for example,
//
//	go test ./ingest -run '^$' -fuzz '^FuzzTimestamps$' -fuzztime 15s

// oneSentence fails unless msg is one line beginning "ingest: ".
func oneSentence(t *testing.T, msg string) {
	t.Helper()
	if !strings.HasPrefix(msg, "ingest: ") || strings.ContainsAny(msg, "\n\r") {
		t.Fatalf("message is not one line beginning \"ingest: \": %q", msg)
	}
}

// FuzzTimestamps reads any bytes as a timestamps file and pairs its rows:
// no panic, errors are one sentence, and every row ends up either as a
// pair in strictly increasing, finite, plausible time or as one named skip.
func FuzzTimestamps(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		tab, err := parseTimestamps(bytes.NewReader(data), "ts.csv", "rec", []string{"left", "right"})
		if err != nil {
			oneSentence(t, err.Error())
			return
		}
		// Select every file the rows name, as patterns matching all the
		// images would.
		var files []string
		add := func(fs []string) {
			for _, p := range fs {
				if p != "" {
					files = append(files, p)
				}
			}
		}
		for _, r := range tab.rows {
			if math.IsNaN(r.time) || math.IsInf(r.time, 0) || r.line < 1 {
				t.Fatalf("row %+v has a time that is not finite or no line", r)
			}
			add(r.files)
		}
		for _, it := range tab.skips {
			if it.Reason == "" || it.Line < 1 || strings.ContainsAny(it.String(), "\n\r") {
				t.Fatalf("skipped row %+v has no reason or line, or is not one line", it)
			}
			add(it.Files[1:])
		}
		if len(tab.rows)+len(tab.skips) != tab.nReadRows {
			t.Fatalf("%d rows and %d skips of %d rows read", len(tab.rows), len(tab.skips), tab.nReadRows)
		}
		s := &PairSource{log: newSkipLog()}
		s.pairFromTable(tab, files, files, DefaultMaxSpanS, TimeOrigin{}, false)
		for i, it := range s.items {
			if math.IsNaN(it.time) || math.IsInf(it.time, 0) || (i > 0 && !(it.time > s.items[i-1].time)) {
				t.Fatalf("pair %d at %g s after %d pairs", i, it.time, i)
			}
		}
		if len(s.items) > 1 && s.items[len(s.items)-1].time-s.items[0].time > 2*DefaultMaxSpanS+1 {
			t.Fatalf("pairs span %g s", s.items[len(s.items)-1].time-s.items[0].time)
		}
		n := 0
		for k, v := range s.Skipped() {
			if k != SkipNotListed {
				n += v
			}
		}
		if len(s.items)+n != tab.nReadRows {
			t.Fatalf("%d pairs and %d skips of %d rows", len(s.items), n, tab.nReadRows)
		}
		if o, ok := s.Origin(); ok && o.From == "" {
			t.Fatal("an origin without its source")
		}
	})
}

// FuzzNameTime reads times from any file names (one per line of the
// input): no panic; a bare number is the last run of digits; a rule,
// when one is found, gives a finite time for every name or an error of
// one sentence.
func FuzzNameTime(f *testing.F) {
	f.Fuzz(func(t *testing.T, text string, fps float64) {
		var named []namedFile
		for i, name := range strings.Split(text, "\n") {
			if i >= 64 {
				break
			}
			p := parseName(name)
			switch p.kind {
			case kindNone:
				continue
			case kindNumber:
				if p.digits < 1 || p.value < 0 || math.IsInf(p.value, 0) {
					t.Fatalf("%q: number %g of %d digits", name, p.value, p.digits)
				}
			default:
				if p.value < 0 || math.IsNaN(p.value) || math.IsInf(p.value, 0) {
					t.Fatalf("%q: time %g", name, p.value)
				}
			}
			named = append(named, namedFile{name, p})
		}
		if fps != 0 && checkFPS(fps, "FPS") != nil {
			fps = 0
		}
		rule, err := chooseNameRule(named, fps, "image")
		if err != nil {
			oneSentence(t, err.Error())
			return
		}
		if rule.note == "" {
			t.Fatal("a rule without its sentence")
		}
		for _, n := range named {
			if v := rule.toTime(n.p.value); math.IsNaN(v) {
				t.Fatalf("%q: time NaN", n.path)
			}
		}
	})
}

// FuzzCaptureTime reads any bytes as a JPEG and as a TIFF for their EXIF
// capture time: no panic, no endless loop, and a time found has a
// date of four-digit year.
func FuzzCaptureTime(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, read := range []func() (CaptureTime, error){
			func() (CaptureTime, error) { return captureTimeJPEG(bytes.NewReader(data)) },
			func() (CaptureTime, error) { return captureTimeTIFF(bytes.NewReader(data), int64(len(data))) },
		} {
			c, err := read()
			if err != nil {
				continue
			}
			if y := c.UTC.Year(); y < -1 || y > 10000 {
				t.Fatalf("capture time %v", c.UTC)
			}
		}
	})
}

// FuzzPLY reads any bytes as a PLY file: no panic, errors are one
// sentence, the points are finite, and no more points come out than the
// header announces.
func FuzzPLY(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := NewPLYReader(bytes.NewReader(data), "f.ply")
		if err != nil {
			oneSentence(t, err.Error())
			return
		}
		buf := make([]Point, 7)
		total := int64(0)
		for {
			n, err := p.Read(buf)
			total += int64(n)
			for _, q := range buf[:n] {
				if !finite(q.X) || !finite(q.Y) || !finite(q.Z) {
					t.Fatalf("point %v", q)
				}
			}
			if err == io.EOF {
				break
			}
			if err != nil {
				oneSentence(t, err.Error())
				break
			}
			if n == 0 {
				t.Fatal("Read returned no points and no error")
			}
		}
		if total+int64(p.Dropped()) > p.Count() {
			t.Fatalf("%d points and %d dropped of %d announced", total, p.Dropped(), p.Count())
		}
	})
}

// FuzzXYZ reads any bytes as a point text file, with the delimiter found
// and with each one set: no panic, errors are one sentence naming a line,
// the points are finite.
func FuzzXYZ(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte, delim uint8) {
		opt := XYZOptions{Delimiter: []string{"", ",", ";", "tab", "space"}[int(delim)%5]}
		if delim >= 128 {
			opt.Indexes = []int{int(delim) % 3, 2, int(delim) % 5}
		}
		x, err := NewXYZReader(bytes.NewReader(data), "f.xyz", opt)
		if err != nil {
			oneSentence(t, err.Error())
			return
		}
		buf := make([]Point, 5)
		for {
			n, err := x.Read(buf)
			for _, q := range buf[:n] {
				if !finite(q.X) || !finite(q.Y) || !finite(q.Z) {
					t.Fatalf("point %v", q)
				}
			}
			if err == io.EOF {
				return
			}
			if err != nil {
				oneSentence(t, err.Error())
				if !strings.Contains(err.Error(), " line ") {
					t.Fatalf("error %q names no line", err)
				}
				return
			}
			if n == 0 {
				t.Fatal("Read returned no points and no error")
			}
		}
	})
}
