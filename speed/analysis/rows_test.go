package analysis

import (
	"testing"

	"crestspeed/speed"
)

// Rows added in blocks come back joined in the order added, across block
// boundaries and for a track longer than a block.
func TestRowChunksJoinInOrder(t *testing.T) {
	var c rowChunks
	sizes := []int{3, rowChunk - 2, 5, 2*rowChunk + 1, 1}
	next := 0
	for _, n := range sizes {
		c.add(n, func(dst []speed.CrestRow) []speed.CrestRow {
			for range n {
				dst = append(dst, speed.CrestRow{TrackID: next})
				next++
			}
			return dst
		})
	}
	rows := c.join()
	if len(rows) != next || cap(rows) != next {
		t.Fatalf("joined %d rows (capacity %d), want %d", len(rows), cap(rows), next)
	}
	for i, r := range rows {
		if r.TrackID != i {
			t.Fatalf("row %d is the %d-th added", i, r.TrackID)
		}
	}
	if c.chunks != nil {
		t.Errorf("the blocks are still held after join")
	}
}

// The frame index finds exactly the rows of a frame, in row order, and
// none for a frame without rows.
func TestRowsByFrame(t *testing.T) {
	frames := []int{4, 2, 4, 7, 2, 2, 9, 4}
	rec := &Record{}
	for _, f := range frames {
		rec.Rows = append(rec.Rows, speed.CrestRow{CrestTip: speed.CrestTip{Frame: f}})
	}
	idx := rec.rowsByFrame()
	for _, f := range []int{0, 2, 3, 4, 7, 9, 10} {
		var want []int32
		for i, g := range frames {
			if g == f {
				want = append(want, int32(i))
			}
		}
		got := idx.of(f, rec.Rows)
		if len(got) != len(want) {
			t.Errorf("frame %d: rows %v, want %v", f, got, want)
			continue
		}
		for i := range got {
			if got[i] != want[i] {
				t.Errorf("frame %d: rows %v, want %v", f, got, want)
				break
			}
		}
	}
}
