package ingest

import (
	"fmt"
	"os"
	"slices"
	"strings"

	"crestspeed/internal/netcdf"
)

// Reading. Frames are read in blocks of whole chunk rows along time (all
// frames of one chunk along the time dimension, over the whole grid), so
// that every chunk is decompressed once per pass, however the file is
// chunked; a goroutine reads the next block while the caller works on the
// current one. Blocks arrive in the file's dimension order and are turned
// into (time, y, x) order, with reversed axes flipped, by a cache-blocked
// permutation. Masking and unpacking happen as each frame is handed out.

// layout says how the elevation (or foam) variable lies in the file.
type layout struct {
	dims  []string
	shape []int   // file order
	pos   [3]int  // index in dims of time, y, x
	flip  [3]bool // y or x stored decreasing: reversed on read
	foam  *layout // the foam variable's layout, nil when none
}

// natural reports whether frames lie in (time, y, x) order unflipped, so
// that a block is read straight into place.
func (l *layout) natural() bool {
	return l.pos == [3]int{0, 1, 2} && !l.flip[axisY] && !l.flip[axisX]
}

// slab returns the start and count vectors of frames [first, first+n).
func (l *layout) slab(first, n int) (start, count []int) {
	start, count = make([]int, 3), slices.Clone(l.shape)
	start[l.pos[axisT]] = first
	count[l.pos[axisT]] = n
	return start, count
}

// strides returns, for a block of n frames read in file order, the offset
// of the first output cell and the strides of the output's t, y and x in
// the block, with flipped axes walked backwards.
func (l *layout) strides(n int) (base int, st [3]int) {
	lens := slices.Clone(l.shape)
	lens[l.pos[axisT]] = n
	fs := [3]int{}
	acc := 1
	for d := 2; d >= 0; d-- {
		fs[d] = acc
		acc *= lens[d]
	}
	for r := range 3 {
		st[r] = fs[l.pos[r]]
		if l.flip[r] {
			base += (lens[l.pos[r]] - 1) * st[r]
			st[r] = -st[r]
		}
	}
	return base, st
}

// permute copies a block src in file order into dst in (t, y, x) order, n
// = (nt, ny, nx), with src offset base and strides st from
// [layout.strides]. When x is not the fastest dimension of src the copy
// goes in square tiles, so that each cache line of src is read once.
func permute[T any](dst, src []T, n [3]int, base int, st [3]int) {
	nt, ny, nx := n[0], n[1], n[2]
	if st[2] == 1 { // rows of x are contiguous: copy row by row
		for t := range nt {
			for y := range ny {
				o := (t*ny + y) * nx
				i := base + t*st[0] + y*st[1]
				copy(dst[o:o+nx], src[i:i+nx])
			}
		}
		return
	}
	// Tile the output's x against the dimension (t or y) that is fastest
	// in src, looping over the remaining one.
	const tile = 32
	fast, slow := 1, 0 // roles of the tiled and the outer dimension
	if abs(st[0]) < abs(st[1]) {
		fast, slow = 0, 1
	}
	lens := [2]int{nt, ny}
	for a := range lens[slow] {
		for f0 := 0; f0 < lens[fast]; f0 += tile {
			f1 := min(f0+tile, lens[fast])
			for x0 := 0; x0 < nx; x0 += tile {
				x1 := min(x0+tile, nx)
				for f := f0; f < f1; f++ {
					var t, y int
					if fast == 0 {
						t, y = f, a
					} else {
						t, y = a, f
					}
					o := (t*ny+y)*nx + x0
					i := base + t*st[0] + y*st[1] + x0*st[2]
					for x := x0; x < x1; x++ {
						dst[o] = src[i]
						o++
						i += st[2]
					}
				}
			}
		}
	}
}

func abs(v int) int {
	if v < 0 {
		return -v
	}
	return v
}

// block is a set of consecutive frames in (t, y, x) order.
type block struct {
	b, first, n int
	raw32       []float32 // elevations as the library converts them (rawF32)
	raw64       []float64 // (rawF64)
	rawB        []byte    // elevations as stored in a classic file (big-endian kinds)
	foam        []uint8
	bad         []error // per frame: why it could not be read, nil if read
}

