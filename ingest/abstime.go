package ingest

import (
	"fmt"
	"strings"
	"time"
)

// TimeOrigin is the absolute instant of time 0 of a record and where it
// came from.
type TimeOrigin struct {
	// UTC is the instant of time 0, in UTC. It may carry a fraction of a
	// second.
	UTC time.Time
	// From says where it came from, in words: the start_utc setting, the
	// utc column of a timestamps file, or the EXIF date of an image.
	From string
}

// Where [TimeOrigin.From] begins, so that a caller can branch on it.
const (
	OriginSetting    = "start_utc setting"
	OriginUTCColumn  = "utc column of timestamps file"
	OriginEXIF       = "EXIF DateTimeOriginal of image"
	OriginNoneReason = "no absolute time: no start_utc setting, no utc column in a timestamps file and no EXIF date in the images"
)

// instantLayouts are the forms of ISO 8601 / RFC 3339 instants
// [ParseInstant] accepts, after 't' and 'z' are upper-cased. Go's parser
// takes a fraction of a second (with '.' or ',') after the seconds in any
// of them.
var instantLayouts = []string{
	"2006-01-02T15:04:05Z07:00",
	"2006-01-02 15:04:05Z07:00",
	"2006-01-02T15:04:05Z0700",
	"2006-01-02 15:04:05Z0700",
	"20060102T150405Z07:00",
	"20060102T150405Z0700",
	"2006-01-02T15:04:05",
	"2006-01-02 15:04:05",
	"20060102T150405",
}

// ParseInstant reads an instant written in ISO 8601 extended or basic form
// with the date and the time of day to the second, and optionally a
// fraction of a second and a UTC offset: 2026-06-14T09:00:00Z,
// 2026-06-14T09:00:00.125+02:00, 2026-06-14 09:00:00.125, 20260614T090000Z
// (RFC 3339 is the profile of ISO 8601 that these follow). A time without
// an offset is taken as UTC. The result is in UTC.
func ParseInstant(s string) (time.Time, error) {
	v := strings.TrimSpace(s)
	if len(v) < 15 || len(v) > 40 {
		return time.Time{}, fmt.Errorf("%q is not an ISO 8601 instant like 2026-06-14T09:00:00Z", s)
	}
	v = strings.Map(func(r rune) rune {
		switch r {
		case 't':
			return 'T'
		case 'z':
			return 'Z'
		}
		return r
	}, v)
	for _, layout := range instantLayouts {
		if t, err := time.Parse(layout, v); err == nil {
			return t.UTC(), nil
		}
	}
	return time.Time{}, fmt.Errorf("%q is not an ISO 8601 instant like 2026-06-14T09:00:00Z", s)
}

// FormatInstant writes t in UTC as RFC 3339 with as many digits of the
// second as it needs (none when whole).
func FormatInstant(t time.Time) string { return t.UTC().Format(time.RFC3339Nano) }

// originFromSetting reads the start_utc setting ("" for none).
func originFromSetting(startUTC string) (TimeOrigin, bool, error) {
	if strings.TrimSpace(startUTC) == "" {
		return TimeOrigin{}, false, nil
	}
	t, err := ParseInstant(startUTC)
	if err != nil {
		return TimeOrigin{}, false, fmt.Errorf("ingest: the start_utc setting %v; give the instant of time 0 in UTC", err)
	}
	return TimeOrigin{UTC: t, From: OriginSetting}, true, nil
}

// secondsToDuration turns seconds into a Duration, saturating instead of
// overflowing.
func secondsToDuration(s float64) time.Duration {
	const lim = float64(1<<63 - 1)
	ns := s * 1e9
	switch {
	case ns >= lim:
		return time.Duration(1<<63 - 1)
	case ns <= -lim:
		return time.Duration(-1 << 63)
	case ns != ns:
		return 0
	}
	return time.Duration(ns)
}
