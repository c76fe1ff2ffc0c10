package surface

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"os"

	"gopkg.in/yaml.v3"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/atomicfile"
	"crestspeed/internal/cvshim"
)

// The geometry file: a settled [Geometry] as YAML, written beside the rig
// file so that every part of a record is reconstructed with the same
// plane, band and grid. Floating-point values are written with the fewest
// digits that read back to the same bits.

// GeometryFormat and GeometryVersion identify a geometry file.
const (
	GeometryFormat  = "crestspeed settled stereo geometry"
	GeometryVersion = 1
)

type geometryFile struct {
	Format        string            `yaml:"format"`
	Version       int               `yaml:"version"`
	ImageSizePx   [2]int            `yaml:"image_size_px,flow"`
	RecordPairs   int               `yaml:"record_pairs"`
	SeaPlane      planeEntry        `yaml:"sea_plane"`
	PlaneFit      *planeFitEntry    `yaml:"plane_fit,omitempty"`
	SeaSigmaM     float64           `yaml:"sea_sigma_m"`
	SeaPoints     int               `yaml:"sea_points"`
	Grid          gridEntry         `yaml:"grid"`
	Disparity     bandEntry         `yaml:"disparity"`
	Samples       []SamplePair      `yaml:"samples"`
	Skipped       []SkippedPair     `yaml:"skipped"`
	SourceSkipped ingest.SkipCounts `yaml:"source_skipped"`
}

type planeEntry struct {
	Normal  [3]float64 `yaml:"normal,flow"`
	OffsetM float64    `yaml:"offset_m"`
}

type planeFitEntry struct {
	Points  int     `yaml:"points"`
	Inliers int     `yaml:"inliers"`
	RMSM    float64 `yaml:"rms_m"`
	Pairs   int     `yaml:"pairs"`
	SpanS   float64 `yaml:"span_s"`
}

type gridEntry struct {
	Auto   bool        `yaml:"auto"`
	Note   string      `yaml:"note"`
	Choice *GridChoice `yaml:"choice,omitempty"`
	XM     []float64   `yaml:"x_m,flow"`
	YM     []float64   `yaml:"y_m,flow"`
}

type stripEntry struct {
	Row0           int `yaml:"row0"`
	Row1           int `yaml:"row1"`
	Top            int `yaml:"top"`
	Col0           int `yaml:"col0"`
	MinDisparity   int `yaml:"min_disparity"`
	NumDisparities int `yaml:"num_disparities"`
}

type bandEntry struct {
	Auto       bool         `yaml:"auto"`
	Prewarp    bool         `yaml:"prewarp"`
	HalfWidthM float64      `yaml:"half_width_m"`
	Strips     []stripEntry `yaml:"strips"`
}

// Marshal encodes the geometry as a geometry file.
func (g *Geometry) Marshal() ([]byte, error) {
	f := geometryFile{
		Format: GeometryFormat, Version: GeometryVersion,
		ImageSizePx: [2]int{g.ImageSize.X, g.ImageSize.Y}, RecordPairs: g.RecordPairs,
		SeaPlane:  planeEntry{Normal: g.Plane.Normal, OffsetM: g.Plane.OffsetM},
		SeaSigmaM: g.SeaSigmaM, SeaPoints: g.SeaPoints,
		Grid:      gridEntry{Auto: g.GridAuto, Note: g.GridNote, Choice: g.GridChoice, XM: g.Grid.X, YM: g.Grid.Y},
		Disparity: bandEntry{Auto: g.Band.Auto, Prewarp: g.Band.Prewarp, HalfWidthM: g.Band.HalfWidthM},
		Samples:   g.Samples, Skipped: g.Skipped, SourceSkipped: g.SourceSkipped,
	}
	if p := g.PlaneFit; p != nil {
		f.PlaneFit = &planeFitEntry{Points: p.Points, Inliers: p.Inliers, RMSM: p.RMSM, Pairs: p.Pairs, SpanS: p.SpanS}
	}
	for _, s := range g.Band.Strips {
		f.Disparity.Strips = append(f.Disparity.Strips, stripEntry(s))
	}
	var b bytes.Buffer
	b.WriteString("# Stereo geometry settled once for a record by crestspeed: the mean sea\n" +
		"# plane (left camera frame), the sea state measured on the sampled pairs,\n" +
		"# the output grid and the matcher's disparity strips. Every part of the\n" +
		"# record is reconstructed with it; do not edit it.\n")
	enc := yaml.NewEncoder(&b)
	enc.SetIndent(2)
	if err := enc.Encode(&f); err != nil {
		return nil, fmt.Errorf("surface: cannot encode the geometry: %v", err)
	}
	if err := enc.Close(); err != nil {
		return nil, fmt.Errorf("surface: cannot encode the geometry: %v", err)
	}
	return b.Bytes(), nil
}

