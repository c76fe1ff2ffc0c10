package speed_test

import (
	"fmt"
	"math"
	"runtime"
	"testing"
	"time"

	"crestspeed/samples"
	"crestspeed/speed"
)

// BenchmarkSeaState512 feeds 300 frames of 512×512 cells (a directional
// JONSWAP sea, 0.5 m cells, 10 Hz; 30 distinct frames held in memory and
// cycled) through a SeaStateEstimator and takes its Result, and reports
// frames/s: "full-grid" is the direction estimate on the full grid for
// every frame transformed, the work the estimator did before its block
// averaging when given ExpectedFrames = 300 (stride 2);
// "default" is what AnalyseRecord uses now (ExpectedFrames = 300, the
// default DirectionCells).
func BenchmarkSeaState512(b *testing.B) {
	const n, nf, frames = 512, 30, 300
	sc := samples.BenchmarkSea(nf)
	sea, err := sc.Sea()
	if err != nil {
		b.Fatal(err)
	}
	xs, ys := sc.Grid.Axes()
	ev := samples.NewFrameEvaluator(sea, xs, ys, runtime.NumCPU())
	buf := make([][]float32, nf)
	valid := make([][]bool, nf)
	for i := range buf {
		buf[i] = make([]float32, n*n)
		ev.Frame(float64(i)/10, buf[i])
		// as ingest delivers frames: a mask with every cell, NaN where
		// unknown (a 40×40-cell hole that moves)
		valid[i] = make([]bool, n*n)
		for c := range valid[i] {
			x, y := c%n, c/n
			valid[i][c] = !(x >= 100+5*i && x < 140+5*i && y >= 200 && y < 240)
			if !valid[i][c] {
				buf[i][c] = float32(math.NaN())
			}
		}
	}
	for _, c := range []struct {
		name string
		opt  speed.SeaStateOptions
	}{
		{"full-grid", speed.SeaStateOptions{ExpectedFrames: frames, DirectionCells: -1}},
		{"default", speed.SeaStateOptions{ExpectedFrames: frames}},
	} {
		b.Run(c.name, func(b *testing.B) {
			start := time.Now()
			for it := 0; it < b.N; it++ {
				e := speed.NewSeaStateEstimator(n, n, 0.5, 0.5, 0.1, c.opt)
				for f := 0; f < frames; f++ {
					e.Add(buf[f%nf], valid[f%nf])
				}
				if _, err := e.Result(); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(frames*b.N)/time.Since(start).Seconds(), "frames/s")
		})
	}
	_ = fmt.Sprint
}
