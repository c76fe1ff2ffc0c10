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

// crestTable makes a crest table of nTracks tracks of 3 to 30 rows each,
// values like those of analysed crests, some unknown, rounded to the
// precision of crests.csv.
func crestTable(rng *rand.Rand, nTracks int) *table.Table {
	var rows [][]float64
	for id := 1; id <= nTracks; id++ {
		n := 3 + rng.IntN(28)
		for i := 0; i < n; i++ {
			r := make([]float64, len(table.Crests.Columns))
			for k, c := range table.Crests.Columns {
				switch {
				case c.Kind == table.Flag:
					r[k] = float64(rng.IntN(2))
				case c.Kind == table.Count:
					r[k] = float64(100 + i)
				case !c.Required && rng.IntN(6) == 0:
					r[k] = math.NaN()
				default:
					r[k] = 50 * rng.Float64()
				}
			}
			r[table.CrestTrack], r[table.CrestTime] = float64(id), 0.1*float64(100+i)
			rows = append(rows, r)
		}
	}
	t := table.New(table.Crests, len(rows))
	for i, r := range rows {
		for k, v := range r {
			t.Cols[k][i] = v
		}
	}
	t.Round()
	return t
}

// crest_tracks.nc opened by xarray (Debian python3-xarray, the reference
// reader): as many trajectories and observations as crests.csv has tracks
// and rows, every column equal to the CSV's (NaN where the CSV field is
// empty), and the CF-1.8 trajectory attributes in place (CF Conventions
// 1.8, §9.3.3 contiguous ragged array: row_size with sample_dimension,
// a variable with cf_role = "trajectory_id", global featureType).
// ncdump -h (Debian netcdf-bin) must read the header.
func TestTrajectoriesOpenInXarray(t *testing.T) {
	dir := t.TempDir()
	csvPath := filepath.Join(dir, "crests.csv")
	f, err := os.Create(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	if err := crestTable(rand.New(rand.NewPCG(2, 3)), 37).Write(f); err != nil {
		t.Fatal(err)
	}
	f.Close()
	tab, err := table.ReadFile(csvPath, table.Crests)
	if err != nil {
		t.Fatal(err)
	}
	nc := filepath.Join(dir, "crest_tracks.nc")
	err = WriteTrajectories(nc, tab, TrajectoryInfo{TimeUnits: "seconds since 2026-06-14T09:00:00Z", Title: "test", Source: "crestspeed test"})
	if err != nil {
		t.Fatal(err)
	}
	names := map[string]string{}
	for _, c := range table.Crests.Columns {
		names[c.Name] = c.NC
	}
	var got struct {
		Trajectories, Obs, CSVTracks, CSVRows int
		RowSizeSum                            int
		IDsMatch                              bool
		Mismatch                              []string
		Attrs                                 map[string]string
	}
	pyref.JSON(t, `
import json, sys, csv
import numpy as np
import xarray as xr
d = json.load(sys.stdin)
ds = xr.open_dataset(d["nc"], decode_times=False)
rows = list(csv.DictReader(open(d["csv"])))
ids = [int(r["track_id"]) for r in rows]
runs = [ids[0]] + [b for a, b in zip(ids, ids[1:]) if a != b]
sizes = np.diff(np.flatnonzero(np.r_[True, np.diff(ids) != 0, True]))
out = {"Trajectories": ds.sizes["trajectory"], "Obs": ds.sizes["obs"], "CSVTracks": len(set(ids)),
       "CSVRows": len(rows), "RowSizeSum": int(ds["row_size"].values.sum()),
       "IDsMatch": bool(np.array_equal(ds["trajectory_id"].values, runs) and np.array_equal(ds["row_size"].values, sizes)),
       "Mismatch": [], "Attrs": {
           "Conventions": ds.attrs.get("Conventions", ""), "featureType": ds.attrs.get("featureType", ""),
           "cf_role": ds["trajectory_id"].attrs.get("cf_role", ""),
           "sample_dimension": ds["row_size"].attrs.get("sample_dimension", ""),
           "time_units": ds["time"].attrs.get("units", ""), "speed_units": ds["crest_speed"].attrs.get("units", ""),
           "speed_long_name": ds["crest_speed"].attrs.get("long_name", "")}}
for col, var in d["names"].items():
    want = np.array([float(r[col]) if r[col] != "" else np.nan for r in rows])
    if col == "track_id":
        have = np.repeat(ds["trajectory_id"].values, ds["row_size"].values).astype(float)
    else:
        have = ds[var].values.astype(float)
    if not np.array_equal(want, have, equal_nan=True):
        out["Mismatch"].append(col)
print(json.dumps(out))
`, map[string]any{"nc": nc, "csv": csvPath, "names": names}, &got)
	if got.Trajectories != got.CSVTracks || got.Obs != got.CSVRows || got.RowSizeSum != got.CSVRows {
		t.Errorf("NetCDF has %d trajectories and %d observations (row_size sums to %d); CSV has %d tracks and %d rows",
			got.Trajectories, got.Obs, got.RowSizeSum, got.CSVTracks, got.CSVRows)
	}
	if !got.IDsMatch {
		t.Error("trajectory_id and row_size do not follow the track runs of crests.csv")
	}
	if len(got.Mismatch) > 0 {
		t.Errorf("columns differ between crest_tracks.nc and crests.csv: %v", got.Mismatch)
	}
	want := map[string]string{"Conventions": "CF-1.8", "featureType": "trajectory", "cf_role": "trajectory_id",
		"sample_dimension": "obs", "time_units": "seconds since 2026-06-14T09:00:00Z", "speed_units": "m s-1"}
	for k, v := range want {
		if got.Attrs[k] != v {
			t.Errorf("attribute %s = %q, want %q", k, got.Attrs[k], v)
		}
	}
	if got.Attrs["speed_long_name"] == "" {
		t.Error("crest_speed has no long_name")
	}
	if _, err := os.Stat("/usr/bin/ncdump"); err == nil {
		out, err := exec.Command("/usr/bin/ncdump", "-h", nc).CombinedOutput()
		if err != nil || !strings.Contains(string(out), `featureType = "trajectory"`) {
			t.Errorf("ncdump -h failed (%v):\n%s", err, out)
		}
	}
	// nothing but the finished file is left in the folder
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		t.Errorf("folder holds %d entries, want crests.csv and crest_tracks.nc", len(entries))
	}
}