// reader reads blocks with one block of read-ahead.
type reader struct {
	f        *netcdf.File
	eta      string
	foamName string
	lay      *layout
	kind     rawKind
	cells    int
	// Classic-format files in (time, y, x) order are read straight from
	// the file: frame k's bytes start at begin + k*stride.
	direct        *os.File
	begin, stride int64
	nt, nb        int // frames, frames per block
	nblocks       int

	bufs    [2]*block
	cur     *block
	pend    *block
	done    chan struct{}
	scratch struct { // file-order buffers of non-natural layouts
		f32 []float32
		f64 []float64
		u8  []uint8
	}
}

// Targets of the block plan.
const (
	// blockTarget is the size of a block of a contiguous (classic or
	// unchunked) file or of a file with one frame per chunk: a couple of
	// megabytes amortise the cost of a library call (8 MB read no faster
	// than 2 MB in "crestspeed track" of 9000 frames of 64×48, and held
	// 12 MB more in the read-ahead buffers).
	blockTarget = 2 << 20
)

// plan chooses how frames are read and the frames per block, and sets up
// the reader.
func (s *ElevationSource) plan() error {
	l := &s.layout
	ny, nx, nt := s.meta.Grid.Ny(), s.meta.Grid.Nx(), len(s.meta.Times)
	cells := ny * nx
	s.rd = reader{f: s.f, eta: s.names.Eta, lay: l, cells: cells, nt: nt}
	if err := s.planDirect(); err != nil {
		return err
	}
	elem := 4
	switch {
	case s.mp.kind == rawF64:
		elem = 8
	case s.mp.kind != rawF32:
		elem = s.mp.kind.size()
	}
	frameBytes := cells * elem
	if l.foam != nil {
		frameBytes += cells
	}
	st, err := s.f.VarStorage(s.names.Eta)
	if err != nil {
		return s.errorf("cannot read the storage layout of %q: %v", s.names.Eta, err)
	}
	buffers := 2
	if !l.natural() {
		buffers = 3 // and a file-order scratch block
	}
	limit := s.opt.ReadBlockLimitMB * 1e6
	var nb int
	switch {
	case st.Chunks != nil:
		row := st.Chunks[l.pos[axisT]] // frames per chunk row
		nb = row * max(1, blockTarget/(row*frameBytes))
		if float64(buffers*row*frameBytes) > limit && row > 1 {
			nb = 1
			s.warnings = append(s.warnings, fmt.Sprintf(
				"%s: one chunk row of %q (%d frames per chunk along %s) takes %.0f MB, and read-ahead needs %d of them, more than read_block_limit_mb (%g MB); frames are read one at a time, which decompresses every chunk of a row once per frame and is slow: rechunk the file with one frame per chunk (for example nccopy -c %s/1,%s/%d,%s/%d in.nc out.nc) or raise the limit",
				s.path, s.names.Eta, row, s.names.Time, float64(row*frameBytes)/1e6, buffers, s.opt.ReadBlockLimitMB,
				s.names.Time, s.names.Y, ny, s.names.X, nx))
		}
	case l.pos[axisT] == 0:
		nb = max(1, blockTarget/frameBytes)
	default:
		// Contiguous with time not slowest: every read of a frame walks
		// the whole variable, so read as many frames at once as allowed.
		nb = max(1, int(limit)/(buffers*frameBytes))
	}
	nb = min(nb, nt)
	if float64(buffers*nb*frameBytes) > limit && nb > 1 {
		capped := max(1, int(limit)/(buffers*frameBytes))
		if st.Chunks != nil { // whole chunk rows, so that no chunk is read twice
			if row := st.Chunks[l.pos[axisT]]; capped >= row {
				capped -= capped % row
			}
		}
		nb = capped
	}
	s.rd.kind, s.rd.nb, s.rd.nblocks = s.mp.kind, nb, (nt+nb-1)/nb
	if l.foam != nil {
		s.rd.foamName = s.names.Foam
	}
	if st.Chunks != nil && nb%st.Chunks[l.pos[axisT]] == 0 {
		if err := s.noChunkCache(); err != nil {
			return err
		}
	}
	s.mp.nx = nx
	return nil
}

