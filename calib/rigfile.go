package calib

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"crestspeed/internal/atomicfile"
)

// Rig file identity.
const (
	RigFormat  = "crestspeed-rig"
	RigVersion = 1
)

// On-disk schema. Required values are pointers so that a missing key can
// be told from a zero.
type rigFile struct {
	Format        *string     `yaml:"format"`
	Version       *int        `yaml:"version"`
	ImageWidthPx  *int        `yaml:"image_width_px"`
	ImageHeightPx *int        `yaml:"image_height_px"`
	Left          *cameraFile `yaml:"left_camera"`
	Right         *cameraFile `yaml:"right_camera"`
	RightFromLeft *poseFile   `yaml:"right_from_left"`
	BaselineM     *float64    `yaml:"baseline_m"`
	SeaPlane      *planeFile  `yaml:"sea_plane,omitempty"`
	Quality       *Quality    `yaml:"calibration,omitempty"`
}

type cameraFile struct {
	FocalLengthPx    *[2]float64 `yaml:"focal_length_px,flow"`
	PrincipalPointPx *[2]float64 `yaml:"principal_point_px,flow"`
	Radial           *[3]float64 `yaml:"radial_distortion,flow"`
	Tangential       *[2]float64 `yaml:"tangential_distortion,flow"`
}

type poseFile struct {
	Rotation     *[3][3]float64 `yaml:"rotation"`
	TranslationM *[3]float64    `yaml:"translation_m,flow"`
}

type planeFile struct {
	Normal  *[3]float64 `yaml:"normal,flow"`
	OffsetM *float64    `yaml:"offset_m"`
}

// Comments written above the keys of a rig file, by key path.
var rigComments = map[string]string{
	"format":          "crestspeed stereo rig. Left camera frame: x right, y down, z along the optical axis;\npixel (0, 0) is the centre of the top-left pixel. Camera model: pinhole with\nBrown–Conrady distortion as OpenCV models it.",
	"image_width_px":  "Image size of both cameras.",
	"left_camera":     "focal_length_px: fx, fy; principal_point_px: cx, cy;\nradial_distortion: k1, k2, k3; tangential_distortion: p1, p2 (dimensionless).",
	"right_from_left": "X_right = rotation · X_left + translation_m (rotation row by row).",
	"baseline_m":      "Distance between the camera centres, the length of translation_m.",
	"sea_plane":       "Mean sea plane in the left camera frame: a point X lies normal·X + offset_m\nmetres above it (offset_m is the height of the left camera above the water).",
	"calibration":     "How this rig was calibrated and how well (reprojection and rectified\nepipolar errors in pixels).",
}

// Marshal encodes the rig as a rig file.
func (r *Rig) Marshal() ([]byte, error) {
	if err := r.Validate(); err != nil {
		return nil, fmt.Errorf("rig cannot be saved: %v", err)
	}
	format, version := RigFormat, RigVersion
	w, h := r.Size.X, r.Size.Y
	base := r.Baseline()
	cam := func(c Camera) *cameraFile {
		return &cameraFile{
			FocalLengthPx:    &[2]float64{c.Fx, c.Fy},
			PrincipalPointPx: &[2]float64{c.Cx, c.Cy},
			Radial:           &[3]float64{c.K1, c.K2, c.K3},
			Tangential:       &[2]float64{c.P1, c.P2},
		}
	}
	rot := [3][3]float64{{r.R[0], r.R[1], r.R[2]}, {r.R[3], r.R[4], r.R[5]}, {r.R[6], r.R[7], r.R[8]}}
	t := r.T
	f := rigFile{
		Format: &format, Version: &version, ImageWidthPx: &w, ImageHeightPx: &h,
		Left: cam(r.Left), Right: cam(r.Right),
		RightFromLeft: &poseFile{Rotation: &rot, TranslationM: &t},
		BaselineM:     &base,
		Quality:       r.Quality,
	}
	if r.SeaPlane != nil {
		n, off := r.SeaPlane.Normal, r.SeaPlane.OffsetM
		f.SeaPlane = &planeFile{Normal: &n, OffsetM: &off}
	}
	var doc yaml.Node
	if err := doc.Encode(&f); err != nil {
		return nil, fmt.Errorf("rig cannot be encoded: %v", err)
	}
	for i := 0; i+1 < len(doc.Content); i += 2 {
		key, val := doc.Content[i], doc.Content[i+1]
		if c, ok := rigComments[key.Value]; ok {
			key.HeadComment = c
		}
		if key.Value == "right_from_left" {
			// One rotation row per line.
			for j := 0; j+1 < len(val.Content); j += 2 {
				if val.Content[j].Value == "rotation" {
					for _, row := range val.Content[j+1].Content {
						row.Style = yaml.FlowStyle
					}
				}
			}
		}
	}
	var buf bytes.Buffer
	enc := yaml.NewEncoder(&buf)
	enc.SetIndent(2)
	if err := enc.Encode(&doc); err != nil {
		return nil, fmt.Errorf("rig cannot be encoded: %v", err)
	}
	if err := enc.Close(); err != nil {
		return nil, fmt.Errorf("rig cannot be encoded: %v", err)
	}
	return buf.Bytes(), nil
}

