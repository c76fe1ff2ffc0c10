package report

import (
	"bufio"
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"

	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// writeSyntheticTrackDir writes crests.csv (nTracks tracks of about
// meanRows rows, streamed so that the rows are never all in memory),
// spectrum.csv and summary.json into dir, as "crestspeed track" would.
func writeSyntheticTrackDir(tb testing.TB, dir string, nTracks, meanRows int, seed uint64) {
	tb.Helper()
	if err := syntheticTrackDir(dir, nTracks, meanRows, seed); err != nil {
		tb.Fatal(err)
	}
}

func syntheticTrackDir(dir string, nTracks, meanRows int, seed uint64) error {
	f, err := os.Create(filepath.Join(dir, "crests.csv"))
	if err != nil {
		return err
	}
	bw := bufio.NewWriterSize(f, 1<<20)
	bw.WriteString(strings.Join(table.Crests.Names(), ",") + "\n")
	rng := rand.New(rand.NewPCG(seed, 1))
	const chunk = 1000
	counts := summary.CrestsSummary{Detections: nTracks * meanRows, Tracks: nTracks}
	for done := 0; done < nTracks; done += chunk {
		rows := syntheticRows(rng, min(chunk, nTracks-done), meanRows)
		for i := range rows {
			rows[i].TrackID += done
		}
		t := fill(table.Crests, rows, crestFields)
		counts.Rows += t.Len()
		for _, v := range t.Cols[table.CrestSpeed] {
			if !math.IsNaN(v) {
				counts.RowsWithSpeed++
			}
		}
		var part bytes.Buffer
		if err := t.Write(&part); err != nil {
			return err
		}
		body := part.Bytes()
		bw.Write(body[bytes.IndexByte(body, '\n')+1:]) // without the header
	}
	if err := first(bw.Flush(), f.Close()); err != nil {
		return err
	}
	counts.RowsWithoutSpeed = counts.Rows - counts.RowsWithSpeed
	// a JONSWAP-like spectrum peaking at 0.2 Hz
	sp := table.New(table.Spectrum, 129)
	for i := 0; i <= 128; i++ {
		x := float64(i) / 128
		sp.Cols[0][i], sp.Cols[1][i] = x, 0
		if x > 0 {
			sp.Cols[1][i] = 0.09 / math.Pow(x/0.2, 5) * math.Exp(-1.25*math.Pow(x/0.2, -4))
		}
	}
	sp.Round()
	sf, err := os.Create(filepath.Join(dir, "spectrum.csv"))
	if err != nil {
		return err
	}
	if err := first(sp.Write(sf), sf.Close()); err != nil {
		return err
	}
	sum := &Summary{
		Tool: map[string]string{"name": "crestspeed", "version": "test"}, Caution: summary.Caution,
		Config: map[string]any{"track": map[string]any{"steepness_bounds": []float64{0.1, 0.2}}},
		Inputs: []FileInfo{{Path: "/data/synthetic-basin.nc", Bytes: 123456, SHA256: "0123abcd"}},
		Record: summary.RecordSummary{Title: "synthetic crest rows", Attributes: map[string]string{"site": "test basin (synthetic)"},
			TimeUnits: "seconds since 2026-06-14T09:00:00Z", FirstTimeS: 0, LastTimeS: 110},
		Frames: summary.FramesSummary{InFile: 1100, Read: 1098, Skipped: 2, SkippedReasons: map[string]int{"all-NaN frame": 2}, IntervalS: 0.1},
		SeaState: summary.SeaStateSummary{Hm0: 1.2, Tp: 5, TpUncertainty: math.NaN(), MeanDirection: 17.2, DirectionSource: "estimated from the record",
			Depth: 0, DepthSource: "given in the configuration", PeakPhaseSpeed: 7.8, PeakPhaseSpeedUncertainty: math.NaN(), PeakWavelength: 39},
		Masked:  0.013,
		Crests:  counts,
		Method:  map[string]any{"steepness_bounds": []float64{0.1, 0.2}, "crest_speed_window_s": 1.25},
		Timings: map[string]float64{"sea state": 1.5},
		Outputs: map[string]string{},
	}
	js, err := sum.JSON()
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, "summary.json"), js, 0o644)
}

// setupEnv makes the test binary write a synthetic track folder and exit:
// the benchmark makes its 10^6-row input in a child process, so that the
// memory high-water mark it reports is that of the report alone.
const setupEnv = "CRESTSPEED_REPORT_BENCH_SETUP"

func TestMain(m *testing.M) {
	if dir := os.Getenv(setupEnv); dir != "" {
		if err := syntheticTrackDir(dir, 50000, 20, 11); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// BenchmarkReportMillionRows rebuilds the whole report (read crests.csv,
// statistics with 1000 bootstrap resamples, six figures, report.html,
// crest_tracks.nc, summary.json) from 10^6 crest rows in 50 000 tracks.
// peak-RSS-MB is the high-water mark of the process's resident memory
// (getrusage); the input is written by a child process.
func BenchmarkReportMillionRows(b *testing.B) {
	src := b.TempDir()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), setupEnv+"="+src)
	if out, err := cmd.CombinedOutput(); err != nil {
		b.Fatalf("set-up failed: %v\n%s", err, out)
	}
	out := b.TempDir()
	b.ResetTimer()
	for b.Loop() {
		d, err := LoadDeployment(src)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := WriteReport(out, d, Options{Bootstrap: BootstrapOptions{Resamples: 1000, Seed: 1, Workers: runtime.NumCPU()}, Version: "bench"}); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err == nil {
		b.ReportMetric(float64(ru.Maxrss)/1024, "peak-RSS-MB")
	}
}
