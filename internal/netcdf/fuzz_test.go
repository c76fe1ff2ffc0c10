package netcdf

import (
	"bytes"
	"testing"
)

// FuzzClassicHeader feeds arbitrary bytes to the classic-header check. It
// must never panic, must only accept headers whose parts lie inside the
// input, and whatever it accepts must be opened and inquired by libnetcdf
// (nc_open_mem) without crashing the process. The seed corpus in
// testdata/fuzz/FuzzClassicHeader holds small files of each classic format
// written by netCDF4-python, cut copies of them and the damaged headers of
// testdata/damaged, on which libnetcdf 4.9 crashes or hangs.
func FuzzClassicHeader(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		h, err := ParseClassicHeader(bytes.NewReader(data), int64(len(data)))
		if err != nil {
			if h != nil {
				t.Fatalf("error %v with a header", err)
			}
			return
		}
		n := int64(len(data))
		if h.HeaderSize > n || h.DataEnd > n || h.HeaderSize > h.DataEnd {
			t.Fatalf("accepted a header of %d bytes with data to %d in %d bytes", h.HeaderSize, h.DataEnd, n)
		}
		for _, v := range h.Vars {
			if v.Begin < h.HeaderSize || v.Size < 0 {
				t.Fatalf("accepted variable %q at %d (size %d) inside a header of %d bytes", v.Name, v.Begin, v.Size, h.HeaderSize)
			}
			for _, id := range v.DimIDs {
				if id < 0 || id >= len(h.Dims) {
					t.Fatalf("accepted dimension id %d of %d", id, len(h.Dims))
				}
			}
		}
		openMemUnchecked(data)
	})
}
