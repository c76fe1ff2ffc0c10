package cf

import (
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/internal/pyref"
	"crestspeed/report/table"
)

// whitecapTable makes a whitecap table of n whitecaps of 2 to 12 rows,
// some values unknown, rounded to the precision of whitecaps.csv.
func whitecapTable(rng *rand.Rand, n int) *table.Table {
	var rows [][]float64
	for id := 1; id <= n; id++ {
		m := 2 + rng.IntN(11)
		for i := 0; i < m; i++ {
			r := make([]float64, len(table.Whitecaps.Columns))
			for k, c := range table.Whitecaps.Columns {
				switch {
				case c.Kind == table.Level:
					r[k] = float64(rng.IntN(len(c.Levels)))
				case c.Kind == table.Count:
					r[k] = float64(rng.IntN(40))
				case !c.Required && rng.IntN(5) == 0:
					r[k] = math.NaN()
				default:
					r[k] = 30 * rng.Float64()
				}
			}
			r[table.WhitecapID], r[table.WhitecapTime] = float64(id), 0.1*float64(200+i)
			rows = append(rows, r)
		}
	}
	t := table.New(table.Whitecaps, len(rows))
	for i, r := range rows {
		for k, v := range r {
			t.Cols[k][i] = v
		}
	}
	t.Round()
	return t
}