// Save writes the geometry file at path atomically (a temporary file in
// the same folder, synced, then renamed over path, and the folder synced).
func (g *Geometry) Save(path string) error {
	data, err := g.Marshal()
	if err != nil {
		return err
	}
	return writeFileAtomic(path, data)
}

// LoadGeometry reads a geometry file written by [Geometry.Save].
func LoadGeometry(path string) (*Geometry, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("surface: geometry file %s does not exist; settle the record first", path)
		}
		return nil, fmt.Errorf("surface: geometry file %s cannot be read: %v", path, err)
	}
	return ParseGeometry(data, path)
}

// ParseGeometry decodes a geometry file; name labels it in errors.
func ParseGeometry(data []byte, name string) (*Geometry, error) {
	bad := func(format string, args ...any) error {
		return fmt.Errorf("surface: geometry file %s %s; settle the record again to rewrite it", name, fmt.Sprintf(format, args...))
	}
	var f geometryFile
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(&f); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, bad("is empty")
		}
		return nil, bad("is not a valid geometry file (%v)", err)
	}
	switch {
	case f.Format != GeometryFormat:
		return nil, bad("is not a crestspeed geometry file (its format field is not %q)", GeometryFormat)
	case f.Version != GeometryVersion:
		return nil, bad("has version %d; this crestspeed reads version %d", f.Version, GeometryVersion)
	case f.ImageSizePx[0] <= 0 || f.ImageSizePx[1] <= 0:
		return nil, bad("has the image size %d×%d px", f.ImageSizePx[0], f.ImageSizePx[1])
	case f.RecordPairs <= 0:
		return nil, bad("has %d record pairs", f.RecordPairs)
	case len(f.Disparity.Strips) == 0:
		return nil, bad("has no disparity strips")
	case len(f.Grid.XM) < 2 || len(f.Grid.YM) < 2:
		return nil, bad("has a grid of %d × %d cells", len(f.Grid.XM), len(f.Grid.YM))
	}
	finite := func(v ...float64) bool {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return false
			}
		}
		return true
	}
	n := f.SeaPlane.Normal
	if !finite(n[0], n[1], n[2], f.SeaPlane.OffsetM, f.SeaSigmaM, f.Disparity.HalfWidthM) ||
		!finite(f.Grid.XM...) || !finite(f.Grid.YM...) {
		return nil, bad("holds a number that is not finite")
	}
	if l := math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2]); math.Abs(l-1) > 1e-6 {
		return nil, bad("has a sea-plane normal of length %g, not 1", l)
	}
	g := &Geometry{
		ImageSize:   image.Pt(f.ImageSizePx[0], f.ImageSizePx[1]),
		RecordPairs: f.RecordPairs,
		Plane:       calib.Plane{Normal: n, OffsetM: f.SeaPlane.OffsetM},
		SeaSigmaM:   f.SeaSigmaM, SeaPoints: f.SeaPoints,
		Grid:     ingest.Grid{X: f.Grid.XM, Y: f.Grid.YM},
		GridAuto: f.Grid.Auto, GridNote: f.Grid.Note, GridChoice: f.Grid.Choice,
		Band:    Band{Auto: f.Disparity.Auto, Prewarp: f.Disparity.Prewarp, HalfWidthM: f.Disparity.HalfWidthM},
		Samples: f.Samples, Skipped: f.Skipped, SourceSkipped: f.SourceSkipped,
	}
	if p := f.PlaneFit; p != nil {
		g.PlaneFit = &PlaneFit{Plane: g.Plane, Points: p.Points, Inliers: p.Inliers, RMSM: p.RMSM, Pairs: p.Pairs, SpanS: p.SpanS}
	}
	for _, s := range f.Disparity.Strips {
		g.Band.Strips = append(g.Band.Strips, cvshim.Strip(s))
	}
	return g, nil
}

// writeFileAtomic writes data to path atomically and durably (see
// internal/atomicfile): path holds either its old or its whole new content.
func writeFileAtomic(path string, data []byte) error {
	if err := atomicfile.WriteFile(path, data); err != nil {
		return fmt.Errorf("surface: cannot write %s: %w", path, err)
	}
	return nil
}
