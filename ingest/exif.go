package ingest

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"
)

// CaptureTime is the capture time an image's EXIF data gives: the tags
// DateTimeOriginal (0x9003), SubSecTimeOriginal (0x9291) and
// OffsetTimeOriginal (0x9011) of the Exif IFD (CIPA DC-008, Exif 2.32,
// §4.6.5), found through the Exif IFD pointer (0x8769) of the TIFF IFD0
// (TIFF 6.0, Adobe 1992, §2).
type CaptureTime struct {
	// UTC is the instant: the date and time less the offset, or, when the
	// file gives no offset, the date and time taken as UTC.
	UTC time.Time
	// SubSec: the time has a fraction of a second from
	// SubSecTimeOriginal; otherwise it is to the whole second.
	SubSec bool
	// HasOffset: the file gives the offset from UTC (OffsetTimeOriginal);
	// Offset is then that offset, east of UTC positive.
	HasOffset bool
	Offset    time.Duration
}

// Describe says in words how the time was read, for [TimeOrigin.From].
func (c CaptureTime) Describe() string {
	var parts []string
	if c.SubSec {
		parts = append(parts, "with SubSecTimeOriginal")
	} else {
		parts = append(parts, "to the whole second")
	}
	if c.HasOffset {
		parts = append(parts, "offset "+formatOffset(c.Offset)+" from OffsetTimeOriginal")
	} else {
		parts = append(parts, "no UTC offset in the file, so the camera clock is taken as UTC")
	}
	return strings.Join(parts, "; ")
}

func formatOffset(d time.Duration) string {
	sign := '+'
	if d < 0 {
		sign, d = '-', -d
	}
	m := int(d / time.Minute)
	return fmt.Sprintf("%c%02d:%02d", sign, m/60, m%60)
}

// Limits of the EXIF reader: it reads no more than these, so that a damaged
// or hostile file costs little.
const (
	exifMaxSegments = 64      // JPEG marker segments examined before giving up
	exifMaxHeader   = 1 << 20 // bytes of JPEG header examined
	exifMaxEntries  = 4096    // entries of one IFD
	exifMaxASCII    = 256     // bytes of an ASCII value read
	exifMaxFile     = 1 << 40 // largest TIFF offset believed
	exifTagExifIFD  = 0x8769  // Exif IFD pointer, in IFD0
	exifTagDTO      = 0x9003  // DateTimeOriginal
	exifTagSubSec   = 0x9291  // SubSecTimeOriginal
	exifTagOffset   = 0x9011  // OffsetTimeOriginal
	tiffTypeASCII   = 2       // TIFF field type ASCII
	tiffTypeLong    = 4       // LONG
	tiffTypeIFD     = 13      // IFD (Exif and TIFF/EP)
	jpegAPP1        = 0xE1    // JPEG application segment 1, holds EXIF
	jpegSOS         = 0xDA    // start of scan: the header ends
	jpegEOI         = 0xD9    // end of image
	jpegSOI         = 0xD8    // start of image
	jpegTEM         = 0x01    // marker without a length
	jpegRST0        = 0xD0    // RST0–RST7 have no length
	jpegRST7        = 0xD7    //
	exifPrefix      = "Exif\x00\x00"
)

// errNoEXIF says a file has no EXIF capture time.
var errNoEXIF = errors.New("no EXIF DateTimeOriginal")

// ReadCaptureTime reads the EXIF capture time of a JPEG or TIFF file. ok
// is false when the file has none (or is of another format, or its EXIF
// data is damaged); err is set only when the file cannot be read.
func ReadCaptureTime(path string) (c CaptureTime, ok bool, err error) {
	f, err := os.Open(path)
	if err != nil {
		return CaptureTime{}, false, fmt.Errorf("ingest: cannot open image %s to read its EXIF date (%v); check its permissions", path, err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return CaptureTime{}, false, fmt.Errorf("ingest: cannot read image %s (%v)", path, err)
	}
	var head [4]byte
	if _, err := io.ReadFull(f, head[:]); err != nil {
		return CaptureTime{}, false, nil
	}
	switch {
	case head[0] == 0xFF && head[1] == jpegSOI:
		if _, err := f.Seek(0, io.SeekStart); err != nil {
			return CaptureTime{}, false, fmt.Errorf("ingest: cannot read image %s (%v)", path, err)
		}
		c, err = captureTimeJPEG(bufio.NewReader(f))
	case isTIFFHeader(head[:]):
		c, err = captureTimeTIFF(f, st.Size())
	default:
		return CaptureTime{}, false, nil
	}
	if err != nil {
		return CaptureTime{}, false, nil
	}
	return c, true, nil
}

// isEXIFImage says whether a file's extension is one that can carry EXIF
// data this package reads.
func isEXIFImage(path string) bool {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".jpg", ".jpeg", ".tif", ".tiff":
		return true
	}
	return false
}

