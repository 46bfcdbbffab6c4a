package linsolve

import (
	"slices"
	"sync"

	"github.com/formwright/formwright/runtime/sparse"
)

// parallelMinWork is the amount of work (nonzeros touched) below which the
// row-parallel loops run on the calling goroutine: starting goroutines
// costs more than the loop (common practice, no source for the value).
const parallelMinWork = 1 << 15

// forRows runs fn over the rows [0, n) of a loop touching about work
// nonzeros, split into contiguous blocks of rows, one per worker. Each row
// is computed by the same code whatever the split, so a loop whose rows
// are independent gives bitwise the same result for every worker count.
func forRows(workers, n, work int, fn func(lo, hi int)) {
	if workers <= 1 || n < 2*workers || work < parallelMinWork {
		fn(0, n)
		return
	}
	var wg sync.WaitGroup
	for w := 0; w < workers-1; w++ {
		lo, hi := n*w/workers, n*(w+1)/workers
		wg.Go(func() { fn(lo, hi) })
	}
	fn(n*(workers-1)/workers, n)
	wg.Wait()
}

// mulVec sets dst = A x with workers goroutines (rows in blocks; bitwise
// the same for every worker count).
func mulVec(A *sparse.CSR, dst, x []float64, workers int) {
	rp, col, val := A.RowPtr, A.Col, A.Val
	forRows(workers, A.N, A.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			s := 0.0
			for k := rp[i]; k < rp[i+1]; k++ {
				s += val[k] * x[col[k]]
			}
			dst[i] = s
		}
	})
}

// residualTo sets r = b − A x.
func residualTo(A *sparse.CSR, r, b, x []float64, workers int) {
	rp, col, val := A.RowPtr, A.Col, A.Val
	forRows(workers, A.N, A.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			s := b[i]
			for k := rp[i]; k < rp[i+1]; k++ {
				s -= val[k] * x[col[k]]
			}
			r[i] = s
		}
	})
}

// mulAddVec sets dst += A x.
func mulAddVec(A *sparse.CSR, dst, x []float64, workers int) {
	rp, col, val := A.RowPtr, A.Col, A.Val
	forRows(workers, A.N, A.NNZ(), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			s := dst[i]
			for k := rp[i]; k < rp[i+1]; k++ {
				s += val[k] * x[col[k]]
			}
			dst[i] = s
		}
	})
}

// spgemm returns C = A B by Gustavson's row-by-row algorithm (Gustavson
// 1978, ACM TOMS 4): row i of C accumulates a_ik·(row k of B) in a dense
// work row with a marker array, then its columns are sorted. A symbolic
// pass counts the entries of every row, then the numeric pass writes each
// row in place; both split the rows among the workers. Each entry of C
// sums its products in the order of the columns of row i of A, then of
// row k of B, whatever the number of workers.
func spgemm(A, B *sparse.CSR, workers int) *sparse.CSR {
	if A.M != B.N {
		panic("linsolve: spgemm: inner dimensions differ")
	}
	n, p := A.N, B.M
	work := 0
	for _, k := range A.Col {
		work += B.RowPtr[k+1] - B.RowPtr[k]
	}
	C := &sparse.CSR{N: n, M: p, RowPtr: make([]int, n+1)}
	cnt := C.RowPtr[1:]
	forRows(workers, n, work, func(lo, hi int) {
		mark := make([]int32, p)
		for j := range mark {
			mark[j] = -1
		}
		for i := lo; i < hi; i++ {
			c := 0
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				k := A.Col[q]
				for r := B.RowPtr[k]; r < B.RowPtr[k+1]; r++ {
					if j := B.Col[r]; mark[j] != int32(i) {
						mark[j] = int32(i)
						c++
					}
				}
			}
			cnt[i] = c
		}
	})
	for i := 0; i < n; i++ {
		C.RowPtr[i+1] += C.RowPtr[i]
	}
	C.Col = make([]int32, C.RowPtr[n])
	C.Val = make([]float64, C.RowPtr[n])
	forRows(workers, n, work, func(lo, hi int) {
		acc := make([]float64, p)
		mark := make([]int32, p)
		for j := range mark {
			mark[j] = -1
		}
		for i := lo; i < hi; i++ {
			cols := C.Col[C.RowPtr[i]:C.RowPtr[i+1]]
			c := 0
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				a := A.Val[q]
				k := A.Col[q]
				for r := B.RowPtr[k]; r < B.RowPtr[k+1]; r++ {
					j := B.Col[r]
					if mark[j] != int32(i) {
						mark[j] = int32(i)
						acc[j] = a * B.Val[r]
						cols[c] = j
						c++
					} else {
						acc[j] += a * B.Val[r]
					}
				}
			}
			sortShort(cols)
			vals := C.Val[C.RowPtr[i]:C.RowPtr[i+1]]
			for q, j := range cols {
				vals[q] = acc[j]
			}
		}
	})
	return C
}

// buildRows builds an n×m CSR matrix whose rows come from row(i, col, val):
// called first with nil slices to count row i's entries (its return
// value), then with slices of that length to fill them. Both passes split
// the rows among the workers; the result does not depend on their number.
func buildRows(n, m, work, workers int, row func(i int, col []int32, val []float64) int) *sparse.CSR {
	C := &sparse.CSR{N: n, M: m, RowPtr: make([]int, n+1)}
	forRows(workers, n, work, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			C.RowPtr[i+1] = row(i, nil, nil)
		}
	})
	for i := 0; i < n; i++ {
		C.RowPtr[i+1] += C.RowPtr[i]
	}
	C.Col = make([]int32, C.RowPtr[n])
	C.Val = make([]float64, C.RowPtr[n])
	forRows(workers, n, work, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			a, b := C.RowPtr[i], C.RowPtr[i+1]
			row(i, C.Col[a:b], C.Val[a:b])
		}
	})
	return C
}

// csrBytes is the memory of a CSR matrix: 8 bytes per row pointer and 12
// per stored entry.
func csrBytes(A *sparse.CSR) int64 {
	if A == nil {
		return 0
	}
	return int64(8*len(A.RowPtr) + 4*len(A.Col) + 8*len(A.Val))
}

// sortShort sorts a slice of columns: by insertion when short (the rows of
// finite-element products hold a few dozen entries, where a library sort's
// overheads dominate), else by slices.Sort.
func sortShort(c []int32) {
	if len(c) > 48 {
		slices.Sort(c)
		return
	}
	for i := 1; i < len(c); i++ {
		v := c[i]
		j := i
		for j > 0 && c[j-1] > v {
			c[j] = c[j-1]
			j--
		}
		c[j] = v
	}
}
