package normalize

import (
	"context"

	"github.com/cohortmix/cohortmix/cluster/par"
)

// EachBlock hands every block to work, on workers goroutines at once (0 means one per core),
// and each result to consume, one at a time and in block order, so that what consume
// accumulates is the same on any number of cores. At most a few blocks per worker are ahead of
// consume at any time; it stops at the first error, or when ctx is cancelled. blocks.Block must
// be safe to call from several goroutines. When blocks is also a Filler, the buffers of blocks
// already consumed are reused, so x is valid only until consume has taken the result of block u.
func EachBlock[R any](ctx context.Context, blocks Blocks, workers int, work func(u int, x []float64) (R, error), consume func(u int, r R) error) error {
	filler, _ := blocks.(Filler)
	bufs := make([][]float64, par.Slots(workers))
	return par.Ordered(ctx, blocks.Len(), workers, func(u, slot int) (R, error) {
		// The block before u in this slot has been consumed, so its buffer is free.
		if filler == nil {
			return work(u, blocks.Block(u))
		}
		bufs[slot] = filler.BlockInto(u, bufs[slot])
		return work(u, bufs[slot])
	}, consume)
}

// Filler is Blocks that can write a block into a buffer it is given (reused when large enough).
type Filler interface {
	Blocks
	BlockInto(u int, dst []float64) []float64
}
