package report

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"crestspeed/speed"
)

// Column indices of a CrestTable, in the order of CrestColumns.
const (
	ColTrackID = iota
	ColTime
	ColX
	ColY
	ColElevation
	ColWidth
	ColSteepness
	ColCrestSpeed
	ColPhaseSpeedPeak
	ColPhaseSpeedLocal
	ColRatioPeak
	ColRatioLocal
	ColFrame
	ColAlong
	ColAcross
	ColWavelength
	ColLength
	ColSurfaceSpeed
	ColBx
	ColFoam
	numCrestCols
)

// crestColumn describes one column of crests.csv and its CF NetCDF
// counterpart in crest_tracks.nc.
type crestColumn struct {
	nc, units, long, std string
	integer              bool // whole numbers (track_id, frame)
	required             bool // may not be empty
}

// crestMeta follows CrestColumns index by index.
var crestMeta = [numCrestCols]crestColumn{
	ColTrackID:         {nc: "track_id", units: "1", long: "crest track identifier", integer: true, required: true},
	ColTime:            {nc: "time", units: "s", long: "time", std: "time", required: true},
	ColX:               {nc: "x", units: "m", long: "crest tip x position on the analysis grid"},
	ColY:               {nc: "y", units: "m", long: "crest tip y position on the analysis grid"},
	ColElevation:       {nc: "crest_elevation", units: "m", long: "crest elevation a_c above the mean water level"},
	ColWidth:           {nc: "zero_crossing_width", units: "m", long: "zero-crossing width w_c of the crest along the mean direction"},
	ColSteepness:       {nc: "steepness", units: "1", long: "local crest steepness S_c = a_c pi / w_c"},
	ColCrestSpeed:      {nc: "crest_speed", units: "m s-1", long: "crest speed c_cr along the mean direction of travel"},
	ColPhaseSpeedPeak:  {nc: "phase_speed_peak", units: "m s-1", long: "linear phase speed c_p at the spectral peak along the mean direction"},
	ColPhaseSpeedLocal: {nc: "phase_speed_local", units: "m s-1", long: "linear phase speed c_loc of the local carrier wave along the mean direction"},
	ColRatioPeak:       {nc: "ratio_peak", units: "1", long: "crest speed ratio c_cr/c_p"},
	ColRatioLocal:      {nc: "ratio_local", units: "1", long: "crest speed ratio c_cr/c_loc"},
	ColFrame:           {nc: "frame", units: "1", long: "frame index in the input record", integer: true, required: true},
	ColAlong:           {nc: "along", units: "m", long: "crest tip position along the mean direction of travel"},
	ColAcross:          {nc: "across", units: "m", long: "crest tip position across the mean direction of travel"},
	ColWavelength:      {nc: "local_wavelength", units: "m", long: "down-crossing to down-crossing wavelength around the crest"},
	ColLength:          {nc: "crest_length", units: "m", long: "length of the crest segment across the mean direction"},
	ColSurfaceSpeed:    {nc: "surface_speed", units: "m s-1", long: "linear surface orbital speed u_s at the crest tip"},
	ColBx:              {nc: "bx", units: "1", long: "breaking-inception index B_x = u_s / c_cr normal to the crest (linear estimate)"},
	ColFoam:            {nc: "foam", units: "1", long: "1 when the crest carried a whitecap in this frame", integer: true},
}

// CrestTable is the crest table of a deployment held column by column, in
// the order and with the meaning of CrestColumns (crests.csv): one row per
// crest tip per frame, rows of one track contiguous and in time order.
// Integer columns (track_id, frame) hold whole numbers; unknown values
// are NaN. Columns take 8 bytes per row each, 160 bytes per row in all.
type CrestTable struct {
	Cols [numCrestCols][]float64
}

// Len is the number of rows.
func (t *CrestTable) Len() int { return len(t.Cols[ColTrackID]) }

// Column returns the column with the given crests.csv name, nil if there
// is none.
func (t *CrestTable) Column(name string) []float64 {
	for i, c := range CrestColumns {
		if c == name {
			return t.Cols[i]
		}
	}
	return nil
}

// TableFromRows copies the columns of crests.csv out of analysed rows
// (ordered by track and time, as analysis.Run returns them).
func TableFromRows(rows []speed.CrestRow) *CrestTable {
	t := &CrestTable{}
	for i := range t.Cols {
		t.Cols[i] = make([]float64, len(rows))
	}
	c := &t.Cols
	for i, r := range rows {
		c[ColTrackID][i] = float64(r.TrackID)
		c[ColTime][i] = r.Time
		c[ColX][i] = r.X
		c[ColY][i] = r.Y
		c[ColElevation][i] = r.Elevation
		c[ColWidth][i] = r.Width
		c[ColSteepness][i] = r.Steepness
		c[ColCrestSpeed][i] = r.CrestSpeed
		c[ColPhaseSpeedPeak][i] = r.PhaseSpeedPeak
		c[ColPhaseSpeedLocal][i] = r.PhaseSpeedLocal
		c[ColRatioPeak][i] = r.RatioPeak
		c[ColRatioLocal][i] = r.RatioLocal
		c[ColFrame][i] = float64(r.Frame)
		c[ColAlong][i] = r.S
		c[ColAcross][i] = r.N
		c[ColWavelength][i] = r.Wavelength
		c[ColLength][i] = r.Length
		c[ColSurfaceSpeed][i] = r.SurfaceSpeed
		c[ColBx][i] = r.BreakingIndex
		if r.Foam {
			c[ColFoam][i] = 1
		}
	}
	t.normalise()
	return t
}

