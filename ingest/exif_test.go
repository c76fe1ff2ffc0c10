package ingest

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"crestspeed/internal/pyref"
)

// opencvDocData holds the sample images of Debian's opencv-doc package;
// several are camera JPEGs with EXIF data, in both byte orders.
const opencvDocData = "/usr/share/doc/opencv-doc/examples/data/"

// exifRef is what Pillow (Debian's python3-pil) reads from a file: the three
// tags as text, and the instant they give, worked out with Python's
// datetime by the rules of Exif 2.32 §4.6.5 (fraction digits after the
// second; the offset is subtracted; no offset is taken as UTC here).
type exifRef struct {
	Path   string `json:"path"`
	DTO    string `json:"dto"`
	UTC    string `json:"utc"` // RFC 3339 with microseconds, "" when no DTO
	SubSec bool   `json:"subsec"`
	Offset bool   `json:"offset"`
}

// exifScript writes the files asked for with Pillow (EXIF in a JPEG's APP1
// segment, or in a TIFF's Exif IFD) and reads every file back with Pillow.
const exifScript = `
import json, sys, datetime
import numpy as np
from PIL import Image
req = json.load(open(sys.argv[1]))
for w in req["write"]:
    im = Image.fromarray((np.arange(16*24, dtype=np.uint16) % 251).astype(np.uint8).reshape(16, 24))
    ex = Image.Exif()
    tags = {0x9003: w["dto"]}
    if w["sub"]: tags[0x9291] = w["sub"]
    if w["off"]: tags[0x9011] = w["off"]
    if w["path"].endswith(".tif"):
        ex._ifds[0x8769] = tags
        ex[0x8769] = 0
    else:
        ex[0x8769] = tags
    im.save(w["path"], exif=ex)
out = []
for p in req["read"]:
    e = Image.open(p).getexif().get_ifd(0x8769)
    dto, sub, off = e.get(0x9003), e.get(0x9291), e.get(0x9011)
    r = {"path": p, "dto": dto or "", "utc": "", "subsec": bool(sub and sub.strip()), "offset": bool(off)}
    if dto:
        t = datetime.datetime.strptime(dto.strip(), "%Y:%m:%d %H:%M:%S")
        if r["subsec"]:
            s = sub.strip()
            t += datetime.timedelta(microseconds=int(s) * 10**(6 - len(s)))
        if off:
            sign = -1 if off[0] == "-" else 1
            t -= sign * datetime.timedelta(hours=int(off[1:3]), minutes=int(off[4:6]))
        r["utc"] = t.strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    out.append(r)
print(json.dumps(out))
`

// TestCaptureTime reads the EXIF capture time of JPEG and TIFF files
// written by Pillow and of camera JPEGs shipped by Debian's opencv-doc
// (Motorola and Intel byte order, with and without SubSecTimeOriginal, one
// with no DateTimeOriginal), against Pillow's reading of the same files.
func TestCaptureTime(t *testing.T) {
	dir := t.TempDir()
	type w struct {
		Path string `json:"path"`
		DTO  string `json:"dto"`
		Sub  string `json:"sub"`
		Off  string `json:"off"`
	}
	writes := []w{
		{filepath.Join(dir, "full.jpg"), "2026:06:14 11:00:05", "125", "+02:00"},
		{filepath.Join(dir, "west.jpg"), "2026:06:14 04:30:00", "5", "-04:30"},
		{filepath.Join(dir, "plain.jpg"), "2026:06:14 09:00:00", "", ""},
		{filepath.Join(dir, "full.tif"), "2026:06:14 11:00:05", "987654", "+02:00"},
		{filepath.Join(dir, "plain.tif"), "2026:12:31 23:59:59", "", ""},
	}
	var read []string
	for _, x := range writes {
		read = append(read, x.Path)
	}
	for _, n := range []string{"board.jpg", "leuvenA.jpg", "leuvenB.jpg", "licenseplate_motion.jpg", "text_motion.jpg", "aloeL.jpg", "squirrel_cls.jpg"} {
		read = append(read, filepath.Join(opencvDocData, n))
	}
	var refs []exifRef
	pyref.JSON(t, exifScript, map[string]any{"write": writes, "read": read}, &refs)
	if len(refs) != len(read) {
		t.Fatalf("python gave %d results for %d files", len(refs), len(read))
	}
	withDTO := 0
	for _, ref := range refs {
		c, ok, err := ReadCaptureTime(ref.Path)
		if err != nil {
			t.Errorf("%s: %v", ref.Path, err)
			continue
		}
		if ref.UTC == "" {
			if ok {
				t.Errorf("%s: capture time %v, but Pillow finds no DateTimeOriginal", ref.Path, c.UTC)
			}
			continue
		}
		withDTO++
		want, err := time.Parse(time.RFC3339Nano, ref.UTC)
		if err != nil {
			t.Fatal(err)
		}
		// Check: Pillow's tags through Python's datetime; Python keeps
		// microseconds, so nanoseconds beyond them are truncated there.
		if !ok || !c.UTC.Truncate(time.Microsecond).Equal(want) || c.SubSec != ref.SubSec || c.HasOffset != ref.Offset {
			t.Errorf("%s: capture time %v (ok %v, subsec %v, offset %v), want %v (subsec %v, offset %v)", filepath.Base(ref.Path), c.UTC, ok, c.SubSec, c.HasOffset, want, ref.SubSec, ref.Offset)
		}
	}
	if withDTO < 9 {
		t.Errorf("only %d files had a capture time; the check needs the camera JPEGs of opencv-doc", withDTO)
	}
	// Not an image with EXIF: PNG, text, a missing file.
	png := filepath.Join(dir, "x.png")
	writePNG(t, png, greyPattern(4, 4, 1))
	if _, ok, err := ReadCaptureTime(png); ok || err != nil {
		t.Errorf("PNG: ok %v, err %v", ok, err)
	}
	if _, _, err := ReadCaptureTime(filepath.Join(dir, "none.jpg")); err == nil || !strings.Contains(err.Error(), "none.jpg") {
		t.Errorf("missing file: %v", err)
	}
}

