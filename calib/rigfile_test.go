package calib

import (
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func fullRig() *Rig {
	r := testRig()
	// Awkward values: thirds, tiny and huge magnitudes, negative zero's
	// neighbours.
	r.Left.K3 = 1.0 / 3
	r.Right.P2 = -7.000000000000001e-17
	r.Left.Cx = 641.3000000000001
	r.T = [3]float64{-2.4999999999999996, 1e-300, 0.1 + 0.2}
	r.SeaPlane = &Plane{Normal: [3]float64{0, -math.Sqrt(0.5), -math.Sqrt(0.5)}, OffsetM: 12.345678901234567}
	r.Quality = &Quality{
		Pattern: "9x6", SquareM: 0.025, Detector: DetectorClassic, DropFactor: 3,
		CreatedUTC: "2026-06-14T09:00:00Z", ViewsUsed: 2, RMSPx: 0.24828599489426081,
		LeftRMSPx: 0.2, RightRMSPx: 0.3, EpiMeanPx: 0.12, EpiP95Px: 0.277,
		Views: []ViewQuality{
			{Name: "1", Left: "a/left 01.png", Right: "a/right: 01.png", Status: ViewUsed, RMSLeftPx: 0.1, RMSRightPx: 0.2, EpiMeanPx: 0.05},
			{Name: "2", Left: "l2", Right: "r2", Status: ViewSkipped, Reason: "chessboard not found in the left image"},
		},
	}
	return r
}

// A rig file gives back exactly the numbers written (float64 written with
// strconv 'g' -1, the shortest text that parses back to the same bits).
func TestRigFileRoundTrip(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "rig.yaml")
	r := fullRig()
	if err := r.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err := LoadRig(path)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, r) {
		t.Fatalf("round trip changed the rig:\n got %+v\nwant %+v", got, r)
	}
	a, _ := os.ReadFile(path)
	b, err := got.Marshal()
	if err != nil || string(a) != string(b) {
		t.Fatalf("re-encoding differs: %v", err)
	}
	// A rig without the optional sections round-trips too.
	r2 := testRig()
	if err := r2.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err = LoadRig(path)
	if err != nil || !reflect.DeepEqual(got, r2) {
		t.Fatalf("bare rig: %v, %+v", err, got)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("save left extra files: %v", entries)
	}
}

// Save writes atomically: a failed save leaves nothing behind.
func TestRigSaveFailsCleanly(t *testing.T) {
	err := testRig().Save(filepath.Join(t.TempDir(), "no-such-dir", "rig.yaml"))
	oneSentence(t, err, "no-such-dir")
	bad := testRig()
	bad.Left.Fx = -1
	dir := t.TempDir()
	oneSentence(t, bad.Save(filepath.Join(dir, "rig.yaml")), "focal length")
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("failed save left files: %v", entries)
	}
}

// Damaged rig files give one sentence naming the file and the problem.
func TestRigFileErrors(t *testing.T) {
	good, err := fullRig().Marshal()
	if err != nil {
		t.Fatal(err)
	}
	text := string(good)
	dropLine := func(prefix string) string {
		var out []string
		for _, l := range strings.Split(text, "\n") {
			if !strings.HasPrefix(l, prefix) {
				out = append(out, l)
			}
		}
		return strings.Join(out, "\n")
	}
	replace := func(old, new string) string {
		if !strings.Contains(text, old) {
			t.Fatalf("rig text lacks %q", old)
		}
		return strings.Replace(text, old, new, 1)
	}
	cases := []struct {
		name, text string
		want       []string
	}{
		{"missing width", dropLine("image_width_px:"), []string{"image_width_px"}},
		{"missing focal", dropLine("  focal_length_px:"), []string{"left_camera.focal_length_px"}},
		{"missing radial", dropLine("  radial_distortion:"), []string{"left_camera.radial_distortion"}},
		{"missing translation", dropLine("  translation_m:"), []string{"right_from_left.translation_m"}},
		{"missing baseline", dropLine("baseline_m:"), []string{"baseline_m"}},
		{"missing version", dropLine("version:"), []string{"version"}},
		{"missing plane offset", dropLine("  offset_m:"), []string{"sea_plane.offset_m"}},
		{"wrong version", replace("version: 1", "version: 2"), []string{"version 2", "version 1"}},
		{"wrong format", replace("format: crestspeed-rig", "format: something-else"), []string{"not a crestspeed rig file"}},
		{"unknown key", replace("baseline_m:", "baseline_mm: 1\nbaseline_m:"), []string{"unknown key baseline_mm"}},
		{"short array", replace("focal_length_px: [1400, 1401.5]", "focal_length_px: [1400]"), []string{"rig.yaml"}},
		{"baseline mismatch", replace("baseline_m: ", "baseline_m: 3 #"), []string{"baseline_m 3"}},
		{"not a rotation", replace("    - [", "    - [2"), []string{"not a rotation matrix"}},
		{"empty", "", []string{"empty"}},
		{"not yaml", "{{{", []string{"not a valid rig file"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseRig([]byte(c.text), "rig.yaml")
			oneSentence(t, err, append(c.want, "rig.yaml")...)
			t.Log(err)
		})
	}
	_, err = LoadRig(filepath.Join(t.TempDir(), "absent.yaml"))
	oneSentence(t, err, "absent.yaml", "does not exist")
}

