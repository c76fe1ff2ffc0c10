package report

// Reading the whitecap files of a tracking run back: whitecaps.csv,
// lambda.csv and coverage.csv (written by WriteWhitecapsCSV,
// WriteLambdaCSV and WriteCoverageCSV), and the NaN values of the
// whitecaps and inception blocks of summary.json (written as null).

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"

	"crestspeed/speed"
)

// LambdaColumns is the header of lambda.csv, one row per speed bin of the
// Phillips (1985) distribution Λ(c).
var LambdaColumns = []string{"speed_min_mps", "speed_max_mps", "lambda_m-2_s", "front_samples", "front_length_m"}

// CoverageColumns is the header of coverage.csv, one row per analysed
// frame.
var CoverageColumns = []string{"time_s", "frame", "coverage", "foam_cells", "valid_cells", "area_m2"}

// WhitecapFiles are the whitecap results of a tracking run as the files
// hold them: the whitecap rows (whitecaps.csv), the Λ(c) bins (lambda.csv)
// and the coverage W(t) of every analysed frame (coverage.csv).
type WhitecapFiles struct {
	Rows     []WhitecapFileRow
	Lambda   []speed.LambdaBin
	Coverage []speed.CoverageRow
}

// WhitecapFileRow is one row of whitecaps.csv: one whitecap in one frame.
// Unknown values are NaN; ParentTrackID is 0 when the whitecap rode on no
// known crest.
type WhitecapFileRow struct {
	WhitecapID              int
	Time                    float64 // s
	Frame                   int
	X, Y                    float64 // patch centroid, m
	FrontAlong, FrontAcross float64 // front position along and across θ0, m
	FrontLength, Area       float64 // m, m²
	FrontSpeed              float64 // c_br, m/s
	Fit                     string  // how the speed was fitted: none, centred, edge or short
	PhaseSpeedPeak          float64 // c_p, m/s
	PhaseSpeedLocal         float64 // c_loc of the parent crest, m/s
	RatioPeak, RatioLocal   float64 // c_br/c_p, c_br/c_loc
	ParentTrackID           int
	ParentSteepness         float64 // S_c of the parent crest
}

// WhitecapFilesFromResult holds the whitecap results of an analysed record
// as the files would: the rows of whitecaps.csv, the bins of lambda.csv and
// the rows of coverage.csv, every float64 as written.
func WhitecapFilesFromResult(wc *speed.WhitecapResult) *WhitecapFiles {
	if wc == nil {
		return nil
	}
	f := &WhitecapFiles{
		Lambda:   append([]speed.LambdaBin(nil), wc.Breaking.Bins...),
		Coverage: append([]speed.CoverageRow(nil), wc.Coverage...),
	}
	inf := func(v float64) float64 { // the files write ±Inf as unknown
		if math.IsInf(v, 0) {
			return math.NaN()
		}
		return v
	}
	for _, r := range wc.Rows {
		f.Rows = append(f.Rows, WhitecapFileRow{
			WhitecapID: r.TrackID, Time: r.Time, Frame: r.Frame, X: inf(r.X), Y: inf(r.Y),
			FrontAlong: inf(r.Front.S), FrontAcross: inf(r.Front.N), FrontLength: inf(r.FrontLength), Area: inf(r.Area),
			FrontSpeed: inf(r.FrontSpeed), Fit: r.Fit.String(),
			PhaseSpeedPeak: inf(r.PhaseSpeedPeak), PhaseSpeedLocal: inf(r.PhaseSpeedLocal),
			RatioPeak: inf(r.RatioPeak), RatioLocal: inf(r.RatioLocal),
			ParentTrackID: r.ParentTrackID, ParentSteepness: inf(r.ParentSteepness),
		})
	}
	for i := range f.Coverage {
		f.Coverage[i].Coverage = inf(f.Coverage[i].Coverage)
		f.Coverage[i].Area = inf(f.Coverage[i].Area)
	}
	return f
}

// fieldKind says what a CSV column may hold.
type fieldKind int

const (
	fieldReal     fieldKind = iota // a number, or empty for unknown
	fieldRequired                  // a finite number
	fieldCount                     // a whole number from 0 to 2147483647
	fieldNonNeg                    // a finite number ≥ 0
	fieldFit                       // none, centred, edge or short
)

// csvColumns is a CSV file read column by column: numbers in Num, the
// text of fieldFit columns in Text.
type csvColumns struct {
	Num  map[string][]float64
	Text map[string][]string
	Rows int
}

// regen is the advice closing every error about a file of the track stage.
const regen = `; regenerate it with "crestspeed track"`

