// Package par runs work on all cores with results handed back in index order, so that whatever
// a caller accumulates is the same on any number of cores, and derives the seed of each random
// step from a run's seed (SubSeed). It is a leaf: the readers, the algorithms and the job use it.
package par

import (
	"context"
	"runtime"
	"sync"
)

// Each calls f(0), …, f(n−1), each once, on workers goroutines at once (0 means one per core),
// and returns when all are done. Each call must write only what belongs to its index, so that
// the result does not depend on the number of workers.
func Each(n, nWorkers int, f func(i int)) {
	_ = Ordered(context.Background(), n, nWorkers, func(i, _ int) (struct{}, error) {
		f(i)
		return struct{}{}, nil
	}, nil)
}

// Slots is how many results Ordered lets run ahead of consume with this many workers: the
// number of buffers a caller that reuses them needs (Ordered's slot).
func Slots(w int) int { return 4 * Workers(w) }

// Ordered runs work(i) for i in [0, n) on workers goroutines at once (0 means one per core) and
// hands each result to consume (when not nil), one at a time and in index order, so that what
// consume accumulates is the same on any number of cores. At most Slots(workers) indices are
// taken and not yet consumed at any time, and slot = i mod Slots(workers): the result of the
// index before i in the same slot has been consumed when work(i) starts, so a buffer per slot
// can be reused. It stops at the first error, or when ctx is cancelled.
func Ordered[R any](ctx context.Context, n, nWorkers int, work func(i, slot int) (R, error), consume func(i int, r R) error) error {
	return Stream(ctx, min(Workers(nWorkers), max(n, 1)), func(i int) (struct{}, bool, error) {
		return struct{}{}, i < n, nil
	}, func(i int, _ struct{}, slot int) (R, error) {
		return work(i, slot)
	}, consume)
}

// Stream is Ordered over items that come one at a time, as when they are read from a file:
// next(i) gives item i (ok false after the last), called for 0, 1, … in turn and never twice at
// once, each time by the worker that then runs work on it. An error from next ends the stream:
// Stream returns it once the results before it are consumed.
func Stream[T, R any](ctx context.Context, nWorkers int, next func(i int) (T, bool, error), work func(i int, item T, slot int) (R, error), consume func(i int, r R) error) error {
	w := Workers(nWorkers)
	ahead := Slots(nWorkers)
	s := &streamer[T, R]{next: next, work: work, ahead: ahead,
		tokens:  make(chan struct{}, ahead), // a token is an index taken and not yet consumed
		results: make(chan streamResult[R], ahead),
		stop:    make(chan struct{}),
	}
	var wg sync.WaitGroup
	for g := 0; g < w; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s.worker()
		}()
	}
	go func() { wg.Wait(); close(s.results) }()
	defer func() {
		close(s.stop)
		for range s.results { // let the workers finish
		}
	}()
	pending := make(map[int]streamResult[R], ahead)
	want := 0
	for res := range s.results {
		pending[res.i] = res
		for {
			res, ok := pending[want]
			if !ok {
				break
			}
			delete(pending, want)
			if res.err != nil {
				return res.err
			}
			if err := ctx.Err(); err != nil {
				return err
			}
			if consume != nil {
				if err := consume(want, res.r); err != nil {
					return err
				}
			}
			want++
			<-s.tokens
		}
	}
	return ctx.Err()
}

type streamResult[R any] struct {
	i   int
	r   R
	err error
}

// streamer is Stream's shared state: the items taken so far and whether next has ended.
type streamer[T, R any] struct {
	next    func(i int) (T, bool, error)
	work    func(i int, item T, slot int) (R, error)
	ahead   int
	tokens  chan struct{}
	results chan streamResult[R]
	stop    chan struct{}
	mu      sync.Mutex
	taken   int
	ended   bool
}

// worker takes a token, then the next item, works on it and sends the result, until the
// stream ends or is stopped.
func (s *streamer[T, R]) worker() {
	for {
		select {
		case s.tokens <- struct{}{}:
		case <-s.stop:
			return
		}
		i, item, ok, err := s.take()
		if !ok {
			return
		}
		var r R
		if err == nil {
			r, err = s.work(i, item, i%s.ahead)
		}
		select {
		case s.results <- streamResult[R]{i, r, err}:
		case <-s.stop:
			return
		}
	}
}

// take calls next for the next index, one caller at a time; ok is false once the items have
// ended (an error from next is an item whose result is that error).
func (s *streamer[T, R]) take() (i int, item T, ok bool, err error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.ended {
		return 0, item, false, nil
	}
	i = s.taken
	item, ok, err = s.next(i)
	s.ended = !ok || err != nil
	if !ok && err == nil {
		return 0, item, false, nil
	}
	s.taken++
	return i, item, true, err
}

// Workers is the number of goroutines for a requested count: w, or one per core when w ≤ 0.
func Workers(w int) int {
	if w <= 0 {
		return runtime.GOMAXPROCS(0)
	}
	return w
}