// Save writes the rig file atomically: path is either the complete new
// file or left as it was.
func (r *Rig) Save(path string) error {
	data, err := r.Marshal()
	if err != nil {
		return err
	}
	return writeFileAtomic(path, data)
}

// LoadRig reads and checks a rig file.
func LoadRig(path string) (*Rig, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("rig file %s does not exist; make one with \"crestspeed calibrate\"", path)
		}
		return nil, fmt.Errorf("rig file %s cannot be read: %v", path, err)
	}
	return ParseRig(data, path)
}

// maxRigFile is the largest rig file read, bytes; a rig file is a few
// kilobytes even with hundreds of calibration views.
const maxRigFile = 4 << 20

// ParseRig decodes a rig file; name labels it in errors. Any bytes give
// either a valid rig or one sentence naming the file, the key (and its
// line) and what is wrong: not YAML, not a rig file, a wrong version, a key
// missing, unknown or repeated, a value of the wrong kind, a list of the
// wrong length, a number that is not finite, or a rig that cannot be right
// (see [Rig.Validate]).
func ParseRig(data []byte, name string) (*Rig, error) {
	bad := func(format string, args ...any) error {
		return fmt.Errorf("rig file %s %s", name, fmt.Sprintf(format, args...))
	}
	if len(data) > maxRigFile {
		return nil, bad("is %d bytes long, too long to be a rig file; give the rig file written by \"crestspeed calibrate\"", len(data))
	}
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return nil, bad("is not a valid rig file (%s); make one with \"crestspeed calibrate\"", yamlMessage(err))
	}
	if doc.Kind == 0 || (doc.Kind == yaml.DocumentNode && len(doc.Content) == 0) {
		return nil, bad("is empty; make one with \"crestspeed calibrate\"")
	}
	rd := &rigReader{bad: bad}
	top, err := rd.mapping(&doc, "", rigKeys)
	if err != nil {
		return nil, err
	}
	// Format and version first, so that a file of another kind or
	// version says so rather than naming a key it does not know.
	if n := top["format"]; n == nil || resolve(n).Kind != yaml.ScalarNode || resolve(n).Value != RigFormat {
		return nil, bad("is not a crestspeed rig file (its format field is not %q); make one with \"crestspeed calibrate\"", RigFormat)
	}
	if top["version"] == nil {
		return nil, bad("lacks the version field; add \"version: %d\" if it was written for this crestspeed", RigVersion)
	}
	v, err := rd.integer(top["version"], "version")
	if err != nil {
		return nil, err
	}
	if v != RigVersion {
		return nil, bad("has version %d but this crestspeed reads version %d; recalibrate or use a matching crestspeed", v, RigVersion)
	}
	if err := rd.unknown(); err != nil {
		return nil, err
	}
	for _, k := range []string{"image_width_px", "image_height_px", "left_camera", "right_camera", "right_from_left", "baseline_m"} {
		if top[k] == nil {
			return nil, rd.missing(k)
		}
	}
	r := &Rig{}
	if r.Size.X, err = rd.integer(top["image_width_px"], "image_width_px"); err != nil {
		return nil, err
	}
	if r.Size.Y, err = rd.integer(top["image_height_px"], "image_height_px"); err != nil {
		return nil, err
	}
	for _, c := range []struct {
		key string
		out *Camera
	}{{"left_camera", &r.Left}, {"right_camera", &r.Right}} {
		if *c.out, err = rd.camera(top[c.key], c.key); err != nil {
			return nil, err
		}
	}
	if err := rd.pose(top["right_from_left"], r); err != nil {
		return nil, err
	}
	baseline, err := rd.number(top["baseline_m"], "baseline_m")
	if err != nil {
		return nil, err
	}
	if n := top["sea_plane"]; n != nil {
		if r.SeaPlane, err = rd.seaPlane(n); err != nil {
			return nil, err
		}
	}
	if n := top["calibration"]; n != nil {
		if r.Quality, err = rd.quality(n); err != nil {
			return nil, err
		}
	}
	if err := r.Validate(); err != nil {
		return nil, bad("is inconsistent: %v; recalibrate or correct it", err)
	}
	if b := r.Baseline(); !(math.Abs(b-baseline) <= 1e-9*b) {
		return nil, bad("gives baseline_m %g but right_from_left.translation_m is %g m long; correct one of them", baseline, b)
	}
	return r, nil
}

