package main

import (
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/calib"
)

// Debian's opencv-doc chessboard stereo pairs (9×6 inner corners; pair 10
// is not shipped).
const docData = "/usr/share/doc/opencv-doc/examples/data/"

// checkSentence fails unless err is a one-line, one-sentence message
// mentioning every want, with a non-zero exit status.
func checkSentence(t *testing.T, err error, want ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error; want one mentioning %q", want)
	}
	if exitCode(err) == 0 {
		t.Errorf("exit status 0 for %v", err)
	}
	msg := sentence(err)
	if strings.Contains(msg, "\n") || strings.Count(msg, ". ") > 0 {
		t.Errorf("error is not one sentence: %q", msg)
	}
	for _, w := range want {
		if !strings.Contains(msg, w) {
			t.Errorf("error %q does not mention %q", msg, w)
		}
	}
}

// The calibrate verb on the opencv-doc pairs writes a rig file that loads,
// the two quality figures, and refuses to overwrite them without --force.
// Settings come from a config file, with a flag overriding one of them.
func TestCalibrateCommand(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "rig.yaml")
	conf := filepath.Join(dir, "c.yaml")
	os.WriteFile(conf, []byte("calibrate:\n  left: "+docData+"left[0-9][0-9].jpg\n  square_m: 1.0\n  drop_factor: 2.5\n"), 0o644)
	_, stderr, err := run(t, "calibrate", "--config", conf, "--right", docData+"right[0-9][0-9].jpg",
		"--square", "0.025", "--out", out)
	if err != nil {
		t.Fatal(err)
	}
	rig, err := calib.LoadRig(out)
	if err != nil {
		t.Fatal(err)
	}
	q := rig.Quality
	// The flag (0.025 m) overrides the file (1 m); the file's drop factor
	// is used; bounds of the opencv-doc check in package calib.
	if q.SquareM != 0.025 || q.DropFactor != 2.5 || q.Pattern != "9x6" || !(q.RMSPx < 0.5) || len(q.Views) != 13 {
		t.Errorf("unexpected calibration record: %+v", q)
	}
	worst, resid := calibrateOutputs(out)
	for _, p := range []string{worst, resid} {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := png.DecodeConfig(f); err != nil {
			t.Errorf("%s: %v", p, err)
		}
		f.Close()
	}
	if !strings.Contains(stderr, "epipolar error mean") || !strings.Contains(stderr, "baseline") {
		t.Errorf("quality figures not reported:\n%s", stderr)
	}
	_, _, err = run(t, "calibrate", "--left", docData+"left[0-9][0-9].jpg", "--right", docData+"right[0-9][0-9].jpg",
		"--square", "0.025", "--out", out)
	checkSentence(t, err, "--force")
	// The same images calibrated again give the same bytes: the rig file
	// records the time of the newest image, not the wall clock.
	again := filepath.Join(dir, "again", "rig.yaml")
	os.Mkdir(filepath.Dir(again), 0o755)
	if _, _, err := run(t, "calibrate", "--config", conf, "--right", docData+"right[0-9][0-9].jpg",
		"--square", "0.025", "--out", again); err != nil {
		t.Fatal(err)
	}
	a, _ := os.ReadFile(out)
	b, _ := os.ReadFile(again)
	if string(a) != string(b) {
		t.Errorf("two calibrations of the same images differ:\n%s\n---\n%s", a, b)
	}
}

func writeBlank(t *testing.T, path string, w, h int) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img := image.NewGray(image.Rect(0, 0, w, h))
	for i := range img.Pix {
		img.Pix[i] = 128
	}
	if err := png.Encode(f, img); err != nil {
		t.Fatal(err)
	}
}

func link(t *testing.T, src, dst string) {
	t.Helper()
	data, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

// Bad invocations and bad images: one sentence, non-zero exit, no output.
func TestCalibrateCommandBadInput(t *testing.T) {
	base := t.TempDir()
	mk := func(name string) string {
		d := filepath.Join(base, name)
		os.MkdirAll(d, 0o755)
		return d
	}
	// left/right count mismatch
	mismatch := mk("mismatch")
	for _, n := range []string{"01", "02", "03"} {
		link(t, docData+"left"+n+".jpg", filepath.Join(mismatch, "left"+n+".jpg"))
	}
	for _, n := range []string{"01", "02"} {
		link(t, docData+"right"+n+".jpg", filepath.Join(mismatch, "right"+n+".jpg"))
	}
	// images of different sizes
	sizes := mk("sizes")
	link(t, docData+"left01.jpg", filepath.Join(sizes, "left01.jpg"))
	writeBlank(t, filepath.Join(sizes, "right01.png"), 320, 240)
	// no pattern in any view
	blank := mk("blank")
	for _, n := range []string{"1", "2", "3"} {
		writeBlank(t, filepath.Join(blank, "left"+n+".png"), 640, 480)
		writeBlank(t, filepath.Join(blank, "right"+n+".png"), 640, 480)
	}
	// fewer than the minimum number of good views
	few := mk("few")
	for _, n := range []string{"01", "02", "03"} {
		link(t, docData+"left"+n+".jpg", filepath.Join(few, "left"+n+".jpg"))
		link(t, docData+"right"+n+".jpg", filepath.Join(few, "right"+n+".jpg"))
	}
	outDir := mk("out")
	out := filepath.Join(outDir, "rig.yaml")
	cases := []struct {
		name string
		args []string
		want []string
	}{
		{"count mismatch", []string{"--left", mismatch + "/left*", "--right", mismatch + "/right*", "--square", "0.025"}, []string{"left03.jpg", "no partner"}},
		{"different sizes", []string{"--left", sizes + "/left*", "--right", sizes + "/right*", "--square", "0.025"}, []string{"320×240", "640×480"}},
		{"no pattern", []string{"--left", blank + "/left*", "--right", blank + "/right*", "--square", "0.025"}, []string{"no 9x6 chessboard"}},
		{"too few views", []string{"--left", few + "/left*", "--right", few + "/right*", "--square", "0.025"}, []string{"only 3 of 3", "min_views"}},
		{"no square", []string{"--left", few + "/left*", "--right", few + "/right*"}, []string{"--square"}},
		{"bad pattern", []string{"--left", few + "/left*", "--right", few + "/right*", "--square", "0.025", "--pattern", "9by6"}, []string{"9by6"}},
		{"no files", []string{"--left", base + "/nothing*", "--right", few + "/right*", "--square", "0.025"}, []string{"matches no file"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, _, err := run(t, append([]string{"calibrate", "--quiet", "--out", out}, c.args...)...)
			checkSentence(t, err, c.want...)
			t.Log(sentence(err))
			if entries, _ := os.ReadDir(outDir); len(entries) != 0 {
				t.Errorf("failed run left %v", entries)
			}
		})
	}
	_, _, err := run(t, "calibrate", "--left", few+"/left*", "--right", few+"/right*", "--square", "0.025")
	checkSentence(t, err, "--out")
	// An unquoted glob expanded by the shell.
	_, _, err = run(t, "calibrate", "--left", few+"/left01.jpg", few+"/left02.jpg", "--right", few+"/right*", "--square", "0.025", "--out", out)
	checkSentence(t, err, "quote the --left and --right patterns")
}
