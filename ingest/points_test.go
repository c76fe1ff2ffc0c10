package ingest

import (
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/pyref"
)

// pointsScript writes point files with Debian's numpy: text files by
// np.savetxt, PLY files by a hand-written header followed by the bytes of
// a numpy structured array (binary) or by np.savetxt of the rows (ASCII).
// For each file it prints the coordinates numpy holds for the finite
// points, as float64 (JSON numbers in Python's shortest round-trip repr,
// so they decode to the same bits), and the number of points with a NaN.
const pointsScript = `
import json, sys, io
import numpy as np
req = json.load(open(sys.argv[1]))
rng = np.random.default_rng(7)
out = {}
def finite_rows(x, y, z):
    m = np.isfinite(x) & np.isfinite(y) & np.isfinite(z)
    pts = np.stack([x[m], y[m], z[m]], axis=1).astype(np.float64)
    return {"points": pts.tolist(), "nan": int((~m).sum())}
def cloud(n):
    x = rng.normal(30, 10, n); y = rng.normal(0, 8, n); z = rng.normal(0, 0.5, n)
    x[3] = np.nan; z[7] = np.nan
    return x, y, z
for f in req:
    path, kind, n = f["path"], f["kind"], f["n"]
    x, y, z = cloud(n)
    if kind == "savetxt_space":
        np.savetxt(path, np.stack([x, y, z], 1), header="x y z")
        out[path] = finite_rows(x, y, z)
    elif kind == "savetxt_csv_cols":
        c = rng.uniform(0, 1, n)
        np.savetxt(path, np.stack([c, z, x, y], 1), delimiter=",", header="confidence,Z,X,Y", comments="", fmt="%.17g")
        out[path] = finite_rows(x, y, z)
    elif kind == "savetxt_noheader_tab":
        np.savetxt(path, np.stack([x, y, z, y], 1), delimiter="\t", fmt="%.9e")
        # %.9e keeps 10 significant digits: what numpy reads back is the
        # reference.
        r = np.loadtxt(path, delimiter="\t")
        out[path] = finite_rows(r[:, 0], r[:, 1], r[:, 2])
    elif kind.startswith("ply_"):
        fmt = {"ply_le_double": ("binary_little_endian", "<", [("x","f8"),("y","f8"),("z","f8")]),
               "ply_le_mixed":  ("binary_little_endian", "<", [("red","u1"),("x","f4"),("conf","f4"),("y","i2"),("z","f8"),("n","u4")]),
               "ply_be_float":  ("binary_big_endian", ">", [("x","f4"),("y","f4"),("z","f4"),("g","u2")]),
               "ply_ascii":     ("ascii", "", [("x","f8"),("y","f8"),("z","f4"),("red","u1")])}[kind]
        form, bo, fields = fmt
        names = {"f8": "double", "f4": "float", "i2": "short", "u1": "uchar", "u2": "ushort", "u4": "uint"}
        dt = np.dtype([(nm, (bo or "<") + t) for nm, t in fields])
        a = np.zeros(n, dtype=dt)
        for nm, t in fields:
            src = {"x": x, "y": y * 100 if t == "i2" else y, "z": z}.get(nm)
            if src is None:
                a[nm] = rng.integers(0, 200, n)
            elif t == "i2":
                a[nm] = np.nan_to_num(np.round(src), nan=0)
            else:
                a[nm] = src
        hdr = "ply\nformat %s 1.0\ncomment written by a numpy script\n" % form
        if kind == "ply_ascii":
            hdr += "element camera 2\nproperty float f\nproperty list uchar int ids\n"
        hdr += "element vertex %d\n" % n
        hdr += "".join("property %s %s\n" % (names[t], nm) for nm, t in fields)
        hdr += "element face 2\nproperty list uchar int vertex_indices\nend_header\n"
        with open(path, "wb") as fh:
            fh.write(hdr.encode())
            if form == "ascii":
                fh.write(b"1.5 3 7 8 9\n-2 0\n")
                for row in a:
                    fh.write((" ".join(repr(float(v)) if fields[i][1][0] == "f" else str(int(v)) for i, v in enumerate(row)) + "\n").encode())
                fh.write(b"3 0 1 2\n3 2 3 4\n")
            else:
                fh.write(a.tobytes())
                fh.write(bytes([3]) + np.array([0, 1, 2], dtype=bo + "i4").tobytes())
                fh.write(bytes([3]) + np.array([2, 3, 4], dtype=bo + "i4").tobytes())
        out[path] = finite_rows(a["x"].astype(np.float64), a["y"].astype(np.float64), a["z"].astype(np.float64))
print(json.dumps(out))
`

type pointsRef struct {
	Points [][3]float64 `json:"points"`
	NaN    int          `json:"nan"`
}