// missing reports a required key absent from the rig file.
func (rd *rigReader) missing(key string) error {
	return rd.bad("lacks %s; recalibrate with \"crestspeed calibrate\" or add it", key)
}

// camera reads one camera's intrinsics and distortion from the mapping at
// key.
func (rd *rigReader) camera(n *yaml.Node, key string) (Camera, error) {
	cam, err := rd.mapping(n, key, cameraKeys)
	if err != nil {
		return Camera{}, err
	}
	var vals [4][]float64
	for i, k := range []struct {
		key  string
		n    int
		what string
	}{{"focal_length_px", 2, "fx, fy"}, {"principal_point_px", 2, "cx, cy"}, {"radial_distortion", 3, "k1, k2, k3"}, {"tangential_distortion", 2, "p1, p2"}} {
		path := key + "." + k.key
		if cam[k.key] == nil {
			return Camera{}, rd.missing(path)
		}
		if vals[i], err = rd.numbers(cam[k.key], path, k.n, k.what); err != nil {
			return Camera{}, err
		}
	}
	return Camera{
		Fx: vals[0][0], Fy: vals[0][1], Cx: vals[1][0], Cy: vals[1][1],
		K1: vals[2][0], K2: vals[2][1], K3: vals[2][2], P1: vals[3][0], P2: vals[3][1],
	}, nil
}

// pose reads the right camera's rotation and translation relative to the
// left one into r.
func (rd *rigReader) pose(n *yaml.Node, r *Rig) error {
	pose, err := rd.mapping(n, "right_from_left", poseKeys)
	if err != nil {
		return err
	}
	switch {
	case pose["rotation"] == nil:
		return rd.missing("right_from_left.rotation")
	case pose["translation_m"] == nil:
		return rd.missing("right_from_left.translation_m")
	}
	rows, err := rd.sequence(pose["rotation"], "right_from_left.rotation", 3, "rows of three numbers")
	if err != nil {
		return err
	}
	for i, row := range rows {
		v, err := rd.numbers(row, fmt.Sprintf("right_from_left.rotation row %d", i+1), 3, "numbers")
		if err != nil {
			return err
		}
		copy(r.R[3*i:], v)
	}
	t, err := rd.numbers(pose["translation_m"], "right_from_left.translation_m", 3, "x, y, z in metres")
	if err != nil {
		return err
	}
	copy(r.T[:], t)
	return nil
}

// seaPlane reads the optional sea plane (normal and offset).
func (rd *rigReader) seaPlane(n *yaml.Node) (*Plane, error) {
	pl, err := rd.mapping(n, "sea_plane", planeKeys)
	if err != nil {
		return nil, err
	}
	if pl["normal"] == nil {
		return nil, rd.missing("sea_plane.normal")
	}
	if pl["offset_m"] == nil {
		return nil, rd.missing("sea_plane.offset_m")
	}
	nv, err := rd.numbers(pl["normal"], "sea_plane.normal", 3, "x, y, z")
	if err != nil {
		return nil, err
	}
	off, err := rd.number(pl["offset_m"], "sea_plane.offset_m")
	if err != nil {
		return nil, err
	}
	return &Plane{Normal: [3]float64{nv[0], nv[1], nv[2]}, OffsetM: off}, nil
}

// Keys of the sections of a rig file, from the yaml tags of the schema.
var (
	rigKeys    = yamlKeys(reflect.TypeOf(rigFile{}))
	cameraKeys = yamlKeys(reflect.TypeOf(cameraFile{}))
	poseKeys   = yamlKeys(reflect.TypeOf(poseFile{}))
	planeKeys  = yamlKeys(reflect.TypeOf(planeFile{}))
	qualKeys   = yamlKeys(reflect.TypeOf(Quality{}))
	viewKeys   = yamlKeys(reflect.TypeOf(ViewQuality{}))
)

