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
// work row with a marker array, then its columns are sorted. Rows are
// computed in blocks, in parallel; each entry of C sums its products in
// the order of the columns of row i of A, then of row k of B, whatever the
// number of workers.
func spgemm(A, B *sparse.CSR, workers int) *sparse.CSR {
	if A.M != B.N {
		panic("linsolve: spgemm: inner dimensions differ")
	}
	n, p := A.N, B.M
	// Estimate the work to decide on parallelism: Σ_i Σ_k nnz(B row k).
	work := 0
	for _, k := range A.Col {
		work += B.RowPtr[k+1] - B.RowPtr[k]
	}
	nb := 1
	if workers > 1 && work >= parallelMinWork && n >= 4*workers {
		nb = 4 * workers
	}
	type block struct {
		cnt []int
		col []int32
		val []float64
	}
	blocks := make([]block, nb)
	run := func(b int) {
		lo, hi := n*b/nb, n*(b+1)/nb
		acc := make([]float64, p)
		mark := make([]int32, p)
		for j := range mark {
			mark[j] = -1
		}
		blk := &blocks[b]
		blk.cnt = make([]int, hi-lo)
		est := 0
		for i := lo; i < hi; i++ {
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				k := A.Col[q]
				est += B.RowPtr[k+1] - B.RowPtr[k]
			}
		}
		blk.col = make([]int32, 0, est)
		blk.val = make([]float64, 0, est)
		for i := lo; i < hi; i++ {
			start := len(blk.col)
			for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
				a := A.Val[q]
				k := A.Col[q]
				for r := B.RowPtr[k]; r < B.RowPtr[k+1]; r++ {
					j := B.Col[r]
					if mark[j] != int32(i) {
						mark[j] = int32(i)
						acc[j] = a * B.Val[r]
						blk.col = append(blk.col, j)
					} else {
						acc[j] += a * B.Val[r]
					}
				}
			}
			cols := blk.col[start:]
			slices.Sort(cols)
			for _, j := range cols {
				blk.val = append(blk.val, acc[j])
			}
			blk.cnt[i-lo] = len(cols)
		}
	}
	if nb == 1 {
		run(0)
	} else {
		var mu sync.Mutex
		next := 0
		var wg sync.WaitGroup
		for w := 0; w < workers; w++ {
			wg.Go(func() {
				for {
					mu.Lock()
					b := next
					next++
					mu.Unlock()
					if b >= nb {
						return
					}
					run(b)
				}
			})
		}
		wg.Wait()
	}
	C := &sparse.CSR{N: n, M: p, RowPtr: make([]int, n+1)}
	total := 0
	for b := range blocks {
		total += len(blocks[b].col)
	}
	C.Col = make([]int32, 0, total)
	C.Val = make([]float64, 0, total)
	i := 0
	for b := range blocks {
		for _, c := range blocks[b].cnt {
			C.RowPtr[i+1] = C.RowPtr[i] + c
			i++
		}
		C.Col = append(C.Col, blocks[b].col...)
		C.Val = append(C.Val, blocks[b].val...)
		blocks[b] = block{}
	}
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
