package sparse

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// CSR is an N×M matrix in compressed sparse row form. Columns are sorted
// and unique within each row. The zero value is an empty 0×0 matrix.
type CSR struct {
	N, M   int
	RowPtr []int     // length N+1, RowPtr[0] = 0, RowPtr[N] = NNZ
	Col    []int32   // column of each stored entry, sorted within a row
	Val    []float64 // value of each stored entry
}

// NewCSR returns an N×M matrix with the given pattern and zero values. It
// checks the pattern (see Check) and panics if it is malformed.
func NewCSR(n, m int, rowPtr []int, col []int32) *CSR {
	A := &CSR{N: n, M: m, RowPtr: rowPtr, Col: col, Val: make([]float64, len(col))}
	if err := A.Check(); err != nil {
		panic(err.Error())
	}
	return A
}

// Check verifies the structural invariants of A: lengths, monotone row
// pointers, columns in range and strictly increasing within each row. It
// returns a descriptive error (prefixed "sparse: ") or nil.
func (A *CSR) Check() error {
	if A.N < 0 || A.M < 0 {
		return fmt.Errorf("sparse: negative dimensions %d×%d", A.N, A.M)
	}
	if len(A.RowPtr) != A.N+1 {
		return fmt.Errorf("sparse: len(RowPtr) = %d, want N+1 = %d", len(A.RowPtr), A.N+1)
	}
	if A.RowPtr[0] != 0 {
		return fmt.Errorf("sparse: RowPtr[0] = %d, want 0", A.RowPtr[0])
	}
	nnz := A.RowPtr[A.N]
	if len(A.Col) != nnz || len(A.Val) != nnz {
		return fmt.Errorf("sparse: len(Col) = %d, len(Val) = %d, want RowPtr[N] = %d", len(A.Col), len(A.Val), nnz)
	}
	for i := 0; i < A.N; i++ {
		lo, hi := A.RowPtr[i], A.RowPtr[i+1]
		if hi < lo {
			return fmt.Errorf("sparse: RowPtr decreases at row %d", i)
		}
		for k := lo; k < hi; k++ {
			c := A.Col[k]
			if c < 0 || int(c) >= A.M {
				return fmt.Errorf("sparse: column %d out of range [0,%d) in row %d", c, A.M, i)
			}
			if k > lo && A.Col[k-1] >= c {
				return fmt.Errorf("sparse: columns not strictly increasing in row %d", i)
			}
		}
	}
	return nil
}

// NNZ returns the number of stored entries.
func (A *CSR) NNZ() int { return A.RowPtr[A.N] }

// Dim returns the number of rows. Together with Apply it lets a square CSR
// matrix serve as a linsolve.Operator.
func (A *CSR) Dim() int { return A.N }

// Apply computes dst = A x (same as MulVec).
func (A *CSR) Apply(dst, x []float64) { A.MulVec(dst, x) }

// Clone returns a deep copy of A.
func (A *CSR) Clone() *CSR {
	return &CSR{
		N: A.N, M: A.M,
		RowPtr: append([]int(nil), A.RowPtr...),
		Col:    append([]int32(nil), A.Col...),
		Val:    append([]float64(nil), A.Val...),
	}
}

// Zero sets every stored value to zero, keeping the pattern.
func (A *CSR) Zero() {
	for k := range A.Val {
		A.Val[k] = 0
	}
}

func (A *CSR) checkMulVec(dst, x []float64) {
	if len(x) != A.M || len(dst) != A.N {
		panic(fmt.Sprintf("sparse: MulVec dimension mismatch: A is %d×%d, len(x) = %d, len(dst) = %d", A.N, A.M, len(x), len(dst)))
	}
}

// mulRows computes dst[i] = sum_k Val[k] x[Col[k]] for rows lo..hi-1,
// summing each row left to right.
func (A *CSR) mulRows(dst, x []float64, lo, hi int) {
	rp, col, val := A.RowPtr, A.Col, A.Val
	for i := lo; i < hi; i++ {
		s := 0.0
		for k := rp[i]; k < rp[i+1]; k++ {
			s += val[k] * x[col[k]]
		}
		dst[i] = s
	}
}

// MulVec computes dst = A x. dst must not alias x.
func (A *CSR) MulVec(dst, x []float64) {
	A.checkMulVec(dst, x)
	A.mulRows(dst, x, 0, A.N)
}

// parallelMinNNZ is the size below which MulVecParallel runs serially:
// starting goroutines costs more than the product (common practice, no
// source for the value).
var parallelMinNNZ = 1 << 14

// MulVecParallel computes dst = A x with the rows split into contiguous
// blocks of roughly equal numbers of nonzeros, one block per worker. Each
// row is summed in the same order as in MulVec, so the result is bitwise
// identical to MulVec for any worker count. workers <= 1, or fewer than
// 16384 nonzeros, runs serially. Each call starts its goroutines anew
// (a few small allocations per call).
func (A *CSR) MulVecParallel(dst, x []float64, workers int) {
	A.checkMulVec(dst, x)
	if workers <= 1 || A.N < 2*workers || A.NNZ() < parallelMinNNZ {
		A.mulRows(dst, x, 0, A.N)
		return
	}
	nnz := A.NNZ()
	var wg sync.WaitGroup
	lo := 0
	for w := 0; w < workers; w++ {
		hi := A.N
		if w < workers-1 {
			// First row whose start reaches the (w+1)-th share of nonzeros.
			target := nnz / workers * (w + 1)
			hi = sort.Search(A.N, func(i int) bool { return A.RowPtr[i] >= target })
			if hi < lo {
				hi = lo
			}
		}
		if hi > lo {
			wg.Add(1)
			go func(lo, hi int) {
				defer wg.Done()
				A.mulRows(dst, x, lo, hi)
			}(lo, hi)
		}
		lo = hi
	}
	wg.Wait()
}