// Any YAML, or none, gives either a rig or one sentence naming the key and
// what is wrong with it: kinds, list lengths, matrix sizes, numbers that
// are not finite, versions that are not whole numbers, aliases, repeated
// keys, another top level.
func TestRigFileAnyYAML(t *testing.T) {
	good, err := fullRig().Marshal()
	if err != nil {
		t.Fatal(err)
	}
	text := string(good)
	rep := func(old, new string) string {
		if !strings.Contains(text, old) {
			t.Fatalf("rig text lacks %q", old)
		}
		return strings.Replace(text, old, new, 1)
	}
	rot := func(r string) string {
		i, j := strings.Index(text, "  rotation:"), strings.Index(text, "  translation_m:")
		if i < 0 || j < i {
			t.Fatal("rig text lacks the rotation")
		}
		return text[:i] + "  rotation: " + r + "\n" + text[j:]
	}
	for _, c := range []struct {
		name, text string
		want       []string
	}{
		{"a list", "- 1\n- 2\n", []string{"top level is not a set of keys"}},
		{"a word", "just text", []string{"top level is not a set of keys"}},
		{"a number", "42", []string{"top level is not a set of keys"}},
		{"format list", "format: [1, 2]\n", []string{"not a crestspeed rig file"}},
		{"version 1.5", rep("version: 1", "version: 1.5"), []string{"version = \"1.5\"", "not a whole number"}},
		{"version word", rep("version: 1", "version: one"), []string{"version = \"one\"", "not a number"}},
		{"version list", rep("version: 1", "version: [1]"), []string{"version (line 5)", "not a number"}},
		{"version huge", rep("version: 1", "version: 1e300"), []string{"not a whole number"}},
		{"NaN focal", rep("focal_length_px: [1400, 1401.5]", "focal_length_px: [.nan, 1401.5]"), []string{"left_camera.focal_length_px value 1", "not a finite number"}},
		{"three focal", rep("focal_length_px: [1400, 1401.5]", "focal_length_px: [1400, 1401.5, 3]"), []string{"left_camera.focal_length_px", "with 3 value(s)", "needs 2 (fx, fy)"}},
		{"word focal", rep("focal_length_px: [1400, 1401.5]", "focal_length_px: [a, b]"), []string{`left_camera.focal_length_px value 1 = "a"`, "not a number"}},
		{"scalar focal", rep("focal_length_px: [1400, 1401.5]", "focal_length_px: 1400"), []string{"left_camera.focal_length_px", "not a list"}},
		{"inf translation", rep("translation_m: [", "translation_m: [.inf, "), []string{"right_from_left.translation_m", "with 4 value(s)"}},
		{"inf baseline", rep("baseline_m: ", "baseline_m: .inf #"), []string{"baseline_m", "not a finite number"}},
		{"huge width", rep("image_width_px: 1280", "image_width_px: 99999999999999999999"), []string{"image_width_px", "not a whole number"}},
		{"camera scalar", rep("left_camera:", "left_camera: 5\nxleft_camera:"), []string{"unknown key xleft_camera"}},
		{"plane inf", rep("offset_m: ", "offset_m: .inf #"), []string{"sea_plane.offset_m", "not a finite number"}},
		{"rms NaN", rep("rms_px: ", "rms_px: .nan #"), []string{"calibration.rms_px", "not a finite number"}},
		{"quality word", rep("rms_px: ", "rms_px: high #"), []string{"calibration section", "into a number"}},
		{"view key", rep("status: used", "status: used\n      colour: red"), []string{"unknown key calibration.views item 1.colour"}},
		{"rotation 2x3", rot("[[1,0,0],[0,1,0]]"), []string{"right_from_left.rotation", "with 2 value(s)", "needs 3"}},
		{"rotation 3x2", rot("[[1,0],[0,1],[0,0]]"), []string{"right_from_left.rotation row 1", "with 2 value(s)"}},
		{"rotation 4x3", rot("[[1,0,0],[0,1,0],[0,0,1],[0,0,0]]"), []string{"with 4 value(s)"}},
		{"rotation scalar", rot("1"), []string{"right_from_left.rotation", "not a list"}},
		{"self alias", rep("image_width_px: 1280", "image_width_px: &a [*a]"), []string{"image_width_px"}},
		{"alias version", "format: &a crestspeed-rig\nversion: *a\n", []string{"version", "not a number"}},
		{"repeated key", "format: crestspeed-rig\nformat: x\n", []string{"twice"}},
		{"tab indent", "format: crestspeed-rig\n\tversion: 1\n", []string{"not a valid rig file"}},
		{"newer version", rep("version: 1", "version: 2\nnew_key: 3"), []string{"version 2"}},
		{"binary", "\x00\x01\x02\xff", []string{"rig.yaml"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := ParseRig([]byte(c.text), "rig.yaml")
			oneSentence(t, err, append(c.want, "rig.yaml")...)
			t.Log(err)
		})
	}
	// Aliases where they are legal give the same rig.
	aliased := strings.Replace(text, "radial_distortion: [", "radial_distortion: &r [", 1)
	if _, err := ParseRig([]byte(aliased), "rig.yaml"); err != nil {
		t.Errorf("an anchor: %v", err)
	}
}