// readColumns reads a CSV file written by the track stage, a line at a
// time: a header naming every column of cols (in any order; other columns
// are ignored), then rows of as many fields as the header, each parsed as
// its kind says (blank lines only at the end). Every defect is one
// sentence naming the file, and the line and column where there is one.
func readColumns(path string, cols []string, kinds []fieldKind) (*csvColumns, error) {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s does not exist; run \"crestspeed track\" to make it", path)
		}
		return nil, fmt.Errorf("cannot read %s: %v", path, err)
	}
	defer f.Close()
	br := bufio.NewReaderSize(f, 1<<16)
	next := func() (string, bool, error) {
		l, err := br.ReadString('\n')
		if err == io.EOF {
			return l, l != "", nil
		}
		if err != nil {
			return "", false, fmt.Errorf("cannot read %s: %v", path, err)
		}
		return l, true, nil
	}
	header, ok, err := next()
	if err != nil {
		return nil, err
	}
	header = strings.TrimRight(strings.TrimPrefix(header, "\ufeff"), "\r\n")
	if !ok || strings.TrimSpace(header) == "" {
		return nil, fmt.Errorf("%s is empty; it should start with the header %s%s", path, strings.Join(cols, ","), regen)
	}
	head := strings.Split(header, ",")
	at := map[string]int{}
	for i, h := range head {
		h = strings.TrimSpace(h)
		if _, dup := at[h]; dup {
			return nil, fmt.Errorf("%s names column %q twice in its header%s", path, h, regen)
		}
		at[h] = i
	}
	var missing []string
	for _, c := range cols {
		if _, ok := at[c]; !ok {
			missing = append(missing, c)
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("%s lacks the column(s) %s of the header %s%s", path, strings.Join(missing, ", "), strings.Join(cols, ","), regen)
	}
	out := &csvColumns{Num: map[string][]float64{}, Text: map[string][]string{}}
	fields := make([]string, 0, len(head))
	var blank int // line of a blank line, an error unless only blank lines follow
	for line := 2; ; line++ {
		l, ok, err := next()
		if err != nil {
			return nil, err
		}
		if !ok {
			break
		}
		l = strings.TrimRight(l, "\r\n")
		if strings.TrimSpace(l) == "" {
			if blank == 0 {
				blank = line
			}
			continue
		}
		if blank != 0 {
			return nil, fmt.Errorf("%s line %d is empty%s", path, blank, regen)
		}
		fields = fields[:0]
		for {
			j := strings.IndexByte(l, ',')
			if j < 0 {
				fields = append(fields, l)
				break
			}
			fields = append(fields, l[:j])
			l = l[j+1:]
		}
		if len(fields) != len(head) {
			return nil, fmt.Errorf("%s line %d has %d fields but its header has %d columns%s", path, line, len(fields), len(head), regen)
		}
		for k, c := range cols {
			v := strings.TrimSpace(fields[at[c]])
			if kinds[k] == fieldFit {
				switch v {
				case "none", "centred", "edge", "short":
				default:
					return nil, fmt.Errorf("%s line %d, column %s: %q is not one of none, centred, edge, short%s", path, line, c, v, regen)
				}
				out.Text[c] = append(out.Text[c], v)
				continue
			}
			x, err := parseKind(v, kinds[k])
			if err != nil {
				return nil, fmt.Errorf("%s line %d, column %s: %v%s", path, line, c, err, regen)
			}
			out.Num[c] = append(out.Num[c], x)
		}
		out.Rows++
	}
	return out, nil
}

func parseKind(v string, k fieldKind) (float64, error) {
	if v == "" {
		if k == fieldReal {
			return math.NaN(), nil
		}
		return 0, errors.New("the field is empty but a value is needed")
	}
	x, err := strconv.ParseFloat(v, 64)
	if err != nil {
		return 0, fmt.Errorf("%q is not a number", v)
	}
	if math.IsInf(x, 0) || (k != fieldReal && math.IsNaN(x)) {
		return 0, fmt.Errorf("%q is not a finite number", v)
	}
	switch k {
	case fieldCount:
		if x != math.Trunc(x) || x < 0 || x > 1<<31-1 {
			return 0, fmt.Errorf("%q is not a whole number from 0 to 2147483647", v)
		}
	case fieldNonNeg:
		if x < 0 {
			return 0, fmt.Errorf("%q is negative", v)
		}
	}
	return x, nil
}