// normalise maps infinite values to NaN: crests.csv writes both as an
// empty field, so the table from rows and the table read back agree.
func (t *CrestTable) normalise() {
	for _, col := range t.Cols {
		for i, v := range col {
			if math.IsInf(v, 0) {
				col[i] = math.NaN()
			}
		}
	}
}

// TrackRuns returns, for each track in table order, the index of its first
// row; the last entry is Len(). Rows of a track are contiguous.
func (t *CrestTable) TrackRuns() []int {
	ids := t.Cols[ColTrackID]
	var runs []int
	for i := range ids {
		if i == 0 || ids[i] != ids[i-1] {
			runs = append(runs, i)
		}
	}
	return append(runs, len(ids))
}

// ReadCrestsCSV reads crests.csv as written by WriteCrestsCSV. The header
// must name every column of CrestColumns (in any order; other columns are
// ignored); each field must be a number or empty (unknown), and track_id,
// time_s and frame must be given. Rows are put in track and time order if
// the file has them otherwise. Any defect is an error that names the file,
// the line and the column.
func ReadCrestsCSV(path string) (*CrestTable, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s does not exist; run \"crestspeed track\" to make it", path)
		}
		return nil, fmt.Errorf("cannot read %s: %v", path, err)
	}
	defer f.Close()
	var size int64
	if fi, err := f.Stat(); err == nil {
		size = fi.Size()
	}
	return readCrests(f, path, size)
}

// ReadCrests reads a crests.csv stream; name is used in error messages.
func ReadCrests(r io.Reader, name string) (*CrestTable, error) { return readCrests(r, name, 0) }

