package main

import (
	"os"
	"sync"
	"time"

	"github.com/vbauerster/mpb/v8"
	"github.com/vbauerster/mpb/v8/decor"
)

// progress shows how far a long job has got: a bar when stderr is a
// terminal, otherwise a plain log line at most every ten seconds (and at the
// end), so batch logs stay readable.
type progress struct {
	app   *App
	name  string
	total int
	p     *mpb.Progress
	bar   *mpb.Bar
	mu    sync.Mutex
	last  time.Time
	start time.Time
}

func stderrIsTerminal() bool {
	fi, err := os.Stderr.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

func (app *App) newProgress(name string, total int) *progress {
	pr := &progress{app: app, name: name, total: total, start: time.Now(), last: time.Now()}
	if app.cfg != nil && app.cfg.Quiet {
		return pr
	}
	if f, ok := app.Stderr.(*os.File); ok && f == os.Stderr && stderrIsTerminal() {
		pr.p = mpb.New(mpb.WithOutput(os.Stderr), mpb.WithWidth(48))
		pr.bar = pr.p.AddBar(int64(total),
			mpb.PrependDecorators(decor.Name(name+" "), decor.CountersNoUnit("%d/%d")),
			mpb.AppendDecorators(decor.Percentage(), decor.Name(" "), decor.EwmaETA(decor.ET_STYLE_GO, 30)),
		)
	}
	return pr
}

// set records that done of total items are finished.
func (pr *progress) set(done, total int) {
	if pr.bar != nil {
		pr.bar.SetTotal(int64(total), false)
		pr.bar.SetCurrent(int64(done))
		return
	}
	pr.mu.Lock()
	defer pr.mu.Unlock()
	if time.Since(pr.last) >= 10*time.Second {
		pr.last = time.Now()
		pr.app.logf("%s: %d/%d (%s)", pr.name, done, total, elapsed(pr.start))
	}
}

// done closes the bar.
func (pr *progress) done() {
	if pr.bar != nil {
		pr.bar.SetTotal(-1, true)
		pr.p.Wait()
	}
}