// readPointFile reads a whole file with OpenPointFile.
func readPointFile(t *testing.T, path, format string, opt XYZOptions) ([]Point, int, error) {
	t.Helper()
	r, c, err := OpenPointFile(path, format, opt)
	if err != nil {
		return nil, 0, err
	}
	defer c.Close()
	var all []Point
	buf := make([]Point, 100) // smaller than a file, so Read is called often
	for {
		n, err := r.Read(buf)
		all = append(all, buf[:n]...)
		if err == io.EOF {
			return all, r.Dropped(), nil
		}
		if err != nil {
			return all, r.Dropped(), err
		}
	}
}

// TestPointReadersNumpy: XYZ text written by np.savetxt and PLY files
// (binary of both byte orders with mixed property types, and ASCII with an
// element before the vertices and faces after them) written by a numpy
// script give back exactly the points numpy holds, bit for bit, and count
// the points with a NaN coordinate.
func TestPointReadersNumpy(t *testing.T) {
	dir := t.TempDir()
	type req struct {
		Path string `json:"path"`
		Kind string `json:"kind"`
		N    int    `json:"n"`
	}
	cases := []struct {
		kind, name string
		opt        XYZOptions
	}{
		{"savetxt_space", "a.xyz", XYZOptions{}},
		{"savetxt_csv_cols", "b.csv", XYZOptions{}},
		{"savetxt_noheader_tab", "c.txt", XYZOptions{Indexes: []int{0, 1, 2}}},
		{"ply_le_double", "d.ply", XYZOptions{}},
		{"ply_le_mixed", "e.ply", XYZOptions{}},
		{"ply_be_float", "f.ply", XYZOptions{}},
		{"ply_ascii", "g.ply", XYZOptions{}},
	}
	var reqs []req
	for i, c := range cases {
		reqs = append(reqs, req{filepath.Join(dir, c.name), c.kind, 250 + 37*i})
	}
	var refs map[string]pointsRef
	pyref.JSON(t, pointsScript, reqs, &refs)
	for i, c := range cases {
		path := reqs[i].Path
		ref, ok := refs[path]
		if !ok {
			t.Fatalf("%s: no reference", c.kind)
		}
		got, dropped, err := readPointFile(t, path, "", c.opt)
		if err != nil {
			t.Errorf("%s: %v", c.kind, err)
			continue
		}
		if len(got) != len(ref.Points) || dropped != ref.NaN {
			t.Errorf("%s: %d points, %d dropped; numpy has %d finite and %d with NaN", c.kind, len(got), dropped, len(ref.Points), ref.NaN)
			continue
		}
		for k, p := range got {
			w := ref.Points[k]
			if math.Float64bits(p.X) != math.Float64bits(w[0]) || math.Float64bits(p.Y) != math.Float64bits(w[1]) || math.Float64bits(p.Z) != math.Float64bits(w[2]) {
				t.Errorf("%s: point %d = %v, numpy %v", c.kind, k, p, w)
				break
			}
		}
	}
}

