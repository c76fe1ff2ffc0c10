package analysis

import "crestspeed/ingest"

// Source is a record of elevation maps read frame by frame, in time order:
// one file (*ingest.ElevationSource), several files, or the parts of a
// partitioned reconstruction all look the same to the analysis. Run reads
// it several times from the start (Rewind), never holding more than a few
// frames.
type Source interface {
	// Meta describes the record: grid, frame times, depth, foam.
	Meta() ingest.ElevationMeta
	// FrameInterval is the median time step, seconds.
	FrameInterval() float64
	// Gaps are the dropped-frame gaps on the time axis.
	Gaps() []ingest.Gap
	// Skipped counts the frames not delivered, by reason, over what has
	// been read so far.
	Skipped() ingest.SkipCounts
	// Path names the record in messages.
	Path() string
	// Rewind makes the next Next return the first frame again.
	Rewind()
	// Next fills f with the next usable frame, io.EOF after the last.
	Next(f *ingest.Frame) error
}

// readerReport is what sources that check their cells also tell: the cells
// masked by reason, and warnings about reading.
type readerReport interface {
	MaskedCells() ingest.CellCounts
	Warnings() []string
}
