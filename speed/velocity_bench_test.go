package speed

import (
	"math"
	"runtime"
	"testing"
	"time"
)

// BenchmarkSurfaceVelocityWindow times the 3-D FFT stage on windows of 256
// frames of 256×256 cells (half-overlapping, so one window per 128 frames
// pushed) and reports the peak heap in use: it must stay within 2 GiB
// whatever the record length.
func BenchmarkSurfaceVelocityWindow(b *testing.B) {
	const n, nw = 256, 256
	frame := make([]float32, n*n)
	for i := range frame {
		frame[i] = float32(math.Sin(float64(i) * 0.37))
	}
	for _, workers := range []int{1, 2} {
		b.Run(map[int]string{1: "workers=1", 2: "workers=2"}[workers], func(b *testing.B) {
			runtime.GC()
			var peak uint64
			stop := make(chan struct{})
			done := make(chan struct{})
			go func() {
				defer close(done)
				var ms runtime.MemStats
				for {
					runtime.ReadMemStats(&ms)
					peak = max(peak, ms.HeapInuse)
					select {
					case <-stop:
						return
					case <-time.After(50 * time.Millisecond):
					}
				}
			}()
			sv, err := NewSurfaceVelocity(n, n, 1, 1, 0.1, SurfaceVelocityOptions{Window: nw, Theta: 0.3, Workers: workers},
				func(int, *VelocityFrame, bool) {})
			if err != nil {
				b.Fatal(err)
			}
			// fill the first window outside the timing
			for i := 0; i < nw-1; i++ {
				sv.Push(frame)
			}
			start := time.Now()
			for it := 0; it < b.N; it++ {
				for i := 0; i < nw/2; i++ { // one more window per nw/2 frames
					sv.Push(frame)
				}
			}
			el := time.Since(start)
			close(stop)
			<-done
			b.ReportMetric(el.Seconds()/float64(b.N), "s/window")
			b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MB")
		})
	}
}
