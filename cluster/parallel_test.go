package cluster

import (
	"context"
	"errors"
	"sync/atomic"
	"testing"
)

// Ordered hands results over in index order whatever the workers, never reuses a slot before
// its last result was consumed, and stops at the first error.
func TestOrderedKeepsOrderAndSlots(t *testing.T) {
	stop := errors.New("stop")
	for _, w := range []int{1, 2, 7} {
		for _, failAt := range []int{-1, 500} {
			var consumed atomic.Int64
			next := 0
			err := Ordered(context.Background(), 1000, w, func(i, slot int) (int, error) {
				if slot != i%Slots(w) || consumed.Load() < int64(i-Slots(w)+1) {
					t.Errorf("workers %d: index %d in slot %d with %d consumed", w, i, slot, consumed.Load())
				}
				if i == failAt {
					return 0, stop
				}
				return i * i, nil
			}, func(i, r int) error {
				if i != next || r != i*i {
					t.Fatalf("workers %d: result %d (%d) consumed after %d", w, i, r, next-1)
				}
				next++
				consumed.Add(1)
				return nil
			})
			switch {
			case failAt < 0 && (err != nil || next != 1000):
				t.Errorf("workers %d: %v after %d results", w, err, next)
			case failAt >= 0 && (!errors.Is(err, stop) || next != failAt):
				t.Errorf("workers %d: %v after %d results, want the error after %d", w, err, next, failAt)
			}
		}
	}
	seen := make([]int, 300)
	Each(len(seen), 3, func(i int) { seen[i]++ })
	for i, c := range seen {
		if c != 1 {
			t.Fatalf("Each called f(%d) %d times", i, c)
		}
	}
}
