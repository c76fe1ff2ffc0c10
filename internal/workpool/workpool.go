// Package workpool runs independent per-item work (one frame, one stereo
// pair, one batch of table lines) on a fixed number of goroutines and hands
// the results back strictly in the order the items were produced.
//
// # Model
//
// One goroutine produces items by calling Next until it returns io.EOF;
// Workers goroutines call Work on them; the caller's goroutine receives each
// result through Sink, in production order. At most InFlight items are
// between Next and Sink at any time, so memory is bounded whatever the
// length of the input, and a caller can recycle buffers through a free list
// of InFlight entries: take one in Next, give it back in Sink (and in
// Release).
//
// The first error — from Next, Work or Sink, or the context — stops the
// production of new items; items already produced are not sunk, but each is
// passed to Release, so resources they hold can be freed. Errors from Work
// are reported in production order: the error of the earliest failing item
// is returned, whatever the scheduling, so a run fails the same way for any
// number of workers.
package workpool

import (
	"context"
	"errors"
	"io"
	"sync"
)

// Pool describes one ordered, cancellable pass over a stream of items.
type Pool[In, Out any] struct {
	// Workers is the number of goroutines calling Work; ≤ 0 means one.
	Workers int
	// InFlight bounds the items between Next and Sink; ≤ 0 means twice
	// Workers. It is raised to Workers when smaller.
	InFlight int
	// Next produces the next item, or io.EOF after the last. It is called
	// on a single goroutine, never concurrently.
	Next func() (In, error)
	// Work processes one item on worker number worker (0 ≤ worker <
	// Workers), so that per-worker scratch space can be kept by the caller.
	Work func(worker int, in In) (Out, error)
	// Sink receives each result on the goroutine that called Run, in the
	// order Next produced the items.
	Sink func(in In, out Out) error
	// Release, if set, is called (on the goroutine that called Run) for
	// every produced item that does not reach Sink because the pass
	// stopped early; out is the zero value when Work did not run.
	Release func(in In, out Out)
}

// job is one produced item with its place in production order.
type job[In any] struct {
	seq int
	in  In
}

type result[In, Out any] struct {
	seq    int
	in     In
	out    Out
	worked bool
	err    error
}

// Run runs the pass and returns the first error in production order (or
// the context's error when it was cancelled), nil when every item was
// produced, worked and sunk.
func (p Pool[In, Out]) Run(ctx context.Context) error {
	workers := max(p.Workers, 1)
	inflight := p.InFlight
	if inflight <= 0 {
		inflight = 2 * workers
	}
	inflight = max(inflight, workers)
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()

	tokens := make(chan struct{}, inflight)
	jobs := make(chan job[In])
	results := make(chan result[In, Out], inflight+1)
	var wg sync.WaitGroup

	wg.Add(1)
	go func() {
		defer wg.Done()
		p.produce(ctx, tokens, jobs, results)
	}()
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			p.work(ctx, w, jobs, results)
		}()
	}
	go func() {
		wg.Wait()
		close(results)
	}()

	pending := map[int]result[In, Out]{}
	next := 0
	var firstErr error
	release := func(r result[In, Out]) {
		if p.Release != nil {
			p.Release(r.in, r.out)
		}
	}
	for r := range results {
		if firstErr != nil {
			if r.err == nil {
				release(r)
			}
			continue
		}
		pending[r.seq] = r
		for firstErr == nil {
			e, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			switch {
			case e.err != nil:
				firstErr = e.err
			case !e.worked:
				// only when the context was cancelled from outside
				firstErr = ctx.Err()
				release(e)
			default:
				firstErr = p.Sink(e.in, e.out)
			}
			if firstErr != nil {
				cancel()
				break
			}
			<-tokens
		}
	}
	for _, e := range pending {
		if e.err == nil {
			release(e)
		}
	}
	if firstErr == nil {
		firstErr = ctx.Err() // cancelled from outside before anything failed
	}
	return firstErr
}

// produce calls Next for each item a token allows and hands the items to
// the workers, closing jobs at the end. An error from Next travels as the
// result of its own sequence number, so it is reported after every earlier
// item; an item produced after cancellation goes back unworked.
func (p Pool[In, Out]) produce(ctx context.Context, tokens chan<- struct{}, jobs chan<- job[In], results chan<- result[In, Out]) {
	defer close(jobs)
	for seq := 0; ; seq++ {
		select {
		case tokens <- struct{}{}:
		case <-ctx.Done():
			return
		}
		in, err := p.Next()
		if errors.Is(err, io.EOF) {
			return
		}
		if err != nil {
			results <- result[In, Out]{seq: seq, err: err}
			return
		}
		select {
		case jobs <- job[In]{seq, in}:
		case <-ctx.Done():
			results <- result[In, Out]{seq: seq, in: in}
			return
		}
	}
}

// work is worker w: it runs Work on each job unless the pass was cancelled
// and sends every job on as a result.
func (p Pool[In, Out]) work(ctx context.Context, w int, jobs <-chan job[In], results chan<- result[In, Out]) {
	for j := range jobs {
		r := result[In, Out]{seq: j.seq, in: j.in}
		if ctx.Err() == nil {
			r.out, r.err = p.Work(w, j.in)
			r.worked = true
		}
		results <- r
	}
}