// ReadWhitecapsCSV reads whitecaps.csv as WriteWhitecapsCSV writes it.
func ReadWhitecapsCSV(path string) ([]WhitecapFileRow, error) {
	kinds := []fieldKind{
		fieldCount, fieldRequired, fieldCount, fieldReal, fieldReal, fieldReal, fieldReal,
		fieldReal, fieldReal, fieldReal, fieldFit,
		fieldReal, fieldReal, fieldReal, fieldReal,
		fieldCount, fieldReal,
	}
	c, err := readColumns(path, WhitecapColumns, kinds)
	if err != nil {
		return nil, err
	}
	n := c.Num
	rows := make([]WhitecapFileRow, c.Rows)
	for i := range rows {
		rows[i] = WhitecapFileRow{
			WhitecapID: int(n["whitecap_id"][i]), Time: n["time_s"][i], Frame: int(n["frame"][i]),
			X: n["x_m"][i], Y: n["y_m"][i], FrontAlong: n["front_along_m"][i], FrontAcross: n["front_across_m"][i],
			FrontLength: n["front_length_m"][i], Area: n["area_m2"][i], FrontSpeed: n["front_speed_mps"][i],
			Fit:            c.Text["speed_fit"][i],
			PhaseSpeedPeak: n["phase_speed_peak_mps"][i], PhaseSpeedLocal: n["phase_speed_local_mps"][i],
			RatioPeak: n["ratio_peak"][i], RatioLocal: n["ratio_local"][i],
			ParentTrackID: int(n["parent_track_id"][i]), ParentSteepness: n["parent_steepness_sc"][i],
		}
		if r := rows[i]; r.FrontLength < 0 || r.Area < 0 {
			return nil, fmt.Errorf("%s line %d has a negative front length or area%s", path, i+2, regen)
		}
	}
	return rows, nil
}

// ReadLambdaCSV reads lambda.csv as WriteLambdaCSV writes it: at least one
// bin, bins adjoining in increasing speed, Λ, counts and lengths not
// negative.
func ReadLambdaCSV(path string) ([]speed.LambdaBin, error) {
	c, err := readColumns(path, LambdaColumns, []fieldKind{fieldNonNeg, fieldNonNeg, fieldNonNeg, fieldCount, fieldNonNeg})
	if err != nil {
		return nil, err
	}
	if c.Rows == 0 {
		return nil, fmt.Errorf("%s has a header but no speed bins%s", path, regen)
	}
	n := c.Num
	bins := make([]speed.LambdaBin, c.Rows)
	for i := range bins {
		b := speed.LambdaBin{CLow: n["speed_min_mps"][i], CHigh: n["speed_max_mps"][i], Lambda: n["lambda_m-2_s"][i],
			Fronts: int(n["front_samples"][i]), Length: n["front_length_m"][i]}
		if !(b.CHigh > b.CLow) {
			return nil, fmt.Errorf("%s line %d: the bin from %g to %g m/s is empty or reversed%s", path, i+2, b.CLow, b.CHigh, regen)
		}
		if i > 0 && math.Abs(b.CLow-bins[i-1].CHigh) > 1e-9*math.Max(1, b.CLow) {
			return nil, fmt.Errorf("%s line %d: the bin starts at %g m/s but the one before ends at %g m/s; bins must adjoin in increasing speed%s",
				path, i+2, b.CLow, bins[i-1].CHigh, regen)
		}
		bins[i] = b
	}
	return bins, nil
}

// ReadCoverageCSV reads coverage.csv as WriteCoverageCSV writes it: W in
// [0, 1] (empty when a frame had no known cell), foam cells no more than
// the known cells, frames in increasing order.
func ReadCoverageCSV(path string) ([]speed.CoverageRow, error) {
	c, err := readColumns(path, CoverageColumns, []fieldKind{fieldRequired, fieldCount, fieldReal, fieldCount, fieldCount, fieldReal})
	if err != nil {
		return nil, err
	}
	n := c.Num
	rows := make([]speed.CoverageRow, c.Rows)
	for i := range rows {
		r := speed.CoverageRow{Time: n["time_s"][i], Frame: int(n["frame"][i]), Coverage: n["coverage"][i],
			FoamCells: int(n["foam_cells"][i]), ValidCells: int(n["valid_cells"][i]), Area: n["area_m2"][i]}
		switch {
		case r.Coverage < 0 || r.Coverage > 1:
			return nil, fmt.Errorf("%s line %d: coverage %g is outside 0–1%s", path, i+2, r.Coverage, regen)
		case r.FoamCells > r.ValidCells:
			return nil, fmt.Errorf("%s line %d: %d foam cells exceed the %d known cells%s", path, i+2, r.FoamCells, r.ValidCells, regen)
		case r.Area < 0:
			return nil, fmt.Errorf("%s line %d: area %g m² is negative%s", path, i+2, r.Area, regen)
		case i > 0 && r.Frame <= rows[i-1].Frame:
			return nil, fmt.Errorf("%s line %d: frame %d does not follow frame %d; frames must increase%s", path, i+2, r.Frame, rows[i-1].Frame, regen)
		}
		rows[i] = r
	}
	return rows, nil
}

