package linsolve

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/sparse"
)

// DefaultPivotTol is the threshold of FactorSparseLU's partial pivoting:
// the diagonal entry is kept as pivot when its magnitude is at least this
// fraction of the largest candidate in its column (common practice, no
// source for the value).
const DefaultPivotTol = 0.1

// SparseLU is a sparse LU factorisation L U = A(p, q) with L unit lower
// triangular, U upper triangular, row order p chosen by threshold partial
// pivoting and column order q given (a fill-reducing ordering).
type SparseLU struct {
	n    int
	q    []int   // column order: column k of the factor is column q[k] of A
	prow []int   // row order: row k of the factor is row prow[k] of A
	lp   []int   // L by columns, strictly lower part, rows in factor order
	li   []int32 //
	lx   []float64
	up   []int   // U by columns, rows in factor order, diagonal stored last
	ui   []int32 //
	ux   []float64
	work []float64
}

// FactorSparseLU computes a sparse LU factorisation of the square matrix A
// by the left-looking algorithm of Gilbert & Peierls (1988, SIAM J. Sci.
// Stat. Comput. 9, 862–874): column k of L and U comes from one sparse
// triangular solve with the columns of L computed so far, whose nonzero
// pattern is found beforehand by a depth-first search, so the work is
// proportional to the floating-point operations plus nnz(A). Columns are
// taken in the order colPerm (perm[new] = old; nil means identity;
// NestedDissection(A) or RCM(A) are the usual choices). Rows are chosen by
// threshold partial pivoting: the entry in the row matching the column's
// symmetric position is the pivot when its magnitude is at least pivotTol
// times the largest candidate (which preserves the fill-reducing effect of
// a symmetric ordering), otherwise the largest candidate is
// (pivotTol = 1 is plain partial pivoting; pivotTol ≤ 0 means
// DefaultPivotTol).
//
// Memory is 12 bytes per nonzero of L and U plus O(n). On 2D finite-element
// matrices ordered by NestedDissection, fill grows like n log n and work
// like n^1.5 (measured on one core of the development machine, P1
// Laplacian: 4·10⁴ unknowns in 0.6 s with fill nnz(L+U) ≈ 12 nnz(A), 10⁵
// unknowns in 2.5 s with fill ≈ 14 nnz(A)). No supernodes or BLAS-3
// kernels are used, so 3D problems of that size are slow.
//
// Errors: *SingularError when no nonzero pivot exists in a column,
// *NonFiniteError for NaN/Inf.
func FactorSparseLU(A *sparse.CSR, colPerm []int, pivotTol float64) (*SparseLU, error) {
	return factorSparseLU(A, colPerm, pivotTol, nil)
}