// writeText writes text to dir/name and returns the path.
func writeText(t testing.TB, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

const plyHead = "ply\nformat ascii 1.0\nelement vertex %d\nproperty float x\nproperty float y\nproperty float z\nend_header\n"

// TestPointReadersMalformed: malformed files give one sentence naming the
// file and the line or byte offset of the fault.
func TestPointReadersMalformed(t *testing.T) {
	dir := t.TempDir()
	binHead := "ply\nformat binary_little_endian 1.0\nelement vertex 4\nproperty double x\nproperty double y\nproperty double z\nend_header\n"
	for _, c := range []struct {
		name, text string
		frags      []string
	}{
		{"notply.ply", "PLY\nformat ascii 1.0\n", []string{"line 1", `does not begin with the line "ply"`}},
		{"fmt.ply", "ply\nformat binary 1.0\nend_header\n", []string{"line 2", "unknown format"}},
		{"novertex.ply", "ply\nformat ascii 1.0\nelement face 1\nproperty list uchar int v\nend_header\n3 0 1 2\n", []string{"no vertex element"}},
		{"noz.ply", "ply\nformat ascii 1.0\nelement vertex 1\nproperty float x\nproperty float y\nend_header\n1 2\n", []string{`no "z" property`}},
		{"count.ply", "ply\nformat ascii 1.0\nelement vertex -3\nend_header\n", []string{"line 3", "count"}},
		{"word.ply", fmt.Sprintf(plyHead, 2) + "1 2 3\n4 five 6\n", []string{"line 9", `"five" is not a number`}},
		{"short.ply", fmt.Sprintf(plyHead, 3) + "1 2 3\n4 5 6\n", []string{"1 of 3 vertices unread", "truncated"}},
		{"nohead.ply", "ply\nformat ascii 1.0\nelement vertex 1\n", []string{"ends before end_header"}},
		{"bin.ply", binHead + strings.Repeat("\x00", 8*3*2+5), []string{fmt.Sprintf("at byte %d", len(binHead)+8*3*2+5), "2 of 4 vertices unread"}},
		{"cols.xyz", "x y z\n1 2 3\n4 5\n", []string{"line 3", "has 2 columns"}},
		{"value.csv", "x,y,z\n1,2,3\n4,5,6\n7,8,1.2.3\n", []string{"line 4", `holds "1.2.3", which is not a number`}},
		{"names.csv", "east,north,up\n1,2,3\n", []string{"line 1", `no column "x"`}},
	} {
		p := writeText(t, dir, c.name, c.text)
		_, _, err := readPointFile(t, p, "", XYZOptions{})
		oneLine(t, err, append(c.frags, c.name)...)
	}
	_, _, err := readPointFile(t, writeText(t, dir, "a.las", "x"), "", XYZOptions{})
	oneLine(t, err, "a.las", `".las"`)
	// Named columns by setting, and a bad setting.
	p := writeText(t, dir, "enu.csv", "east;north;up\n1;2;3\n")
	got, _, err := readPointFile(t, p, "", XYZOptions{Columns: []string{"east", "north", "up"}})
	if err != nil || len(got) != 1 || got[0] != (Point{1, 2, 3}) {
		t.Errorf("named columns: %v, %v", got, err)
	}
	_, _, err = readPointFile(t, p, "", XYZOptions{Delimiter: "|"})
	oneLine(t, err, "delimiter")
}

// TestPointSource: a record of point files timed by a timestamps file
// (frame,time_s,file), by the names with a frame rate, or by millisecond
// names; damaged files are skipped, counted and named with the place of
// the fault; max_points bounds one file.
func TestPointSource(t *testing.T) {
	dir := t.TempDir()
	ply := func(k int) string {
		return fmt.Sprintf(plyHead, 3) + fmt.Sprintf("%d 0 0.5\n%d 1 -0.5\n%d 2 0.25\n", k, k, k)
	}
	var rows []string
	for k := 0; k < 6; k++ {
		name := fmt.Sprintf("cloud_%04d.ply", k)
		text := ply(k)
		switch k {
		case 2:
			text = text[:len(text)-8] // truncated
		case 4:
			text = strings.Replace(text, "4 1 -0.5", "4 1 nan", 1)
		}
		writeText(t, dir, name, text)
		rows = append(rows, fmt.Sprintf("%d,%.2f,%s", k, 10+0.25*float64(k), name))
	}
	rows[3] = "3,1e300,cloud_0003.ply"
	writeText(t, dir, "times.csv", "frame,time_s,file\n"+strings.Join(rows, "\n")+"\n")
	src, err := OpenPoints(PointSpec{TimestampsFile: filepath.Join(dir, "times.csv")})
	if err != nil {
		t.Fatal(err)
	}
	var f PointFrame
	var times []float64
	for {
		err := src.Next(&f)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		times = append(times, f.Time)
		// Check: the coordinates typed into each file above; frame 4
		// has a NaN, dropped and counted.
		want := 3
		if strings.HasSuffix(f.Path, "0004.ply") {
			want = 2
			if f.Dropped != 1 {
				t.Errorf("%s: %d dropped, want 1", f.Path, f.Dropped)
			}
		}
		var k int
		fmt.Sscanf(filepath.Base(f.Path), "cloud_%04d.ply", &k)
		if len(f.Points) != want || f.Points[0] != (Point{float64(k), 0, 0.5}) {
			t.Errorf("%s: %d points from %v, want %d from (%d, 0, 0.5)", f.Path, len(f.Points), f.Points[0], want, k)
		}
	}
	// Check: the times typed in times.csv for frames 0, 1, 4, 5 (frame 2
	// truncated, frame 3 at 1e300 s).
	wantTimes(t, "point files", times, []float64{10, 10.25, 11, 11.25})
	if got, want := src.Skipped(), (SkipCounts{SkipBadPoints: 1, SkipTimeSpan: 1}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
	named := src.SkippedFiles().Items
	var bad SkippedItem
	for _, it := range named {
		if it.Reason == SkipBadPoints {
			bad = it
		}
	}
	if !strings.HasSuffix(bad.Files[0], "cloud_0002.ply") || !strings.Contains(bad.Detail, "line 10") || !strings.Contains(bad.Detail, "truncated") {
		t.Errorf("truncated file named as %+v", bad)
	}
	if r := src.TimeRule(); !strings.Contains(r, "time_s column") {
		t.Errorf("TimeRule %q", r)
	}

	// By the names, at 5 Hz (in a folder without timestamps.csv, which
	// would give the times).
	names := t.TempDir()
	for k := 3; k < 6; k++ {
		writeText(t, names, fmt.Sprintf("frame%03d.xyz", k), fmt.Sprintf("# x y z\n%d 1 2\n", k))
	}
	src, err = OpenPoints(PointSpec{Glob: filepath.Join(names, "*.xyz"), FPS: 5})
	if err != nil {
		t.Fatal(err)
	}
	// Check: number / 5 Hz (definition of the frame rate).
	wantTimes(t, "names at 5 Hz", src.Times(), []float64{0.6, 0.8, 1})
	if r := src.TimeRule(); !strings.Contains(r, "frame number at 5 Hz") {
		t.Errorf("TimeRule %q", r)
	}
	_, err = OpenPoints(PointSpec{Glob: filepath.Join(names, "*.xyz")})
	oneLine(t, err, "give the frame rate")

	// max_points; nine-digit millisecond names.
	big := t.TempDir()
	writeText(t, big, "c_000000000.xyz", "1 2 3\n4 5 6\n7 8 9\n")
	writeText(t, big, "c_000000100.xyz", "1 2 3\n")
	src, err = OpenPoints(PointSpec{Glob: filepath.Join(big, "*.xyz"), MaxPoints: 2})
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for src.Next(&f) == nil {
		n++
	}
	if n != 1 || src.Skipped()[SkipTooManyPoints] != 1 {
		t.Errorf("max_points 2: %d files read, skipped %v", n, src.Skipped())
	}
	for _, spec := range []PointSpec{
		{},
		{Glob: filepath.Join(big, "none*.ply")},
		{Glob: filepath.Join(big, "*.xyz"), MaxPoints: -1},
		{Glob: filepath.Join(big, "*.xyz"), Format: "las"},
		{Glob: filepath.Join(big, "*.xyz"), XYZ: XYZOptions{Indexes: []int{0, 1}}},
		{Glob: filepath.Join(big, "*.xyz"), FPS: -2},
	} {
		_, err := OpenPoints(spec)
		oneLine(t, err)
	}
}

// TestPLYEmptyElementBeforeVertices: an element without properties and a
// huge count before the vertices takes no bytes and no time (a loop over
// its count would never end).
func TestPLYEmptyElementBeforeVertices(t *testing.T) {
	text := "ply\nformat binary_little_endian 1.0\nelement nothing 9000000000000000000\nelement vertex 1\nproperty uchar x\nproperty uchar y\nproperty uchar z\nend_header\n\x01\x02\x03"
	p, err := NewPLYReader(strings.NewReader(text), "e.ply")
	if err != nil {
		t.Fatal(err)
	}
	buf := make([]Point, 4)
	n, err := p.Read(buf)
	if n != 1 || err != nil || buf[0] != (Point{1, 2, 3}) {
		t.Errorf("got %d points %v, %v; want (1, 2, 3)", n, buf[:n], err)
	}
}

// BenchmarkPointFiles reads a PLY (binary, double x y z and a uchar) and
// an XYZ text file of 200 000 points each through a PointSource.
func BenchmarkPointFiles(b *testing.B) {
	const n = 200_000
	dir := b.TempDir()
	var ply strings.Builder
	fmt.Fprintf(&ply, "ply\nformat binary_little_endian 1.0\nelement vertex %d\nproperty double x\nproperty double y\nproperty double z\nproperty uchar q\nend_header\n", n)
	rec := make([]byte, 25)
	var txt strings.Builder
	txt.WriteString("# x y z\n")
	for i := 0; i < n; i++ {
		x, y, z := float64(i)*0.01, float64(i%500)*0.02, math.Sin(float64(i))
		for k, v := range []float64{x, y, z} {
			u := math.Float64bits(v)
			for j := 0; j < 8; j++ {
				rec[8*k+j] = byte(u >> (8 * j))
			}
		}
		ply.Write(rec)
		fmt.Fprintf(&txt, "%.18e %.18e %.18e\n", x, y, z)
	}
	for _, c := range []struct{ name, data string }{{"f_000000000.ply", ply.String()}, {"f_000000000.xyz", txt.String()}} {
		writeText(b, dir, c.name, c.data)
		b.Run(filepath.Ext(c.name)[1:], func(b *testing.B) {
			src, err := OpenPoints(PointSpec{Glob: filepath.Join(dir, c.name)})
			if err != nil {
				b.Fatal(err)
			}
			var f PointFrame
			b.SetBytes(int64(len(c.data)))
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				src.Rewind()
				if err := src.Next(&f); err != nil || len(f.Points) != n {
					b.Fatalf("%v, %d points", err, len(f.Points))
				}
			}
		})
	}
}
