package analysis_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
	"time"

	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/speed/analysis"
	"crestspeed/tracking"
)


// benchFile synthesizes (once, cached in the temp folder) a 512×512 JONSWAP
// record of the given number of frames.
func benchFile(b *testing.B, frames int) string {
	b.Helper()
	dir := filepath.Join(os.TempDir(), "crestspeed-bench")
	os.MkdirAll(dir, 0o755)
	path := filepath.Join(dir, fmt.Sprintf("jonswap512-%d.nc", frames))
	if _, err := os.Stat(path); err == nil {
		return path
	}
	if _, err := samples.Synthesize(context.Background(), samples.BenchmarkSea(frames), path, 1, runtime.NumCPU(), nil); err != nil {
		b.Fatal(err)
	}
	return path
}

// BenchmarkDetectLink measures crest detection on 512×512 frames (in
// parallel over frames) plus linking, without file reading: frames/s for 1
// and 2 workers.
func BenchmarkDetectLink(b *testing.B) {
	const nf = 32
	sc := samples.BenchmarkSea(nf)
	sea, err := sc.Sea()
	if err != nil {
		b.Fatal(err)
	}
	xs, ys := sc.Grid.Axes()
	ev := samples.NewFrameEvaluator(sea, xs, ys, runtime.NumCPU())
	frames := make([][]float32, nf)
	for i := range frames {
		frames[i] = make([]float32, len(xs)*len(ys))
		ev.Frame(float64(i)/10, frames[i])
	}
	g := tracking.Geometry{Nx: 512, Ny: 512, Dx: 0.5, Dy: 0.5, Theta: 25 * 3.14159265 / 180}
	det := tracking.NewDetector(g, tracking.DetectOptions{MinElevation: 0.15, MinLength: 2})
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			scratch := make([]*tracking.Scratch, workers)
			for i := range scratch {
				scratch[i] = det.NewScratch()
			}
			b.ResetTimer()
			start := time.Now()
			for it := 0; it < b.N; it++ {
				res := make([][]tracking.Crest, nf)
				var wg sync.WaitGroup
				for w := 0; w < workers; w++ {
					wg.Add(1)
					go func(w int) {
						defer wg.Done()
						for f := w; f < nf; f += workers {
							res[f] = det.Detect(frames[f], nil, f, float64(f)/10, scratch[w])
						}
					}(w)
				}
				wg.Wait()
				l := tracking.NewLinker(tracking.LinkOptions{MaxGapFrames: 2, GateS: 11, GateN: 28, Speed: func(tracking.Crest) float64 { return 9.4 }})
				for f := 0; f < nf; f++ {
					l.Push(f, float64(f)/10, res[f])
				}
				l.Finish()
			}
			b.ReportMetric(float64(nf*b.N)/time.Since(start).Seconds(), "frames/s")
		})
	}
}

// BenchmarkAnalyseRecordMemory runs the whole crest analysis on 512×512
// records of N and 4N frames and reports the peak heap in use: it must not
// grow with the record (beyond the crest rows themselves).
func BenchmarkAnalyseRecordMemory(b *testing.B) {
	for _, n := range []int{64, 256} {
		path := benchFile(b, n)
		b.Run(fmt.Sprintf("frames=%d", n), func(b *testing.B) {
			for it := 0; it < b.N; it++ {
				runtime.GC()
				var peak uint64
				stop := make(chan struct{})
				done := make(chan struct{})
				go func() {
					defer close(done)
					var ms runtime.MemStats
					for {
						runtime.ReadMemStats(&ms)
						if ms.HeapInuse > peak {
							peak = ms.HeapInuse
						}
						select {
						case <-stop:
							return
						case <-time.After(20 * time.Millisecond):
						}
					}
				}()
				src, err := ingest.OpenElevation(path, ingest.ElevationOptions{})
				if err != nil {
					b.Fatal(err)
				}
				start := time.Now()
				rec, err := analysis.Run(context.Background(), src, analysis.Options{
					MinCrestFraction: 0.1, MinCrestLengthM: 2, MaxGapFrames: 2, Workers: runtime.NumCPU()})
				el := time.Since(start)
				src.Close()
				close(stop)
				<-done
				if err != nil {
					b.Fatal(err)
				}
				b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MB")
				b.ReportMetric(float64(n)/el.Seconds(), "frames/s")
				b.ReportMetric(float64(len(rec.Rows)), "crest-rows")
			}
		})
	}
}
