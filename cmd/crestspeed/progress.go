package main

import (
	"fmt"
	"io"
	"os"
	"sync"
	"time"

	"github.com/vbauerster/mpb/v8"
	"github.com/vbauerster/mpb/v8/decor"
)

// console is where a verb reports: log lines and progress on stderr
// (nothing but errors when quiet), results on stdout.
type console struct {
	stdout, stderr io.Writer
	quiet          bool
}

// logf prints a progress or result line on stderr unless quiet.
func (c *console) logf(format string, args ...any) {
	if c.quiet {
		return
	}
	fmt.Fprintf(c.stderr, format+"\n", args...)
}

// progress shows how far a long job has got: a bar when stderr is a
// terminal, otherwise a plain log line at most every ten seconds (and at the
// end), so batch logs stay readable.
type progress struct {
	con   *console
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

func (c *console) newProgress(name string, total int) *progress {
	pr := &progress{con: c, name: name, total: total, start: time.Now(), last: time.Now()}
	if c.quiet {
		return pr
	}
	if f, ok := c.stderr.(*os.File); ok && f == os.Stderr && stderrIsTerminal() {
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
		eta := ""
		if done > 0 && done < total {
			left := time.Duration(float64(time.Since(pr.start)) * float64(total-done) / float64(done))
			eta = ", about " + left.Round(time.Second).String() + " left"
		}
		pr.con.logf("%s: %d/%d (%s%s)", pr.name, done, total, elapsed(pr.start), eta)
	}
}

// passes shows the progress of a job made of named passes, one bar per
// pass; call the returned stop function when the job ends.
func (c *console) passes() (update func(pass string, done, total int), stop func()) {
	var mu sync.Mutex
	var cur *progress
	var name string
	update = func(pass string, done, total int) {
		mu.Lock()
		defer mu.Unlock()
		if pass != name || cur == nil {
			if cur != nil {
				cur.done()
			}
			cur, name = c.newProgress(pass, total), pass
		}
		cur.set(done, total)
	}
	stop = func() {
		mu.Lock()
		defer mu.Unlock()
		if cur != nil {
			cur.done()
			cur = nil
		}
	}
	return update, stop
}

// done closes the bar.
func (pr *progress) done() {
	if pr.bar != nil {
		pr.bar.SetTotal(-1, true)
		pr.p.Wait()
	}
}