// noChunkCache turns off the library's chunk cache of the elevation and
// foam variables. Blocks are whole chunk rows along time, so every chunk is
// decompressed once per block and never again in the pass: a cache would
// only hold chunks that are not read again, and the library's default one
// (megabytes per variable) fills over the first thousands of frames of a
// small grid, making the memory of a pass grow with the record's length.
func (s *ElevationSource) noChunkCache() error {
	names := []string{s.names.Eta}
	if s.layout.foam != nil {
		names = append(names, s.names.Foam)
	}
	for _, v := range names {
		if err := s.f.SetChunkCache(v, 0, 0); err != nil {
			return s.errorf("cannot set the chunk cache of %q: %v", v, err)
		}
	}
	return nil
}

// planDirect sets up reading a classic-format file's elevations straight
// from the file, when they lie in (time, y, x) order: a frame is then one
// run of big-endian bytes, read with one system call and converted while
// it is masked, where the library would copy and convert it first.
func (s *ElevationSource) planDirect() error {
	h := s.f.Classic()
	if h == nil || !s.layout.natural() {
		return nil
	}
	var v *netcdf.ClassicVar
	for i := range h.Vars {
		if h.Vars[i].Name == s.names.Eta {
			v = &h.Vars[i]
		}
	}
	if v == nil {
		return nil
	}
	var kind rawKind
	switch v.Type {
	case netcdf.Float32:
		kind = rawBEF32
	case netcdf.Float64:
		kind = rawBEF64As32
		if s.mp.kind == rawF64 {
			kind = rawBEF64
		}
	case netcdf.Int16:
		kind = rawBEI16
	case netcdf.Int8:
		kind = rawI8
	case netcdf.Int32:
		kind = rawBEI32
	default:
		return nil
	}
	nt := int64(len(s.meta.Times))
	frameBytes := int64(s.rd.cells * kind.size())
	stride := h.RecSize
	if !v.Record {
		stride = v.Size / nt
	}
	if v.Record && v.Size != frameBytes || !v.Record && v.Size != frameBytes*nt {
		return nil
	}
	f, err := os.Open(s.path)
	if err != nil {
		return s.errorf("cannot open for reading: %v", err)
	}
	s.mp.kind = kind
	s.rd.direct, s.rd.begin, s.rd.stride = f, v.Begin, stride
	return nil
}

// BlockFrames returns the number of frames the source reads per library
// call (a whole number of chunk rows along time).
func (s *ElevationSource) BlockFrames() int { return s.rd.nb }

// frame returns the block holding frame k and k's index in it, loading the
// block (or waiting for its read-ahead) when needed, and starts reading
// the next block ahead.
func (r *reader) frame(k int) (*block, int, error) {
	b := k / r.nb
	if r.cur != nil && r.cur.b == b {
		return r.cur, k - r.cur.first, nil
	}
	if r.pend != nil {
		<-r.done
		p := r.pend
		r.pend = nil
		if p.b == b {
			r.cur = p
		}
	}
	if r.cur == nil || r.cur.b != b {
		blk := r.freeBuf()
		r.load(blk, b)
		r.cur = blk
	}
	if b+1 < r.nblocks {
		r.start(b + 1)
	}
	return r.cur, k - r.cur.first, nil
}

// freeBuf returns a buffer that is neither delivered nor being loaded.
// Callers hold at most one of the two buffers busy, so there is always one.
func (r *reader) freeBuf() *block {
	for i, p := range r.bufs {
		if p == nil {
			r.bufs[i] = &block{b: -1}
			return r.bufs[i]
		}
		if p != r.cur && p != r.pend {
			return p
		}
	}
	return &block{b: -1}
}

// start begins loading block b on a goroutine.
func (r *reader) start(b int) {
	if r.pend != nil || r.nblocks < 2 {
		return
	}
	blk := r.freeBuf()
	blk.b = -1 // not valid until loaded
	r.pend = blk
	r.done = make(chan struct{})
	go func() {
		r.load(blk, b)
		close(r.done)
	}()
}

// rewind starts reading the first block again, unless it is at hand.
func (r *reader) rewind() {
	if r.pend == nil && r.cur != nil && r.cur.b != 0 {
		r.start(0)
	}
}

// stop waits for a read-ahead in progress.
func (r *reader) stop() {
	if r.pend != nil {
		<-r.done
		r.pend = nil
	}
}