// factorSparseLU is FactorSparseLU calling progress(k, n) after every
// tenth of the n columns (progress may be nil).
func factorSparseLU(A *sparse.CSR, colPerm []int, pivotTol float64, progress func(done, total int)) (*SparseLU, error) {
	const name = "direct"
	checkSquare(name, A)
	n := A.N
	if pivotTol <= 0 {
		pivotTol = DefaultPivotTol
	}
	pivotTol = math.Min(pivotTol, 1)
	qinv := invPerm(n, colPerm)
	if colPerm == nil {
		colPerm = qinv
	}
	for k, v := range A.Val {
		if !finite(v) {
			return nil, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("matrix entry %d is %v", k, v)}
		}
	}
	C := A.Transpose() // rows of C are the columns of A
	f := &SparseLU{n: n, q: colPerm, work: make([]float64, n)}
	est := 4 * A.NNZ()
	f.lp = make([]int, n+1)
	f.up = make([]int, n+1)
	f.li = make([]int32, 0, est)
	f.lx = make([]float64, 0, est)
	f.ui = make([]int32, 0, est)
	f.ux = make([]float64, 0, est)
	pinv := make([]int, n) // original row -> factor step, -1 if not yet pivotal
	for i := range pinv {
		pinv[i] = -1
	}
	x := make([]float64, n)   // dense work, indexed by original row
	mark := make([]int32, n)  // DFS marks: column stamp k+1
	xi := make([]int32, n)    // reach, filled from the top
	stack := make([]int32, n) // DFS stack of rows
	pstack := make([]int, n)  // DFS resume positions

	tick := max(1, n/10)
	for k := 0; k < n; k++ {
		if progress != nil && k > 0 && k%tick == 0 {
			progress(k, n)
		}
		c := colPerm[k]
		stamp := int32(k + 1)
		top := n
		// Reach of column c in the graph of L (Gilbert & Peierls): nodes are
		// original rows; a pivotal row j leads to the rows of L column pinv[j].
		for p := C.RowPtr[c]; p < C.RowPtr[c+1]; p++ {
			i := C.Col[p]
			if mark[i] == stamp {
				continue
			}
			head := 0
			stack[0] = i
			for head >= 0 {
				j := stack[head]
				jc := pinv[j]
				if mark[j] != stamp {
					mark[j] = stamp
					if jc >= 0 {
						pstack[head] = f.lp[jc]
					}
				}
				done := true
				if jc >= 0 {
					end := f.lp[jc+1]
					for q := pstack[head]; q < end; q++ {
						r := f.li[q]
						// f.li holds original rows until the end of factorisation.
						if mark[r] == stamp {
							continue
						}
						pstack[head] = q + 1
						head++
						stack[head] = r
						done = false
						break
					}
				}
				if done {
					head--
					top--
					xi[top] = j
				}
			}
		}
		// Numerical solve L x = A(:, c) over the reach, in topological order.
		for p := C.RowPtr[c]; p < C.RowPtr[c+1]; p++ {
			x[C.Col[p]] = C.Val[p]
		}
		for _, j := range xi[top:] {
			jc := pinv[j]
			if jc < 0 {
				continue
			}
			xj := x[j]
			if xj == 0 {
				continue
			}
			for q := f.lp[jc]; q < f.lp[jc+1]; q++ {
				x[f.li[q]] -= f.lx[q] * xj
			}
		}
		// U part and pivot choice.
		piv, amax := int32(-1), -1.0
		diagOK := false
		for _, j := range xi[top:] {
			if jc := pinv[j]; jc >= 0 {
				f.ui = append(f.ui, int32(jc))
				f.ux = append(f.ux, x[j])
				continue
			}
			a := math.Abs(x[j])
			if !finite(a) {
				return nil, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("factor entry in column %d", k)}
			}
			if a > amax {
				piv, amax = j, a
			}
			if int(j) == c {
				diagOK = true
			}
		}
		if piv < 0 || amax == 0 {
			return nil, &SingularError{Solver: name, Row: k, What: "no nonzero pivot in column"}
		}
		if diagOK && math.Abs(x[c]) >= pivotTol*amax {
			piv = int32(c)
		}
		pivot := x[piv]
		f.ui = append(f.ui, int32(k))
		f.ux = append(f.ux, pivot)
		f.up[k+1] = len(f.ui)
		pinv[piv] = k
		for _, j := range xi[top:] {
			if pinv[j] < 0 {
				f.li = append(f.li, j)
				f.lx = append(f.lx, x[j]/pivot)
			}
			x[j] = 0
		}
		f.lp[k+1] = len(f.li)
	}
	// Renumber L's rows into factor order.
	for q, r := range f.li {
		f.li[q] = int32(pinv[r])
	}
	f.prow = make([]int, n)
	for i, k := range pinv {
		f.prow[k] = i
	}
	return f, nil
}

// Bytes is the memory of the factors: 12 bytes per stored entry of L and
// U plus the permutations, pointers and work vector.
func (f *SparseLU) Bytes() int64 {
	return int64(12*(len(f.li)+len(f.ui)) + 8*(len(f.lp)+len(f.up)) + 8*(len(f.q)+len(f.prow)+len(f.work)))
}

// NNZ returns the number of stored entries of L (strictly lower) and U
// (with diagonal).
func (f *SparseLU) NNZ() (l, u int) { return len(f.li), len(f.ui) }

// Solve sets dst = A⁻¹ b. It uses an internal work vector: one goroutine
// at a time. With it *SparseLU is also a Preconditioner.
func (f *SparseLU) Solve(dst, b []float64) {
	n := f.n
	if len(dst) != n || len(b) != n {
		panic(fmt.Sprintf("linsolve: SparseLU.Solve: dimension %d, len(dst) = %d, len(b) = %d", n, len(dst), len(b)))
	}
	y := f.work
	for k := 0; k < n; k++ {
		y[k] = b[f.prow[k]]
	}
	for k := 0; k < n; k++ {
		yk := y[k]
		if yk == 0 {
			continue
		}
		for q := f.lp[k]; q < f.lp[k+1]; q++ {
			y[f.li[q]] -= f.lx[q] * yk
		}
	}
	for k := n - 1; k >= 0; k-- {
		d := f.up[k+1] - 1
		yk := y[k] / f.ux[d]
		y[k] = yk
		if yk == 0 {
			continue
		}
		for q := f.up[k]; q < d; q++ {
			y[f.ui[q]] -= f.ux[q] * yk
		}
	}
	for k := 0; k < n; k++ {
		dst[f.q[k]] = y[k]
	}
}