func isTIFFHeader(b []byte) bool {
	return len(b) >= 4 && ((b[0] == 'I' && b[1] == 'I' && b[2] == 42 && b[3] == 0) || (b[0] == 'M' && b[1] == 'M' && b[2] == 0 && b[3] == 42))
}

// captureTimeJPEG finds the EXIF APP1 segment among the first segments of
// a JPEG stream (ITU-T T.81 Annex B.1; Exif 2.32 §4.5.4) and reads it.
func captureTimeJPEG(r io.Reader) (CaptureTime, error) {
	br := bufio.NewReader(io.LimitReader(r, exifMaxHeader))
	var soi [2]byte
	if _, err := io.ReadFull(br, soi[:]); err != nil || soi[0] != 0xFF || soi[1] != jpegSOI {
		return CaptureTime{}, errNoEXIF
	}
	for seg := 0; seg < exifMaxSegments; seg++ {
		// A marker is 0xFF, any number of 0xFF fill bytes, then its code.
		b, err := br.ReadByte()
		if err != nil || b != 0xFF {
			return CaptureTime{}, errNoEXIF
		}
		code := byte(0xFF)
		for code == 0xFF {
			if code, err = br.ReadByte(); err != nil {
				return CaptureTime{}, errNoEXIF
			}
		}
		switch {
		case code == jpegSOS || code == jpegEOI || code == 0x00:
			return CaptureTime{}, errNoEXIF
		case code == jpegTEM || code == jpegSOI || (code >= jpegRST0 && code <= jpegRST7):
			continue
		}
		var lb [2]byte
		if _, err := io.ReadFull(br, lb[:]); err != nil {
			return CaptureTime{}, errNoEXIF
		}
		n := int(binary.BigEndian.Uint16(lb[:])) - 2
		if n < 0 {
			return CaptureTime{}, errNoEXIF
		}
		if code != jpegAPP1 {
			if _, err := br.Discard(n); err != nil {
				return CaptureTime{}, errNoEXIF
			}
			continue
		}
		data := make([]byte, n)
		if _, err := io.ReadFull(br, data); err != nil {
			return CaptureTime{}, errNoEXIF
		}
		if !bytes.HasPrefix(data, []byte(exifPrefix)) {
			continue // XMP or another APP1
		}
		tiff := data[len(exifPrefix):]
		return captureTimeTIFF(bytes.NewReader(tiff), int64(len(tiff)))
	}
	return CaptureTime{}, errNoEXIF
}

// tiffReader reads TIFF structures within size bytes of r.
type tiffReader struct {
	r     io.ReaderAt
	size  int64
	order binary.ByteOrder
}

func (t *tiffReader) read(off int64, n int) ([]byte, error) {
	if off < 0 || n < 0 || off > t.size || int64(n) > t.size-off {
		return nil, errNoEXIF
	}
	b := make([]byte, n)
	if _, err := t.r.ReadAt(b, off); err != nil {
		return nil, errNoEXIF
	}
	return b, nil
}

// ifdEntry is one 12-byte IFD entry (TIFF 6.0 §2).
type ifdEntry struct {
	tag, typ uint16
	count    uint32
	value    [4]byte // the value, or the offset of it
}

// ifd reads the entries of the IFD at off.
func (t *tiffReader) ifd(off int64) ([]ifdEntry, error) {
	nb, err := t.read(off, 2)
	if err != nil {
		return nil, err
	}
	n := int(t.order.Uint16(nb))
	if n > exifMaxEntries {
		return nil, errNoEXIF
	}
	b, err := t.read(off+2, 12*n)
	if err != nil {
		return nil, err
	}
	es := make([]ifdEntry, n)
	for i := range es {
		e := b[12*i : 12*i+12]
		es[i] = ifdEntry{tag: t.order.Uint16(e[0:]), typ: t.order.Uint16(e[2:]), count: t.order.Uint32(e[4:])}
		copy(es[i].value[:], e[8:12])
	}
	return es, nil
}