// loadWhitecapFiles reads the three whitecap files of a track folder whose
// summary has a whitecaps block, and checks that they belong to that
// summary (same numbers of rows, bins and analysed frames).
func loadWhitecapFiles(dir string, ws *WhitecapsSummary) (*WhitecapFiles, error) {
	for _, need := range []string{"whitecaps.csv", "lambda.csv", "coverage.csv"} {
		if _, err := os.Stat(filepath.Join(dir, need)); err != nil {
			return nil, fmt.Errorf("track folder %s has no %s although its summary.json has whitecap results; rerun \"crestspeed track\" into it", dir, need)
		}
	}
	var f WhitecapFiles
	var err error
	p := filepath.Join(dir, "whitecaps.csv")
	if f.Rows, err = ReadWhitecapsCSV(p); err != nil {
		return nil, err
	}
	if len(f.Rows) != ws.Rows {
		return nil, fmt.Errorf("%s holds %d whitecap rows but summary.json counts %d; the files come from different runs, rerun \"crestspeed track\"", p, len(f.Rows), ws.Rows)
	}
	p = filepath.Join(dir, "lambda.csv")
	if f.Lambda, err = ReadLambdaCSV(p); err != nil {
		return nil, err
	}
	if len(f.Lambda) != len(ws.Lambda) {
		return nil, fmt.Errorf("%s holds %d speed bins but summary.json lists %d; the files come from different runs, rerun \"crestspeed track\"", p, len(f.Lambda), len(ws.Lambda))
	}
	p = filepath.Join(dir, "coverage.csv")
	if f.Coverage, err = ReadCoverageCSV(p); err != nil {
		return nil, err
	}
	if len(f.Coverage) != ws.FramesAnalysed {
		return nil, fmt.Errorf("%s holds %d frames but summary.json says %d were analysed; the files come from different runs, rerun \"crestspeed track\"", p, len(f.Coverage), ws.FramesAnalysed)
	}
	return &f, nil
}

// restoreNaNs sets to NaN the float fields of the whitecaps and inception
// blocks that summary.json holds as null (JSON has no NaN; encoding/json
// leaves a float untouched, zero, on null).
func restoreNaNs(raw []byte, s *Summary) error {
	var blocks struct {
		Whitecaps json.RawMessage `json:"whitecaps"`
		Inception json.RawMessage `json:"inception"`
	}
	if err := json.Unmarshal(raw, &blocks); err != nil {
		return err
	}
	if s.Whitecaps != nil {
		if err := nullFloats(blocks.Whitecaps, reflect.ValueOf(s.Whitecaps).Elem()); err != nil {
			return fmt.Errorf("whitecaps block: %v", err)
		}
	}
	if s.Inception != nil {
		if err := nullFloats(blocks.Inception, reflect.ValueOf(s.Inception).Elem()); err != nil {
			return fmt.Errorf("inception block: %v", err)
		}
	}
	return nil
}

var unmarshalerType = reflect.TypeFor[json.Unmarshaler]()

// nullFloats walks a struct (or slice of structs) v decoded from raw and
// sets every float field whose JSON value is null to NaN. Types with their
// own UnmarshalJSON, and maps, are left to themselves.
func nullFloats(raw json.RawMessage, v reflect.Value) error {
	if len(raw) == 0 || string(raw) == "null" {
		return nil
	}
	if reflect.PointerTo(v.Type()).Implements(unmarshalerType) {
		return nil
	}
	switch v.Kind() {
	case reflect.Struct:
		var m map[string]json.RawMessage
		if err := json.Unmarshal(raw, &m); err != nil {
			return err
		}
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
			if name == "" {
				name = f.Name
			}
			r, ok := m[name]
			if !ok || !f.IsExported() {
				continue
			}
			fv := v.Field(i)
			if (fv.Kind() == reflect.Float64 || fv.Kind() == reflect.Float32) && string(r) == "null" {
				fv.SetFloat(math.NaN())
				continue
			}
			if err := nullFloats(r, fv); err != nil {
				return err
			}
		}
	case reflect.Slice:
		var items []json.RawMessage
		if err := json.Unmarshal(raw, &items); err != nil {
			return err
		}
		for i := 0; i < len(items) && i < v.Len(); i++ {
			if err := nullFloats(items[i], v.Index(i)); err != nil {
				return err
			}
		}
	}
	return nil
}