// load reads block b into blk. A failed block read is retried frame by
// frame, so that only the frames that cannot be read are marked bad.
func (r *reader) load(blk *block, b int) {
	first := b * r.nb
	n := min(r.nb, r.nt-first)
	blk.first, blk.n = first, n
	size := n * r.cells
	switch r.kind {
	case rawF32:
		blk.raw32 = grow(blk.raw32, size)
	case rawF64:
		blk.raw64 = grow(blk.raw64, size)
	default:
		blk.rawB = grow(blk.rawB, size*r.kind.size())
	}
	if r.foamName != "" {
		blk.foam = grow(blk.foam, size)
	}
	blk.bad = grow(blk.bad, n)
	clear(blk.bad)
	if err := r.read(blk, 0, first, n); err != nil {
		for i := range n {
			blk.bad[i] = r.read(blk, i, first+i, 1)
		}
	}
	blk.b = b
}

// read reads frames [first, first+n) into blk at frame offset at.
func (r *reader) read(blk *block, at, first, n int) error {
	c := r.cells
	lo, hi := at*c, (at+n)*c
	var err error
	switch r.kind {
	case rawF32:
		err = readInto(r.lay, blk.raw32[lo:hi], &r.scratch.f32, first, n, func(st, ct []int, dst []float32) error {
			return r.f.ReadFloat32Slab(r.eta, st, ct, dst)
		})
	case rawF64:
		err = readInto(r.lay, blk.raw64[lo:hi], &r.scratch.f64, first, n, func(st, ct []int, dst []float64) error {
			return r.f.ReadFloat64Slab(r.eta, st, ct, dst)
		})
	default:
		err = r.readDirect(blk.rawB[lo*r.kind.size():hi*r.kind.size()], first, n)
	}
	if err != nil {
		return fmt.Errorf("%s", shortReadErr(err, r.eta, first, n))
	}
	if r.foamName != "" {
		err = readInto(r.lay.foam, blk.foam[lo:hi], &r.scratch.u8, first, n, func(st, ct []int, dst []uint8) error {
			return r.f.ReadUint8Slab(r.foamName, st, ct, dst)
		})
		if err != nil {
			return fmt.Errorf("%s", shortReadErr(err, r.foamName, first, n))
		}
	}
	return nil
}

// readDirect reads the stored bytes of frames [first, first+n) of a
// classic-format file: one read when the frames are contiguous (a fixed-
// size variable, or the only record variable), else one per frame.
func (r *reader) readDirect(dst []byte, first, n int) error {
	fb := int64(len(dst) / n)
	if r.stride == fb {
		_, err := r.direct.ReadAt(dst, r.begin+int64(first)*fb)
		return err
	}
	for i := range n {
		off := r.begin + int64(first+i)*r.stride
		if _, err := r.direct.ReadAt(dst[int64(i)*fb:int64(i+1)*fb], off); err != nil {
			return err
		}
	}
	return nil
}

// shortReadErr words a failed read of frames [first, first+n) of a
// variable.
func shortReadErr(err error, name string, first, n int) string {
	msg := err.Error()
	if i := strings.LastIndex(msg, ": "); i >= 0 {
		msg = msg[i+2:] // the library's own words
	}
	if n == 1 {
		return fmt.Sprintf("frame %d of %q cannot be read (%s)", first, name, msg)
	}
	return fmt.Sprintf("frames %d-%d of %q cannot be read (%s)", first, first+n-1, name, msg)
}

// readInto reads frames [first, first+n) of a variable with layout l into
// dst in (t, y, x) order, straight when the layout is natural and through
// a file-order scratch buffer and [permute] otherwise.
func readInto[T any](l *layout, dst []T, scratch *[]T, first, n int, get func(start, count []int, dst []T) error) error {
	start, count := l.slab(first, n)
	if l.natural() {
		return get(start, count, dst)
	}
	*scratch = grow(*scratch, len(dst))
	if err := get(start, count, *scratch); err != nil {
		return err
	}
	base, st := l.strides(n)
	ny, nx := l.shape[l.pos[axisY]], l.shape[l.pos[axisX]]
	permute(dst, *scratch, [3]int{n, ny, nx}, base, st)
	return nil
}
