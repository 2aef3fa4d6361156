package normalize

import (
	"context"
	"runtime"
	"sync"
)

// EachBlock hands every block to work, on workers goroutines at once (0 means one per core),
// and each result to consume, one at a time and in block order, so that what consume
// accumulates is the same on any number of cores. At most a few blocks per worker are ahead of
// consume at any time; it stops at the first error, or when ctx is cancelled. blocks.Block must
// be safe to call from several goroutines. When blocks is also a Filler, the buffers of blocks
// already consumed are reused, so x is valid only until consume has taken the result of block u.
func EachBlock[R any](ctx context.Context, blocks Blocks, workers int, work func(u int, x []float64) (R, error), consume func(u int, r R) error) error {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	n := blocks.Len()
	ahead := 4 * workers
	type result struct {
		u   int
		r   R
		err error
	}
	tokens := make(chan struct{}, ahead) // a token is a block taken and not yet consumed
	results := make(chan result, ahead)
	stop := make(chan struct{})
	bufs := make([][]float64, ahead)
	filler, _ := blocks.(Filler)
	var mu sync.Mutex
	next := 0
	var wg sync.WaitGroup
	for w := 0; w < min(workers, n); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				select {
				case tokens <- struct{}{}:
				case <-stop:
					return
				}
				mu.Lock()
				u := next
				next++
				mu.Unlock()
				if u >= n {
					return
				}
				// Block u-ahead has been consumed (its token is back), so its buffer is free.
				var x []float64
				if filler != nil {
					x = filler.BlockInto(u, bufs[u%ahead])
					bufs[u%ahead] = x
				} else {
					x = blocks.Block(u)
				}
				r, err := work(u, x)
				select {
				case results <- result{u, r, err}:
				case <-stop:
					return
				}
			}
		}()
	}
	go func() { wg.Wait(); close(results) }()
	defer func() {
		close(stop)
		for range results { // let the workers finish
		}
	}()
	pending := make(map[int]result, ahead)
	for want := 0; want < n; {
		res, ok := <-results
		if !ok {
			break
		}
		pending[res.u] = res
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
			if err := consume(want, res.r); err != nil {
				return err
			}
			want++
			<-tokens
		}
	}
	return ctx.Err()
}

// Filler is Blocks that can write a block into a buffer it is given (reused when large enough).
type Filler interface {
	Blocks
	BlockInto(u int, dst []float64) []float64
}