// yamlKeys lists the yaml key names of a struct type.
func yamlKeys(t reflect.Type) map[string]bool {
	m := map[string]bool{}
	for i := 0; i < t.NumField(); i++ {
		tag, _, _ := strings.Cut(t.Field(i).Tag.Get("yaml"), ",")
		if tag != "" && tag != "-" {
			m[tag] = true
		}
	}
	return m
}

// rigReader walks the YAML tree of a rig file.
type rigReader struct {
	bad     func(format string, args ...any) error
	pending error // an unknown key of the top level, reported after the version
}

// resolve follows aliases (a bounded number of times: an alias of an
// alias is allowed, a cycle is not followed forever).
func resolve(n *yaml.Node) *yaml.Node {
	for i := 0; n != nil && n.Kind == yaml.AliasNode && i < 8; i++ {
		n = n.Alias
	}
	if n != nil && n.Kind == yaml.DocumentNode && len(n.Content) == 1 {
		n = n.Content[0]
	}
	return n
}

func at(n *yaml.Node) string {
	if n == nil || n.Line == 0 {
		return ""
	}
	return fmt.Sprintf(" (line %d)", n.Line)
}

// keyText is a key as written, quoted when it holds anything but letters,
// digits, '_', '.', '-' and spaces.
func keyText(k string) string {
	for _, r := range k {
		if !(r == '_' || r == '.' || r == '-' || r == ' ' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9') {
			return strconv.Quote(k)
		}
	}
	if k == "" {
		return `""`
	}
	return k
}

func valueText(n *yaml.Node) string {
	v := n.Value
	if len(v) > 30 {
		v = v[:30] + "..."
	}
	return strconv.Quote(v)
}

// mapping reads a set of keys; a key not in known is an error (held back
// for the top level, path "", until the version is checked).
func (rd *rigReader) mapping(n *yaml.Node, path string, known map[string]bool) (map[string]*yaml.Node, error) {
	m := resolve(n)
	what := path
	if what == "" {
		what = "its top level"
	}
	if m == nil || m.Kind != yaml.MappingNode {
		if path == "" {
			return nil, rd.bad("is not a crestspeed rig file (its top level is not a set of keys); make one with \"crestspeed calibrate\"")
		}
		return nil, rd.bad("has %s%s that is not a set of keys; correct it or recalibrate", path, at(n))
	}
	out := map[string]*yaml.Node{}
	for i := 0; i+1 < len(m.Content); i += 2 {
		k, v := resolve(m.Content[i]), m.Content[i+1]
		key := ""
		if k != nil && k.Kind == yaml.ScalarNode {
			key = k.Value
		}
		full := key
		if path != "" {
			full = path + "." + key
		}
		if _, dup := out[key]; dup {
			return nil, rd.bad("gives %s twice%s; keep one", keyText(full), at(k))
		}
		if !known[key] {
			err := rd.bad("has the unknown key %s%s in %s; remove it or check its spelling", keyText(full), at(k), what)
			if path == "" {
				if rd.pending == nil {
					rd.pending = err
				}
				continue
			}
			return nil, err
		}
		out[key] = v
	}
	return out, nil
}

// unknown reports an unknown key of the top level.
func (rd *rigReader) unknown() error { return rd.pending }

// number reads a finite number.
func (rd *rigReader) number(n *yaml.Node, path string) (float64, error) {
	s := resolve(n)
	if s == nil || s.Kind != yaml.ScalarNode {
		return 0, rd.bad("has %s%s that is not a number; give a number", path, at(n))
	}
	var v float64
	if err := s.Decode(&v); err != nil || (s.ShortTag() != "!!int" && s.ShortTag() != "!!float") {
		return 0, rd.bad("has %s = %s%s, which is not a number; give a number", path, valueText(s), at(s))
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, rd.bad("has %s = %s%s, which is not a finite number; recalibrate or correct it", path, valueText(s), at(s))
	}
	return v, nil
}

// integer reads a whole number of at most 2³¹ in size.
func (rd *rigReader) integer(n *yaml.Node, path string) (int, error) {
	v, err := rd.number(n, path)
	if err != nil {
		return 0, err
	}
	if v != math.Trunc(v) || math.Abs(v) > math.MaxInt32 {
		return 0, rd.bad("has %s = %s%s, which is not a whole number; give a whole number", path, valueText(resolve(n)), at(n))
	}
	return int(v), nil
}