// MulVecTrans computes dst = Aᵀ x.
func (A *CSR) MulVecTrans(dst, x []float64) {
	if len(x) != A.N || len(dst) != A.M {
		panic(fmt.Sprintf("sparse: MulVecTrans dimension mismatch: A is %d×%d, len(x) = %d, len(dst) = %d", A.N, A.M, len(x), len(dst)))
	}
	for j := range dst {
		dst[j] = 0
	}
	for i := 0; i < A.N; i++ {
		xi := x[i]
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			dst[A.Col[k]] += A.Val[k] * xi
		}
	}
}

// Diagonal writes the diagonal of A into dst (length min(N, M)); entries
// missing from the pattern are zero. If dst is nil a new slice is
// allocated. It returns dst.
func (A *CSR) Diagonal(dst []float64) []float64 {
	n := min(A.N, A.M)
	if dst == nil {
		dst = make([]float64, n)
	}
	if len(dst) != n {
		panic(fmt.Sprintf("sparse: Diagonal: len(dst) = %d, want %d", len(dst), n))
	}
	for i := 0; i < n; i++ {
		if k := A.Index(i, i); k >= 0 {
			dst[i] = A.Val[k]
		} else {
			dst[i] = 0
		}
	}
	return dst
}

// Index returns the position in Col/Val of entry (i, j), or -1 if (i, j)
// is not in the pattern. It uses binary search within row i.
func (A *CSR) Index(i, j int) int {
	if i < 0 || i >= A.N || j < 0 || j >= A.M {
		panic(fmt.Sprintf("sparse: index (%d,%d) out of range for %d×%d matrix", i, j, A.N, A.M))
	}
	lo, hi := A.RowPtr[i], A.RowPtr[i+1]
	c := int32(j)
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		if A.Col[mid] < c {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	if lo < A.RowPtr[i+1] && A.Col[lo] == c {
		return lo
	}
	return -1
}

// At returns A(i, j), zero if the entry is not stored.
func (A *CSR) At(i, j int) float64 {
	if k := A.Index(i, j); k >= 0 {
		return A.Val[k]
	}
	return 0
}

// Add adds v to A(i, j), which must be in the pattern (it panics
// otherwise). It searches; assembly loops should use ScatterIndex and
// AddScatter instead.
func (A *CSR) Add(i, j int, v float64) {
	k := A.Index(i, j)
	if k < 0 {
		panic(fmt.Sprintf("sparse: Add: entry (%d,%d) not in the pattern", i, j))
	}
	A.Val[k] += v
}

// Transpose returns Aᵀ as a new CSR matrix (columns sorted, by
// construction of the counting sort).
func (A *CSR) Transpose() *CSR {
	T := &CSR{N: A.M, M: A.N, RowPtr: make([]int, A.M+1), Col: make([]int32, A.NNZ()), Val: make([]float64, A.NNZ())}
	for _, c := range A.Col {
		T.RowPtr[c+1]++
	}
	for j := 0; j < A.M; j++ {
		T.RowPtr[j+1] += T.RowPtr[j]
	}
	next := append([]int(nil), T.RowPtr[:A.M]...)
	for i := 0; i < A.N; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			c := A.Col[k]
			p := next[c]
			next[c]++
			T.Col[p] = int32(i)
			T.Val[p] = A.Val[k]
		}
	}
	return T
}

// ToDense returns A as a gonum dense matrix. Meant for tests and small
// diagnostics; it allocates N·M floats.
func (A *CSR) ToDense() *mat.Dense {
	if A.N == 0 || A.M == 0 {
		panic("sparse: ToDense of an empty matrix")
	}
	D := mat.NewDense(A.N, A.M, nil)
	for i := 0; i < A.N; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			D.Set(i, int(A.Col[k]), A.Val[k])
		}
	}
	return D
}

// FromDense returns the CSR form of D keeping the entries with
// |d_ij| > dropTol (dropTol < 0 keeps every entry, zeros included).
func FromDense(D mat.Matrix, dropTol float64) *CSR {
	n, m := D.Dims()
	A := &CSR{N: n, M: m, RowPtr: make([]int, n+1)}
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			v := D.At(i, j)
			if dropTol < 0 || math.Abs(v) > dropTol {
				A.Col = append(A.Col, int32(j))
				A.Val = append(A.Val, v)
			}
		}
		A.RowPtr[i+1] = len(A.Col)
	}
	return A
}

// IsSymmetric reports whether A is square and |a_ij − a_ji| ≤ tol·max|a|
// for every stored entry, where max|a| is the largest stored magnitude; an
// entry stored on one side only is compared against zero. tol = 0 asks for
// exact symmetry of the values.
func (A *CSR) IsSymmetric(tol float64) bool {
	if A.N != A.M {
		return false
	}
	amax := 0.0
	for _, v := range A.Val {
		amax = math.Max(amax, math.Abs(v))
	}
	lim := tol * amax
	for i := 0; i < A.N; i++ {
		for k := A.RowPtr[i]; k < A.RowPtr[i+1]; k++ {
			j := int(A.Col[k])
			if j == i {
				continue
			}
			if !(math.Abs(A.Val[k]-A.At(j, i)) <= lim) {
				return false
			}
		}
	}
	return true
}