// ascii returns the text of an ASCII entry, up to its first NUL, trimmed.
func (t *tiffReader) ascii(e ifdEntry) (string, bool) {
	if e.typ != tiffTypeASCII || e.count == 0 || e.count > exifMaxASCII {
		return "", false
	}
	var b []byte
	if e.count <= 4 {
		b = e.value[:e.count]
	} else {
		var err error
		if b, err = t.read(int64(t.order.Uint32(e.value[:])), int(e.count)); err != nil {
			return "", false
		}
	}
	if i := bytes.IndexByte(b, 0); i >= 0 {
		b = b[:i]
	}
	return strings.TrimSpace(string(b)), true
}

// captureTimeTIFF reads the capture time from TIFF-structured data: a
// TIFF file, or the TIFF block of a JPEG's EXIF segment.
func captureTimeTIFF(r io.ReaderAt, size int64) (CaptureTime, error) {
	if size > exifMaxFile {
		size = exifMaxFile
	}
	t := &tiffReader{r: r, size: size}
	h, err := t.read(0, 8)
	if err != nil || !isTIFFHeader(h) {
		return CaptureTime{}, errNoEXIF
	}
	if h[0] == 'I' {
		t.order = binary.LittleEndian
	} else {
		t.order = binary.BigEndian
	}
	ifd0, err := t.ifd(int64(t.order.Uint32(h[4:])))
	if err != nil {
		return CaptureTime{}, err
	}
	exifOff := int64(-1)
	for _, e := range ifd0 {
		if e.tag == exifTagExifIFD && (e.typ == tiffTypeLong || e.typ == tiffTypeIFD) && e.count == 1 {
			exifOff = int64(t.order.Uint32(e.value[:]))
		}
	}
	if exifOff < 0 {
		return CaptureTime{}, errNoEXIF
	}
	exif, err := t.ifd(exifOff)
	if err != nil {
		return CaptureTime{}, err
	}
	var dto, sub, offs string
	var haveDTO, haveSub, haveOff bool
	for _, e := range exif {
		switch e.tag {
		case exifTagDTO:
			dto, haveDTO = t.ascii(e)
		case exifTagSubSec:
			sub, haveSub = t.ascii(e)
		case exifTagOffset:
			offs, haveOff = t.ascii(e)
		}
	}
	if !haveDTO {
		return CaptureTime{}, errNoEXIF
	}
	return parseCaptureTime(dto, sub, offs, haveSub, haveOff)
}

// parseCaptureTime reads the three EXIF values: "YYYY:MM:DD HH:MM:SS",
// the decimal digits of the fraction of the second, and "±HH:MM" (Exif
// 2.32 §4.6.5, tags DateTimeOriginal, SubSecTimeOriginal,
// OffsetTimeOriginal). Blank or unknown values (spaces, colons) count as
// absent.
func parseCaptureTime(dto, sub, offs string, haveSub, haveOff bool) (CaptureTime, error) {
	wall, err := time.Parse("2006:01:02 15:04:05", dto)
	if err != nil {
		return CaptureTime{}, errNoEXIF
	}
	var c CaptureTime
	if haveSub && sub != "" {
		sub = strings.TrimRight(sub, " ")
		if len(sub) <= 9 && strings.Trim(sub, "0123456789") == "" {
			v, err := strconv.Atoi(sub)
			if err == nil {
				ns := v
				for i := len(sub); i < 9; i++ {
					ns *= 10
				}
				wall = wall.Add(time.Duration(ns))
				c.SubSec = true
			}
		}
	}
	if haveOff && len(offs) == 6 && (offs[0] == '+' || offs[0] == '-') && offs[3] == ':' {
		hh, e1 := strconv.Atoi(offs[1:3])
		mm, e2 := strconv.Atoi(offs[4:6])
		if e1 == nil && e2 == nil && hh <= 14 && mm < 60 {
			d := time.Duration(hh)*time.Hour + time.Duration(mm)*time.Minute
			if offs[0] == '-' {
				d = -d
			}
			c.HasOffset, c.Offset = true, d
		}
	}
	c.UTC = wall.Add(-c.Offset).UTC()
	return c, nil
}