// TestPairsEXIFOrigin: JPEG pairs with EXIF dates give the record's time 0:
// the capture time of the first left image less its time in the record.
func TestPairsEXIFOrigin(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	type w struct {
		Path string `json:"path"`
		DTO  string `json:"dto"`
		Sub  string `json:"sub"`
		Off  string `json:"off"`
	}
	var writes []w
	var read []string
	for k, dto := range []string{"2026:06:14 11:00:05", "2026:06:14 11:00:06"} {
		for _, side := range []string{"left", "right"} {
			p := filepath.Join(dir, side+"_000"+string(rune('2'+k))+".jpg")
			writes = append(writes, w{p, dto, "250", "+02:00"})
		}
	}
	read = append(read, writes[0].Path)
	var refs []exifRef
	pyref.JSON(t, exifScript, map[string]any{"write": writes, "read": read}, &refs)
	src, err := OpenPairs(PairSpec{Dir: dir, FPS: 2})
	if err != nil {
		t.Fatal(err)
	}
	o, ok := src.Origin()
	// Check: Pillow's instant of left_0002.jpg (09:00:05.25Z) less the
	// time of frame 2 at 2 Hz, 1 s.
	want, _ := time.Parse(time.RFC3339Nano, refs[0].UTC)
	want = want.Add(-time.Second)
	if !ok || !o.UTC.Equal(want) || !strings.HasPrefix(o.From, OriginEXIF) || !strings.Contains(o.From, "left_0002.jpg") {
		t.Errorf("Origin = %+v, %v; want %v from the EXIF date of left_0002.jpg", o, ok, want)
	}
	// start_utc takes precedence.
	src, err = OpenPairs(PairSpec{Dir: dir, FPS: 2, StartUTC: "2026-01-01T00:00:00Z"})
	if err != nil {
		t.Fatal(err)
	}
	if o, _ := src.Origin(); o.From != OriginSetting {
		t.Errorf("with start_utc: origin from %q", o.From)
	}
}

// TestCaptureTimeDamaged: cut and corrupted copies of a camera JPEG and of
// a TIFF never panic and never give a time that is not in the file.
func TestCaptureTimeDamaged(t *testing.T) {
	for _, name := range []string{"leuvenA.jpg", "board.jpg"} {
		data, err := os.ReadFile(filepath.Join(opencvDocData, name))
		if err != nil {
			t.Skipf("opencv-doc sample %s: %v", name, err)
		}
		whole, err := captureTimeJPEG(bytes.NewReader(data))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for cut := 0; cut < 4096 && cut < len(data); cut += 7 {
			c, err := captureTimeJPEG(bytes.NewReader(data[:cut]))
			if err == nil && !c.UTC.Equal(whole.UTC) {
				t.Errorf("%s cut at %d: time %v, whole file %v", name, cut, c.UTC, whole.UTC)
			}
		}
		for i := 0; i < 2048 && i < len(data); i += 3 {
			d := bytes.Clone(data)
			d[i] ^= 0xA5
			_, _ = captureTimeJPEG(bytes.NewReader(d))
		}
	}
}