// A pooled file of two deployments, read by xarray (Debian
// python3-xarray, the reference reader): as many trajectories as both
// deployments have tracks, numbered 1…N, each with its deployment and the
// id it has in its own file; every observation equal to the rows of the
// deployments one after the other, times shifted by each part's offset;
// the CF-1.8 trajectory attributes in place (CF Conventions 1.8, §9.3.3)
// and speed_fit carrying flag_values and flag_meanings (CF §3.5).
func TestPooledTrajectoriesOpenInXarray(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(5, 6))
	for _, c := range []struct {
		coll Collection
		a, b *table.Table
	}{
		{Crests, crestTable(rng, 9), crestTable(rng, 6)},
		{Whitecaps, whitecapTable(rng, 7), whitecapTable(rng, 4)},
	} {
		nc := filepath.Join(dir, c.coll.Schema.File+".nc")
		parts := []Part{{Rows: c.a, TimeOffset: 1000}, {Rows: c.b, TimeOffset: 86400.5}}
		err := WritePooledTrajectories(nc, c.coll, parts, TrajectoryInfo{TimeUnits: "seconds since 2026-01-01T00:00:00Z",
			Source: "crestspeed test", Comment: "Deployments: 1 = a, 2 = b."})
		if err != nil {
			t.Fatal(err)
		}
		rows := func(tb *table.Table) [][]any { // NaN as null: JSON has no NaN
			out := make([][]any, len(tb.Cols))
			for k, col := range tb.Cols {
				for _, v := range col {
					if math.IsNaN(v) {
						out[k] = append(out[k], nil)
					} else {
						out[k] = append(out[k], v)
					}
				}
			}
			return out
		}
		var got struct {
			Trajectories, Obs int
			IDs, Deployment   []int
			Mismatch          []string
			Attrs             map[string]string
		}
		pyref.JSON(t, `
import json, sys
import numpy as np
import xarray as xr
d = json.load(sys.stdin)
ds = xr.open_dataset(d["nc"], decode_times=False)
cols = d["cols"]; a = d["a"]; b = d["b"]; offs = d["offs"]
nan = lambda v: np.array([np.nan if x is None else x for x in v], float)
out = {"Trajectories": ds.sizes["trajectory"], "Obs": ds.sizes["obs"],
       "IDs": ds["trajectory_id"].values.tolist(), "Deployment": ds["deployment"].values.tolist(), "Mismatch": [],
       "Attrs": {"featureType": ds.attrs.get("featureType", ""), "cf_role": ds["trajectory_id"].attrs.get("cf_role", ""),
                 "sample_dimension": ds["row_size"].attrs.get("sample_dimension", ""), "time_units": ds["time"].attrs.get("units", ""),
                 "comment": ds.attrs.get("comment", ""),
                 "flag_meanings": ds["speed_fit"].attrs.get("flag_meanings", "") if "speed_fit" in ds else ""}}
idcol = d["idcol"]; timecol = d["timecol"]
# per-trajectory source ids and deployments from the tables' runs
src, dep = [], []
for k, t in enumerate((a, b)):
    ids = nan(t[idcol])
    starts = np.flatnonzero(np.r_[True, np.diff(ids) != 0])
    src += ids[starts].tolist(); dep += [k + 1] * len(starts)
if ds["source_id"].values.tolist() != src or ds["deployment"].values.tolist() != dep:
    out["Mismatch"].append("source_id/deployment")
if ds["row_size"].values.sum() != len(a[0]) + len(b[0]):
    out["Mismatch"].append("row_size")
for i, (col, var) in enumerate(cols):
    if i == idcol:
        continue
    want = np.concatenate([nan(a[i]) + (offs[0] if i == timecol else 0), nan(b[i]) + (offs[1] if i == timecol else 0)])
    if not np.array_equal(want, ds[var].values.astype(float), equal_nan=True):
        out["Mismatch"].append(col)
print(json.dumps(out))
`, map[string]any{"nc": nc, "a": rows(c.a), "b": rows(c.b), "offs": []float64{1000, 86400.5},
			"cols": colPairs(c.coll.Schema), "idcol": c.coll.ID, "timecol": c.coll.Time}, &got)
		n := len(table.TrackRuns(c.a)) - 1 + len(table.TrackRuns(c.b)) - 1
		if c.coll.Schema == table.Whitecaps {
			n = len(trajectoryRuns(c.a.Cols[c.coll.ID])) - 1 + len(trajectoryRuns(c.b.Cols[c.coll.ID])) - 1
		}
		if got.Trajectories != n || got.Obs != c.a.Len()+c.b.Len() {
			t.Errorf("%s: %d trajectories and %d observations, want %d and %d", c.coll.Schema.File, got.Trajectories, got.Obs, n, c.a.Len()+c.b.Len())
		}
		for k, id := range got.IDs {
			if id != k+1 {
				t.Fatalf("%s: trajectory ids %v, want 1…%d", c.coll.Schema.File, got.IDs, n)
			}
		}
		if len(got.Mismatch) > 0 {
			t.Errorf("%s: variables differ from the rows of the deployments: %v", c.coll.Schema.File, got.Mismatch)
		}
		want := map[string]string{"featureType": "trajectory", "cf_role": "trajectory_id", "sample_dimension": "obs",
			"time_units": "seconds since 2026-01-01T00:00:00Z"}
		if c.coll.Schema == table.Whitecaps {
			want["flag_meanings"] = strings.Join(table.FitLevels, " ")
		}
		for k, v := range want {
			if got.Attrs[k] != v {
				t.Errorf("%s: attribute %s = %q, want %q", c.coll.Schema.File, k, got.Attrs[k], v)
			}
		}
		if !strings.Contains(got.Attrs["comment"], "Deployments: 1 = a, 2 = b.") {
			t.Errorf("%s: comment %q lacks the deployments", c.coll.Schema.File, got.Attrs["comment"])
		}
		if _, err := os.Stat("/usr/bin/ncdump"); err == nil {
			out, err := exec.Command("/usr/bin/ncdump", "-h", nc).CombinedOutput()
			if err != nil || !strings.Contains(string(out), `featureType = "trajectory"`) {
				t.Errorf("ncdump -h failed (%v):\n%s", err, out)
			}
		}
	}
}

// colPairs lists (CSV name, NetCDF name) of a schema's columns.
func colPairs(s *table.Schema) [][2]string {
	out := make([][2]string, len(s.Columns))
	for k, c := range s.Columns {
		out[k] = [2]string{c.Name, c.NC}
	}
	return out
}

// A part of the wrong schema is refused with a sentence naming the file.
func TestPooledWrongSchema(t *testing.T) {
	nc := filepath.Join(t.TempDir(), "x.nc")
	err := WritePooledTrajectories(nc, Crests, []Part{{Rows: whitecapTable(rand.New(rand.NewPCG(1, 1)), 2)}}, TrajectoryInfo{})
	if err == nil || !strings.Contains(err.Error(), "whitecaps.csv") {
		t.Fatalf("got %v", err)
	}
	if _, err := os.Stat(nc); err == nil {
		t.Fatal("a file was left behind")
	}
}
