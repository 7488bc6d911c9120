package parallel

import (
	"fmt"
	"sync/atomic"
	"testing"
)

func TestForCallsEachIndexOnce(t *testing.T) {
	for _, n := range []int{0, 1, 2, 7, 1000} {
		calls := make([]atomic.Int32, n)
		For(n, func(i int) { calls[i].Add(1) })
		for i := range calls {
			if c := calls[i].Load(); c != 1 {
				t.Errorf("n=%d: index %d called %d times", n, i, c)
			}
		}
	}
}

func ExampleFor() {
	squares := make([]int, 5)
	For(len(squares), func(i int) { squares[i] = i * i })
	fmt.Println(squares)
	// Output: [0 1 4 9 16]
}
