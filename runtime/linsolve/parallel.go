package linsolve

import (
	"slices"
	"sync"
	"sync/atomic"

	"github.com/formwright/formwright/runtime/sparse"
)

// parallelMinWork is the amount of work (nonzeros touched) below which the
// row-parallel loops run on the calling goroutine: starting goroutines
// costs more than the loop (common practice, no source for the value).
const parallelMinWork = 1 << 15

// forRows runs fn over the rows [0, n) of a loop touching about work
// nonzeros, split into contiguous chunks that the workers take from a
// shared counter (4 chunks per worker: a worker slowed by another job on
// the machine takes fewer). Each row is computed by the same code
// whatever the split, so a loop whose rows are independent gives bitwise
// the same result for every worker count.
func forRows(workers, n, work int, fn func(lo, hi int)) {
	if workers <= 1 || n < 2*workers || work < parallelMinWork {
		fn(0, n)
		return
	}
	chunks := min(n, 4*workers)
	var next atomic.Int64
	each(workers, func(int) {
		for {
			c := int(next.Add(1) - 1)
			if c >= chunks {
				return
			}
			fn(n*c/chunks, n*(c+1)/chunks)
		}
	})
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
// work row with a marker array, then its columns are sorted. Rows are
// split among the workers (buildRanges). Each entry of C sums its products
// in the order of the columns of row i of A, then of row k of B, whatever
// the number of workers.
func spgemm(A, B *sparse.CSR, workers int) *sparse.CSR {
	if A.M != B.N {
		panic("linsolve: spgemm: inner dimensions differ")
	}
	n, p := A.N, B.M
	work := 0
	for _, k := range A.Col {
		work += B.RowPtr[k+1] - B.RowPtr[k]
	}
	return buildRanges(n, p, work, workers, func(lo, hi int, cnt []int) ([]int32, []float64) {
		// Capacity: the rows' share of the products, an upper bound.
		est := 0
		for _, k := range A.Col[A.RowPtr[lo]:A.RowPtr[hi]] {
			est += B.RowPtr[k+1] - B.RowPtr[k]
		}
		col := make([]int32, 0, est/2+16)
		val := make([]float64, 0, est/2+16)
		acc := make([]float64, p)
		mark := make([]int32, p)
		for j := range mark {
			mark[j] = -1
		}
		for i := lo; i < hi; i++ {
			start := len(col)
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				a := A.Val[q]
				k := A.Col[q]
				for r := B.RowPtr[k]; r < B.RowPtr[k+1]; r++ {
					j := B.Col[r]
					if mark[j] != int32(i) {
						mark[j] = int32(i)
						acc[j] = a * B.Val[r]
						col = append(col, j)
					} else {
						acc[j] += a * B.Val[r]
					}
				}
			}
			cols := col[start:]
			sortShort(cols)
			for _, j := range cols {
				val = append(val, acc[j])
			}
			cnt[i-lo] = len(cols)
		}
		return col, val
	})
}

// buildRanges builds an n×m CSR matrix in parallel: the rows are split
// into contiguous ranges (4 per worker), fill(lo, hi, cnt) returns the
// entries of rows lo..hi−1 in order and their counts per row, and the
// ranges are then copied into place, in parallel too. The result does not
// depend on the number of workers.
func buildRanges(n, m, work, workers int, fill func(lo, hi int, cnt []int) ([]int32, []float64)) *sparse.CSR {
	R := 1
	if workers > 1 && n >= 8*workers && work >= parallelMinWork {
		R = 4 * workers
	}
	cols := make([][]int32, R)
	vals := make([][]float64, R)
	C := &sparse.CSR{N: n, M: m, RowPtr: make([]int, n+1)}
	cnt := C.RowPtr[1:]
	forRows(min(workers, R), R, parallelMinWork, func(lo, hi int) {
		for r := lo; r < hi; r++ {
			r0, r1 := n*r/R, n*(r+1)/R
			cols[r], vals[r] = fill(r0, r1, cnt[r0:r1])
		}
	})
	for i := 0; i < n; i++ {
		C.RowPtr[i+1] += C.RowPtr[i]
	}
	C.Col = make([]int32, C.RowPtr[n])
	C.Val = make([]float64, C.RowPtr[n])
	forRows(min(workers, R), R, parallelMinWork, func(lo, hi int) {
		for r := lo; r < hi; r++ {
			at := C.RowPtr[n*r/R]
			copy(C.Col[at:], cols[r])
			copy(C.Val[at:], vals[r])
		}
	})
	return C
}

// each runs fn(0), …, fn(W−1) on W goroutines (the caller's included).
func each(W int, fn func(w int)) {
	var wg sync.WaitGroup
	for w := 0; w < W-1; w++ {
		wg.Go(func() { fn(w) })
	}
	fn(W - 1)
	wg.Wait()
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