// readCrests reads crests.csv; size, when known, sizes the columns from
// the length of the first row so that they are allocated once.
func readCrests(r io.Reader, name string, size int64) (*CrestTable, error) {
	br := bufio.NewReaderSize(r, 1<<20)
	header, err := br.ReadString('\n')
	if err != nil && (err != io.EOF || header == "") {
		if err == io.EOF {
			return nil, fmt.Errorf("%s is empty; it should start with the header %s", name, strings.Join(CrestColumns, ","))
		}
		return nil, fmt.Errorf("cannot read %s: %v", name, err)
	}
	names := strings.Split(strings.TrimRight(header, "\r\n"), ",")
	pos := make([]int, len(names)) // column of the table each field goes to, -1 = ignored
	seen := map[string]bool{}
	for i, n := range names {
		n = strings.TrimSpace(n)
		if i == 0 {
			n = strings.TrimPrefix(n, "\ufeff")
		}
		pos[i] = -1
		if seen[n] {
			return nil, fmt.Errorf("%s names column %q twice in its header; keep one", name, n)
		}
		seen[n] = true
		for k, c := range CrestColumns {
			if c == n {
				pos[i] = k
			}
		}
	}
	var missing []string
	for _, c := range CrestColumns {
		if !seen[c] {
			missing = append(missing, c)
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("%s lacks the column(s) %s; it must have the header written by \"crestspeed track\"", name, strings.Join(missing, ", "))
	}
	t, err := parseRows(br, name, names, pos, size-int64(len(header)))
	if err != nil {
		return nil, err
	}
	if t.Len() == 0 {
		return nil, fmt.Errorf("%s has a header but no crest rows; there is nothing to report (were crests found by \"crestspeed track\"?)", name)
	}
	t.normalise()
	t.sortByTrack()
	return t, nil
}

func parseField(v string, c crestColumn) (float64, error) {
	v = strings.TrimSpace(v)
	if v == "" {
		if c.required {
			return 0, errors.New("the field is empty but a value is needed")
		}
		return math.NaN(), nil
	}
	x, err := strconv.ParseFloat(v, 64)
	if err != nil {
		return 0, fmt.Errorf("%q is not a number", v)
	}
	if c.required && (math.IsNaN(x) || math.IsInf(x, 0)) {
		return 0, fmt.Errorf("%q is not a finite number", v)
	}
	if c.integer && (x != math.Trunc(x) || x < 0 || x > 1<<31-1) {
		return 0, fmt.Errorf("%q is not a whole number from 0 to 2147483647", v)
	}
	return x, nil
}

// sortByTrack orders the rows by track id then time (stable), unless they
// already are: the contiguous ragged array of crest_tracks.nc needs the
// rows of a track together.
func (t *CrestTable) sortByTrack() {
	ids, tm := t.Cols[ColTrackID], t.Cols[ColTime]
	less := func(i, j int) bool {
		if ids[i] != ids[j] {
			return ids[i] < ids[j]
		}
		return tm[i] < tm[j]
	}
	sorted := true
	for i := 1; i < len(ids); i++ {
		if less(i, i-1) {
			sorted = false
			break
		}
	}
	if sorted {
		return
	}
	perm := make([]int, len(ids))
	for i := range perm {
		perm[i] = i
	}
	sort.SliceStable(perm, func(a, b int) bool { return less(perm[a], perm[b]) })
	tmp := make([]float64, len(ids))
	for k := range t.Cols {
		col := t.Cols[k]
		for i, p := range perm {
			tmp[i] = col[p]
		}
		copy(col, tmp)
	}
}

// crestBatch is a run of consecutive lines of crests.csv parsed together.
type crestBatch struct {
	seq, line0 int // line0: file line number of lines[0]
	nbytes     int
	lines      []string
	cols       [numCrestCols][]float64
	err        error
}

// csvBatchLines is the number of lines parsed as one batch.
const csvBatchLines = 8192

// parseRows reads the data lines of crests.csv and parses them on all
// cores: one goroutine reads lines in batches, workers parse batches, and
// the batches are appended to the table in file order, so the table and
// the first error reported (the earliest in the file) do not depend on
// scheduling. rest is the size of the data after the header (0 if
// unknown), used to allocate the columns once.
func parseRows(br *bufio.Reader, name string, names []string, pos []int, rest int64) (*CrestTable, error) {
	workers := max(1, min(runtime.NumCPU(), 8))
	todo := make(chan *crestBatch, workers)
	done := make(chan *crestBatch, workers)
	stop := make(chan struct{})
	var readErr error
	go func() { // reader
		defer close(todo)
		line, seq := 2, 0
		for {
			b := &crestBatch{seq: seq, line0: line, lines: make([]string, 0, csvBatchLines)}
			eof := false
			for len(b.lines) < csvBatchLines {
				s, err := br.ReadString('\n')
				if err != nil && err != io.EOF {
					readErr = fmt.Errorf("cannot read %s: %v", name, err)
					eof = true
					break
				}
				if s != "" {
					b.lines = append(b.lines, s)
				}
				if err == io.EOF {
					eof = true
					break
				}
			}
			line += len(b.lines)
			if len(b.lines) > 0 {
				select {
				case todo <- b:
				case <-stop:
					return
				}
				seq++
			}
			if eof {
				return
			}
		}
	}()
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for b := range todo {
				b.err = parseBatch(b, name, names, pos)
				b.lines = nil
				done <- b
			}
		}()
	}
	go func() { wg.Wait(); close(done) }()

	t := &CrestTable{}
	pending := map[int]*crestBatch{}
	next := 0
	var firstErr error
	for b := range done {
		if firstErr != nil {
			continue // drain
		}
		pending[b.seq] = b
		for {
			c, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			if c.err != nil {
				firstErr = c.err
				close(stop)
				break
			}
			if t.Cols[0] == nil && rest > 0 && len(c.cols[0]) > 0 {
				// size the columns from the bytes per row of the first batch
				est := int(float64(rest)/float64(max(c.bytes(), 1))*float64(len(c.cols[0]))*1.05) + 16
				for k := range t.Cols {
					t.Cols[k] = make([]float64, 0, est)
				}
			}
			for k := range t.Cols {
				t.Cols[k] = append(t.Cols[k], c.cols[k]...)
			}
		}
	}
	if firstErr != nil {
		return nil, firstErr
	}
	if readErr != nil {
		return nil, readErr
	}
	return t, nil
}

// bytes estimates the bytes a batch took in the file (stored while parsing).
func (b *crestBatch) bytes() int { return b.nbytes }

// parseBatch parses the lines of a batch into its columns.
func parseBatch(b *crestBatch, name string, names []string, pos []int) error {
	for k := range b.cols {
		b.cols[k] = make([]float64, 0, len(b.lines))
	}
	for i, s := range b.lines {
		b.nbytes += len(s)
		line := b.line0 + i
		s = strings.TrimRight(s, "\r\n")
		if s == "" {
			continue
		}
		field := 0
		for {
			j := strings.IndexByte(s, ',')
			v := s
			if j >= 0 {
				v = s[:j]
			}
			if field >= len(names) {
				return fmt.Errorf("%s line %d has more fields than the %d columns of its header; repair or regenerate the file", name, line, len(names))
			}
			if k := pos[field]; k >= 0 {
				x, perr := parseField(v, crestMeta[k])
				if perr != nil {
					return fmt.Errorf("%s line %d, column %s: %v; repair or regenerate the file", name, line, CrestColumns[k], perr)
				}
				b.cols[k] = append(b.cols[k], x)
			}
			field++
			if j < 0 {
				break
			}
			s = s[j+1:]
		}
		if field != len(names) {
			return fmt.Errorf("%s line %d has %d fields but its header has %d columns; repair or regenerate the file", name, line, field, len(names))
		}
	}
	return nil
}
