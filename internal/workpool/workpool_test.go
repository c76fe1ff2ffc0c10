package workpool

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"sync/atomic"
	"testing"
	"time"
)

// counter produces 0, 1, ..., n-1 and then io.EOF.
func counter(n int) func() (int, error) {
	i := 0
	return func() (int, error) {
		if i == n {
			return 0, io.EOF
		}
		i++
		return i - 1, nil
	}
}

// jitter sleeps a pseudo-random few microseconds so that workers finish out
// of order.
func jitter(i int) { time.Sleep(time.Duration((i*7919)%13) * 30 * time.Microsecond) }

func TestOrderAndBound(t *testing.T) {
	for _, workers := range []int{1, 2, 3, 8} {
		var live, peak atomic.Int64
		var got []int
		p := Pool[int, int]{
			Workers: workers, InFlight: 4,
			Next: func() func() (int, error) {
				next := counter(500)
				return func() (int, error) {
					v, err := next()
					if err == nil {
						if n := live.Add(1); n > peak.Load() {
							peak.Store(n)
						}
					}
					return v, err
				}
			}(),
			Work: func(w int, in int) (int, error) {
				if w < 0 || w >= workers {
					return 0, fmt.Errorf("worker number %d outside 0..%d", w, workers-1)
				}
				jitter(in)
				return in * in, nil
			},
			Sink: func(in, out int) error {
				live.Add(-1)
				got = append(got, out)
				return nil
			},
		}
		if err := p.Run(context.Background()); err != nil {
			t.Fatalf("workers %d: %v", workers, err)
		}
		if len(got) != 500 {
			t.Fatalf("workers %d: %d results, want 500", workers, len(got))
		}
		for i, v := range got {
			if v != i*i {
				t.Fatalf("workers %d: result %d is %d, want %d (out of order)", workers, i, v, i*i)
			}
		}
		if lim := int64(max(4, workers)); peak.Load() > lim {
			t.Errorf("workers %d: %d items in flight, bound %d", workers, peak.Load(), lim)
		}
	}
}

// The error of the earliest failing item is returned whatever the
// scheduling, and every produced item is either sunk or released.
func TestEarliestErrorAndRelease(t *testing.T) {
	for trial := 0; trial < 20; trial++ {
		r := rand.New(rand.NewPCG(uint64(trial), 1))
		bad := map[int]bool{100 + r.IntN(50): true, 170 + r.IntN(20): true}
		first := 1 << 30
		for b := range bad {
			first = min(first, b)
		}
		var produced, sunk, released atomic.Int64
		next := counter(400)
		p := Pool[int, int]{
			Workers: 3,
			Next: func() (int, error) {
				v, err := next()
				if err == nil {
					produced.Add(1)
				}
				return v, err
			},
			Work: func(_ int, in int) (int, error) {
				jitter(in + trial)
				if bad[in] {
					return 0, fmt.Errorf("item %d failed", in)
				}
				return in, nil
			},
			Sink:    func(in, out int) error { sunk.Add(1); return nil },
			Release: func(in, out int) { released.Add(1) },
		}
		err := p.Run(context.Background())
		if err == nil || err.Error() != fmt.Sprintf("item %d failed", first) {
			t.Fatalf("trial %d: error %v, want item %d failed", trial, err, first)
		}
		if sunk.Load() != int64(first) {
			t.Errorf("trial %d: %d items sunk, want the %d before the failure", trial, sunk.Load(), first)
		}
		// the failing item itself is neither sunk nor released
		if s, rel, p := sunk.Load(), released.Load(), produced.Load(); s+rel+1 != p {
			t.Errorf("trial %d: produced %d, sunk %d, released %d: %d items lost", trial, p, s, rel, p-s-rel-1)
		}
	}
}

func TestNextAndSinkErrors(t *testing.T) {
	errNext := errors.New("cannot read item 7")
	next := counter(100)
	var sunk []int
	p := Pool[int, int]{
		Workers: 2,
		Next: func() (int, error) {
			v, err := next()
			if v == 7 {
				return 0, errNext
			}
			return v, err
		},
		Work: func(_ int, in int) (int, error) { jitter(in); return in, nil },
		Sink: func(in, out int) error { sunk = append(sunk, out); return nil },
	}
	if err := p.Run(context.Background()); !errors.Is(err, errNext) {
		t.Fatalf("error %v, want %v", err, errNext)
	}
	if len(sunk) != 7 {
		t.Errorf("%d items sunk before the read error, want 7", len(sunk))
	}

	errSink := errors.New("disk full")
	p.Next = counter(100)
	p.Sink = func(in, out int) error {
		if in == 30 {
			return errSink
		}
		return nil
	}
	if err := p.Run(context.Background()); !errors.Is(err, errSink) {
		t.Fatalf("error %v, want %v", err, errSink)
	}
}

func TestCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	var released atomic.Int64
	p := Pool[int, int]{
		Workers: 2,
		Next:    func() (int, error) { return 1, nil }, // endless
		Work:    func(_ int, in int) (int, error) { time.Sleep(100 * time.Microsecond); return in, nil },
		Sink: func(in, out int) error {
			cancel()
			return nil
		},
		Release: func(in, out int) { released.Add(1) },
	}
	done := make(chan error, 1)
	go func() { done <- p.Run(ctx) }()
	select {
	case err := <-done:
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("error %v, want context.Canceled", err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("the pass did not stop after its context was cancelled")
	}
}

func TestEmpty(t *testing.T) {
	p := Pool[int, int]{
		Next: counter(0),
		Work: func(int, int) (int, error) { return 0, errors.New("no items to work on") },
		Sink: func(int, int) error { return errors.New("no items to sink") },
	}
	if err := p.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
}
