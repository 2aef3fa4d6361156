package par

import (
	"context"
	"errors"
	"fmt"
	"sync/atomic"
	"testing"
)

// Ordered hands results over in index order whatever the workers, never reuses a slot before
// its last result was consumed, and stops at the first error.
func TestOrderedKeepsOrderAndSlots(t *testing.T) {
	t.Parallel()
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

// Stream takes its items in turn, one call of next at a time, hands the results over in order
// whatever the workers, and returns an error of next only after the results before it.
func TestStreamTakesItemsInTurn(t *testing.T) {
	t.Parallel()
	readErr := errors.New("read")
	for _, w := range []int{1, 2, 7} {
		for _, failAt := range []int{-1, 0, 700} {
			var inNext atomic.Int32
			calls, consumed := 0, 0
			err := Stream(context.Background(), w, func(i int) (string, bool, error) {
				if inNext.Add(1) != 1 {
					t.Errorf("workers %d: next called twice at once", w)
				}
				defer inNext.Add(-1)
				if i != calls {
					t.Errorf("workers %d: next(%d) after %d calls", w, i, calls)
				}
				calls++
				if i == failAt {
					return "", false, readErr
				}
				return fmt.Sprint(i), i < 1000, nil
			}, func(i int, item string, _ int) (int, error) {
				return len(item) + i, nil
			}, func(i, r int) error {
				if i != consumed || r != len(fmt.Sprint(i))+i {
					t.Fatalf("workers %d: result %d (%d) consumed after %d", w, i, r, consumed)
				}
				consumed++
				return nil
			})
			switch {
			case failAt < 0 && (err != nil || consumed != 1000 || calls != 1001):
				t.Errorf("workers %d: %v after %d results and %d calls of next", w, err, consumed, calls)
			case failAt >= 0 && (!errors.Is(err, readErr) || consumed != failAt):
				t.Errorf("workers %d: %v after %d results, want the error of next after %d", w, err, consumed, failAt)
			}
		}
	}
}