// sequence reads a list of exactly want items.
func (rd *rigReader) sequence(n *yaml.Node, path string, want int, what string) ([]*yaml.Node, error) {
	s := resolve(n)
	if s == nil || s.Kind != yaml.SequenceNode {
		return nil, rd.bad("has %s%s that is not a list; it needs %d values (%s)", path, at(n), want, what)
	}
	if len(s.Content) != want {
		return nil, rd.bad("has %s%s with %d value(s); it needs %d (%s)", path, at(n), len(s.Content), want, what)
	}
	return s.Content, nil
}

// numbers reads a list of exactly want finite numbers.
func (rd *rigReader) numbers(n *yaml.Node, path string, want int, what string) ([]float64, error) {
	items, err := rd.sequence(n, path, want, what)
	if err != nil {
		return nil, err
	}
	v := make([]float64, want)
	for i, it := range items {
		if v[i], err = rd.number(it, fmt.Sprintf("%s value %d", path, i+1)); err != nil {
			return nil, err
		}
	}
	return v, nil
}

// quality reads the calibration section.
func (rd *rigReader) quality(n *yaml.Node) (*Quality, error) {
	if _, err := rd.mapping(n, "calibration", qualKeys); err != nil {
		return nil, err
	}
	m := resolve(n)
	for i := 0; i+1 < len(m.Content); i += 2 {
		if resolve(m.Content[i]).Value != "views" {
			continue
		}
		vs := resolve(m.Content[i+1])
		if vs == nil || vs.Kind != yaml.SequenceNode {
			continue // a type error below names it
		}
		for j, v := range vs.Content {
			if _, err := rd.mapping(v, fmt.Sprintf("calibration.views item %d", j+1), viewKeys); err != nil {
				return nil, err
			}
		}
	}
	var q Quality
	if err := m.Decode(&q); err != nil {
		return nil, rd.bad("has a calibration section that cannot be read (%s); correct it or recalibrate", yamlMessage(err))
	}
	for _, f := range []struct {
		key string
		v   float64
	}{{"square_m", q.SquareM}, {"drop_factor", q.DropFactor}, {"rms_px", q.RMSPx}, {"left_rms_px", q.LeftRMSPx},
		{"right_rms_px", q.RightRMSPx}, {"epipolar_mean_px", q.EpiMeanPx}, {"epipolar_p95_px", q.EpiP95Px}} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) {
			return nil, rd.bad("has calibration.%s = %g, which is not a finite number; correct it or recalibrate", f.key, f.v)
		}
	}
	for j, v := range q.Views {
		for _, x := range []float64{v.RMSLeftPx, v.RMSRightPx, v.EpiMeanPx} {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, rd.bad("has calibration.views item %d with an error of %g px, which is not a finite number; correct it or recalibrate", j+1, x)
			}
		}
	}
	return &q, nil
}

// goTypeWords are the words for the Go types that yaml.v3 names in its
// messages.
var goTypeWords = []struct{ goType, words string }{
	{"into float64", "into a number"},
	{"into int", "into a whole number"},
	{"into string", "into text"},
	{"into []calib.ViewQuality", "into a list of views"},
	{"into calib.ViewQuality", "into a view (a set of keys)"},
	{"into calib.Quality", "into a set of keys"},
}

// yamlMessage shortens a yaml.v3 error to its first useful line, in
// words that name no Go type.
func yamlMessage(err error) string {
	s := err.Error()
	s = strings.TrimPrefix(s, "yaml: ")
	s = strings.ReplaceAll(s, "unmarshal errors:\n", "")
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	s = strings.TrimSpace(s)
	if i := strings.Index(s, " not found in type "); i >= 0 {
		s = strings.Replace(s[:i], "field ", "unknown key ", 1)
	}
	for _, w := range goTypeWords {
		if strings.HasSuffix(s, w.goType) {
			s = strings.TrimSuffix(s, w.goType) + w.words
		}
	}
	s = strings.ReplaceAll(s, "cannot unmarshal", "cannot read")
	return strings.ReplaceAll(s, ". ", "; ")
}

// writeFileAtomic writes data to path atomically and durably (see
// internal/atomicfile): path holds either its old or its whole new content.
func writeFileAtomic(path string, data []byte) error {
	if err := atomicfile.WriteFile(path, data); err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	return nil
}
