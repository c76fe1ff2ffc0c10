package main

import (
	"bytes"
	"encoding/binary"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"testing"

	"crestspeed/ingest"
	"crestspeed/speed"
)

// writePLY writes points as a binary little-endian PLY file (x, y, z as
// float32: Turk's PLY format).
func writePLY(t *testing.T, path string, pts [][3]float64) {
	t.Helper()
	var b bytes.Buffer
	fmt.Fprintf(&b, "ply\nformat binary_little_endian 1.0\ncomment synthetic test cloud\nelement vertex %d\nproperty float x\nproperty float y\nproperty float z\nend_header\n", len(pts))
	for _, p := range pts {
		for _, v := range p {
			binary.Write(&b, binary.LittleEndian, float32(v))
		}
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// Point clouds of a known wave — a deep-water regular wave of period 4 s,
// sampled at random points, tilted by 3° and raised by 12 m as a
// reconstruction in a camera-like frame would leave them — are gridded
// (the mean plane found and the points moved into its frame) and tracked:
// the median crest speed must be within 2 % of the linear phase speed
// c = gT/2π (Dean & Dalrymple 1991), and Hm0 within 3 % of 4·a/√2.
func TestGridPointCloudsOfAKnownWave(t *testing.T) {
	dir := t.TempDir()
	clouds := filepath.Join(dir, "clouds")
	os.MkdirAll(clouds, 0o755)
	const (
		a, T, fps, frames = 0.3, 4.0, 10.0, 400
		lx, ly, perFrame  = 50.0, 12.0, 14400
		tilt, lift        = 3 * math.Pi / 180, 12.0
	)
	omega := 2 * math.Pi / T
	k := omega * omega / speed.G
	rng := rand.New(rand.NewPCG(7, 7))
	pts := make([][3]float64, perFrame)
	for f := 0; f < frames; f++ {
		tt := float64(f) / fps
		for i := range pts {
			x, y := lx*rng.Float64(), ly*rng.Float64()
			z := a * math.Cos(k*x-omega*tt)
			// rotate about the y axis by the tilt, then lift
			pts[i] = [3]float64{x*math.Cos(tilt) + z*math.Sin(tilt), y, -x*math.Sin(tilt) + z*math.Cos(tilt) + lift}
		}
		writePLY(t, filepath.Join(clouds, "cloud_"+strconv.Itoa(1000 + f)[1:]+".ply"), pts)
	}
	maps := filepath.Join(dir, "maps.nc")
	_, stderr, err := run(t, "grid", "--points", filepath.Join(clouds, "cloud_*.ply"), "--fps", "10", "--out", maps)
	if err != nil {
		t.Fatal(err)
	}
	t.Log(stderr)
	src, err := ingest.OpenElevation(maps, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	meta := src.Meta()
	src.Close()
	if len(meta.Times) != frames || meta.Grid.Dx() > 1 {
		t.Fatalf("%d frames on %g m cells, want %d on cells under 1 m", len(meta.Times), meta.Grid.Dx(), frames)
	}
	if w := meta.Grid.X[len(meta.Grid.X)-1] - meta.Grid.X[0]; w < 0.9*lx {
		t.Errorf("the automatic region spans %.1f m of the %.0f m sampled along x", w, lx)
	}
	tracks := filepath.Join(dir, "tracks")
	_, stderr, err = run(t, "track", "--input", maps, "--out", tracks, "--depth", "0", "--no-report")
	if err != nil {
		t.Fatal(err)
	}
	t.Log(stderr)
	var sum struct {
		SeaState struct {
			Hm0 float64 `json:"hm0_m"`
		} `json:"sea_state"`
	}
	b, _ := os.ReadFile(filepath.Join(tracks, "summary.json"))
	json.Unmarshal(b, &sum)
	if hm0 := 4 * a / math.Sqrt2; math.Abs(sum.SeaState.Hm0-hm0) > 0.03*hm0 {
		t.Errorf("Hm0 %.4f m, want %.4f m ± 3 %%", sum.SeaState.Hm0, hm0)
	}
	speeds := csvColumn(t, filepath.Join(tracks, "crests.csv"), "crest_speed_mps")
	sort.Float64s(speeds)
	if len(speeds) < 50 {
		t.Fatalf("only %d crest speeds", len(speeds))
	}
	c := speed.G * T / (2 * math.Pi)
	med := speeds[len(speeds)/2]
	t.Logf("median crest speed %.4f m/s over %d rows; linear c = %.4f m/s", med, len(speeds), c)
	if math.Abs(med-c) > 0.02*c {
		t.Errorf("median crest speed %.4f m/s, want linear c = %.4f m/s ± 2 %%", med, c)
	}
}

// csvColumn reads the finite values of one column of a CSV table.
func csvColumn(t *testing.T, path, name string) []float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil || len(rows) == 0 {
		t.Fatalf("%s: %v", path, err)
	}
	col := slices.Index(rows[0], name)
	if col < 0 {
		t.Fatalf("%s has no column %s", path, name)
	}
	var v []float64
	for _, r := range rows[1:] {
		if x, err := strconv.ParseFloat(r[col], 64); err == nil && !math.IsNaN(x) {
			v = append(v, x)
		}
	}
	return v
}
