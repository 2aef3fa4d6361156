package normalize

import (
	"context"
	"runtime"
	"sync"
)

// EachBlock hands every block to work, on workers goroutines at once (0 means one per core),
// and each result to consume, one at a time and in block order, so that what consume
// accumulates is the same on any number of cores. Blocks go in batches of a few per worker; it
// stops at the first error, or when ctx is cancelled. blocks.Block must be safe to call from
// several goroutines. When blocks is also a Filler, each batch slot's buffer is reused, so x is
// valid only until consume has taken the result of block u.
func EachBlock[R any](ctx context.Context, blocks Blocks, workers int, work func(u int, x []float64) (R, error), consume func(u int, r R) error) error {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	n := blocks.Len()
	batch := 4 * workers
	results := make([]R, batch)
	errs := make([]error, batch)
	bufs := make([][]float64, batch)
	filler, _ := blocks.(Filler)
	for base := 0; base < n; base += batch {
		if err := ctx.Err(); err != nil {
			return err
		}
		m := min(batch, n-base)
		var wg sync.WaitGroup
		var mu sync.Mutex
		next := 0
		for w := 0; w < min(workers, m); w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for {
					mu.Lock()
					i := next
					next++
					mu.Unlock()
					if i >= m {
						return
					}
					var x []float64
					if filler != nil {
						x = filler.BlockInto(base+i, bufs[i])
						bufs[i] = x
					} else {
						x = blocks.Block(base + i)
					}
					results[i], errs[i] = work(base+i, x)
				}
			}()
		}
		wg.Wait()
		for i := 0; i < m; i++ {
			if errs[i] != nil {
				return errs[i]
			}
			if err := consume(base+i, results[i]); err != nil {
				return err
			}
			var zero R
			results[i] = zero
		}
	}
	return nil
}

// Filler is Blocks that can write a block into a buffer it is given (reused when large enough).
type Filler interface {
	Blocks
	BlockInto(u int, dst []float64) []float64
}
