package runplan

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestCheckDoneAndWhy(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "left_0001.png")
	os.WriteFile(in, []byte("pixels"), 0o644)
	rig := filepath.Join(dir, "rig.yaml")
	os.WriteFile(rig, []byte("baseline: 2.5\n"), 0o644)
	os.MkdirAll(filepath.Join(dir, "parts"), 0o755)
	out := filepath.Join("parts", "part-0000.nc")
	step := func(block int) Step {
		fi, err := FileInput(in)
		if err != nil {
			t.Fatal(err)
		}
		ri, err := ContentInput(rig)
		if err != nil {
			t.Fatal(err)
		}
		return Step{Name: "part-0000", Inputs: []Input{fi, ri}, Outputs: []string{out},
			Settings: map[string]any{"reconstruct": map[string]any{"sgbm": map[string]any{"block_size": block}, "min_points": 3}}}
	}
	p := Plan{Dir: dir, Version: "1.0"}
	expect := func(s Step, done bool, why string) {
		t.Helper()
		ok, got, err := p.Check(s, true)
		if err != nil {
			t.Fatal(err)
		}
		if ok != done || !strings.Contains(got, why) {
			t.Errorf("up to date %v (%q), want %v (%q)", ok, got, done, why)
		}
	}
	expect(step(5), false, "not done yet")
	os.WriteFile(filepath.Join(dir, out), []byte("maps"), 0o644)
	if err := p.Done(step(5)); err != nil {
		t.Fatal(err)
	}
	expect(step(5), true, "")
	expect(step(7), false, "reconstruct.sgbm.block_size changed")
	p2 := Plan{Dir: dir, Version: "1.1"}
	if ok, why, _ := p2.Check(step(5), false); ok || !strings.Contains(why, "version 1.0") {
		t.Errorf("a new version did not redo the step: %v %q", ok, why)
	}
	// the rig's content changes (same size): redo, naming the file
	os.WriteFile(rig, []byte("baseline: 2.6\n"), 0o644)
	expect(step(5), false, "its input "+rig+" changed")
	os.WriteFile(rig, []byte("baseline: 2.5\n"), 0o644)
	// an image touched later
	later := time.Now().Add(time.Hour)
	os.Chtimes(in, later, later)
	expect(step(5), false, "its input "+in+" changed")
	if err := p.Done(step(5)); err != nil {
		t.Fatal(err)
	}
	// an output changed or removed behind the record's back
	os.WriteFile(filepath.Join(dir, out), []byte("mapz"), 0o644)
	expect(step(5), false, "changed since it was written")
	os.Remove(filepath.Join(dir, out))
	expect(step(5), false, "is missing")
}

// The fingerprint does not depend on the order maps are built in.
func TestFingerprintCanonical(t *testing.T) {
	a := Step{Name: "track", Settings: map[string]any{"b": 1.0, "a": map[string]any{"y": "x", "z": []any{1.0, 2.0}}}}
	b := Step{Name: "track", Settings: map[string]any{"a": map[string]any{"z": []any{1.0, 2.0}, "y": "x"}, "b": 1.0}}
	for i := 0; i < 20; i++ {
		if a.Fingerprint("v") != b.Fingerprint("v") {
			t.Fatal("equal steps have different fingerprints")
		}
	}
	if a.Fingerprint("v") == a.Fingerprint("w") {
		t.Fatal("the version does not enter the fingerprint")
	}
}
