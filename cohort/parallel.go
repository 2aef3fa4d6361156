package cohort

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// onAllCores calls f(0), …, f(n−1), each once, on as many goroutines as there are cores, and
// returns when all are done. f must write only what belongs to its index.
func onAllCores(n int, f func(i int)) {
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := 0; w < min(runtime.GOMAXPROCS(0), n); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := int(next.Add(1) - 1); i < n; i = int(next.Add(1) - 1) {
				f(i)
			}
		}()
	}
	wg.Wait()
}
