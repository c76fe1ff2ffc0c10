package calib

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gopkg.in/yaml.v3"
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

// ParseRig decodes a rig file; name labels it in errors.
func ParseRig(data []byte, name string) (*Rig, error) {
	bad := func(format string, args ...any) error {
		return fmt.Errorf("rig file %s %s", name, fmt.Sprintf(format, args...))
	}
	var f rigFile
	dec := yaml.NewDecoder(bytes.NewReader(data))
	dec.KnownFields(true)
	if err := dec.Decode(&f); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, bad("is empty; make one with \"crestspeed calibrate\"")
		}
		return nil, bad("is not a valid rig file (%s); make one with \"crestspeed calibrate\"", yamlMessage(err))
	}
	if f.Format == nil || *f.Format != RigFormat {
		return nil, bad("is not a crestspeed rig file (its format field is not %q); make one with \"crestspeed calibrate\"", RigFormat)
	}
	if f.Version == nil {
		return nil, bad("lacks the version field; add \"version: %d\" if it was written for this crestspeed", RigVersion)
	}
	if *f.Version != RigVersion {
		return nil, bad("has version %d but this crestspeed reads version %d; recalibrate or use a matching crestspeed", *f.Version, RigVersion)
	}
	missing := func(key string) error {
		return bad("lacks %s; recalibrate with \"crestspeed calibrate\" or add it", key)
	}
	switch {
	case f.ImageWidthPx == nil:
		return nil, missing("image_width_px")
	case f.ImageHeightPx == nil:
		return nil, missing("image_height_px")
	case f.RightFromLeft == nil:
		return nil, missing("right_from_left")
	case f.RightFromLeft.Rotation == nil:
		return nil, missing("right_from_left.rotation")
	case f.RightFromLeft.TranslationM == nil:
		return nil, missing("right_from_left.translation_m")
	case f.BaselineM == nil:
		return nil, missing("baseline_m")
	}
	r := &Rig{Size: image.Pt(*f.ImageWidthPx, *f.ImageHeightPx)}
	for _, c := range []struct {
		key string
		in  *cameraFile
		out *Camera
	}{{"left_camera", f.Left, &r.Left}, {"right_camera", f.Right, &r.Right}} {
		switch {
		case c.in == nil:
			return nil, missing(c.key)
		case c.in.FocalLengthPx == nil:
			return nil, missing(c.key + ".focal_length_px")
		case c.in.PrincipalPointPx == nil:
			return nil, missing(c.key + ".principal_point_px")
		case c.in.Radial == nil:
			return nil, missing(c.key + ".radial_distortion")
		case c.in.Tangential == nil:
			return nil, missing(c.key + ".tangential_distortion")
		}
		*c.out = Camera{
			Fx: c.in.FocalLengthPx[0], Fy: c.in.FocalLengthPx[1],
			Cx: c.in.PrincipalPointPx[0], Cy: c.in.PrincipalPointPx[1],
			K1: c.in.Radial[0], K2: c.in.Radial[1], K3: c.in.Radial[2],
			P1: c.in.Tangential[0], P2: c.in.Tangential[1],
		}
	}
	rot := f.RightFromLeft.Rotation
	r.R = [9]float64{rot[0][0], rot[0][1], rot[0][2], rot[1][0], rot[1][1], rot[1][2], rot[2][0], rot[2][1], rot[2][2]}
	r.T = *f.RightFromLeft.TranslationM
	if p := f.SeaPlane; p != nil {
		if p.Normal == nil {
			return nil, missing("sea_plane.normal")
		}
		if p.OffsetM == nil {
			return nil, missing("sea_plane.offset_m")
		}
		r.SeaPlane = &Plane{Normal: *p.Normal, OffsetM: *p.OffsetM}
	}
	r.Quality = f.Quality
	if err := r.Validate(); err != nil {
		return nil, bad("is inconsistent: %v; recalibrate or correct it", err)
	}
	if b := r.Baseline(); !(math.Abs(b-*f.BaselineM) <= 1e-9*b) {
		return nil, bad("gives baseline_m %g but right_from_left.translation_m is %g m long; correct one of them", *f.BaselineM, b)
	}
	return r, nil
}

// yamlMessage shortens a yaml.v3 error to its first useful line.
func yamlMessage(err error) string {
	s := err.Error()
	s = strings.TrimPrefix(s, "yaml: ")
	s = strings.ReplaceAll(s, "unmarshal errors:\n", "")
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	s = strings.TrimSpace(s)
	// "line 3: field foo not found in type calib.rigFile" names a Go type.
	if i := strings.Index(s, " not found in type "); i >= 0 {
		s = strings.Replace(s[:i], "field ", "unknown key ", 1)
	}
	return s
}

// writeFileAtomic writes data to a temporary file beside path and renames
// it into place, so that path is either complete or untouched.
func writeFileAtomic(path string, data []byte) error {
	dir := filepath.Dir(path)
	tmp, err := os.CreateTemp(dir, "."+filepath.Base(path)+".part-*")
	if err != nil {
		return fmt.Errorf("cannot write in %s: %v", dir, err)
	}
	name := tmp.Name()
	err = tmp.Chmod(0o644)
	if err == nil {
		_, err = tmp.Write(data)
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(name, path)
	}
	if err != nil {
		os.Remove(name)
		return fmt.Errorf("cannot write %s: %v", path, err)
	}
	return nil
}
