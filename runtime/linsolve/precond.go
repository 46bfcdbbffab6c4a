package linsolve

import (
	"fmt"

	"github.com/formwright/formwright/runtime/sparse"
)

// Jacobi is the diagonal preconditioner dst_i = r_i / a_ii.
type Jacobi struct {
	inv []float64
}

// NewJacobi builds the Jacobi preconditioner of the square matrix A. It
// returns *SingularError if a diagonal entry is zero or missing.
func NewJacobi(A *sparse.CSR) (*Jacobi, error) {
	checkSquare("jacobi", A)
	d := A.Diagonal(nil)
	for i, v := range d {
		if v == 0 {
			return nil, &SingularError{Solver: "jacobi", Row: i, What: "zero diagonal entry"}
		}
		d[i] = 1 / v
	}
	return &Jacobi{inv: d}, nil
}

// Solve sets dst = D⁻¹ r.
func (p *Jacobi) Solve(dst, r []float64) {
	for i, v := range p.inv {
		dst[i] = v * r[i]
	}
}

// Bytes is the memory of the preconditioner (8 bytes per row).
func (p *Jacobi) Bytes() int64 { return int64(8 * len(p.inv)) }

// ILU0 is the incomplete LU factorisation with zero fill-in: L (unit lower)
// and U (upper) share the pattern of A, and (LU)_ij = a_ij for every (i, j)
// in the pattern (Saad 2003, §10.3.2, Algorithm 10.4, IKJ variant). For a
// matrix whose exact LU factors create no fill (for instance a tridiagonal
// matrix) ILU(0) equals the exact LU factorisation without pivoting.
type ILU0 struct {
	lu   *sparse.CSR // strictly lower part: L without its unit diagonal; rest: U
	diag []int       // position of the diagonal of each row in lu.Val
}

// NewILU0 computes the ILU(0) factorisation of the square matrix A. Setup
// costs O(Σ_i Σ_{k<i, a_ik≠0} nnz(row k)) and one extra copy of the values.
// It returns *SingularError if a diagonal entry is missing from the
// pattern or a pivot becomes zero (possible for matrices that are not
// M-matrices or diagonally dominant), and *NonFiniteError if a factor
// entry is NaN or Inf.
func NewILU0(A *sparse.CSR) (*ILU0, error) { return NewILU0Shifted(A, 0) }

// NewILU0Shifted is ILU(0) of A + shift·diag(A), the shifted incomplete
// factorisation (Manteuffel 1980, Math. Comp. 34); see Options.ILUShift.
// shift = 0 is plain ILU(0).
func NewILU0Shifted(A *sparse.CSR, shift float64) (*ILU0, error) {
	const name = "ilu0"
	checkSquare(name, A)
	if shift < 0 || !finite(shift) {
		panic(fmt.Sprintf("linsolve: ILU(0) shift %g must be finite and non-negative", shift))
	}
	n := A.N
	lu := A.Clone()
	diag := make([]int, n)
	for i := 0; i < n; i++ {
		diag[i] = lu.Index(i, i)
		if diag[i] < 0 {
			return nil, &SingularError{Solver: name, Row: i, What: "no diagonal entry in the pattern"}
		}
		lu.Val[diag[i]] *= 1 + shift
	}
	iw := make([]int, n)
	for i := range iw {
		iw[i] = -1
	}
	rp, col, val := lu.RowPtr, lu.Col, lu.Val
	for i := 0; i < n; i++ {
		for k := rp[i]; k < rp[i+1]; k++ {
			iw[col[k]] = k
		}
		for k := rp[i]; k < diag[i]; k++ {
			c := int(col[k])
			l := val[k] / val[diag[c]]
			val[k] = l
			if l == 0 {
				continue
			}
			for q := diag[c] + 1; q < rp[c+1]; q++ {
				if p := iw[col[q]]; p >= 0 {
					val[p] -= l * val[q]
				}
			}
		}
		for k := rp[i]; k < rp[i+1]; k++ {
			iw[col[k]] = -1
		}
		d := val[diag[i]]
		if !finite(d) {
			return nil, &NonFiniteError{Solver: name, Iter: 0, What: fmt.Sprintf("pivot of row %d", i)}
		}
		if d == 0 {
			return nil, &SingularError{Solver: name, Row: i, What: "zero pivot"}
		}
	}
	return &ILU0{lu: lu, diag: diag}, nil
}

// Factors returns the factor storage: entries left of the diagonal are L
// (unit diagonal implied), the rest is U. The caller must not modify it.
func (p *ILU0) Factors() *sparse.CSR { return p.lu }

// Bytes is the memory of the factors: a copy of A's values and pattern
// and the diagonal positions.
func (p *ILU0) Bytes() int64 { return csrBytes(p.lu) + int64(8*len(p.diag)) }

// Solve sets dst = (LU)⁻¹ r by a forward and a backward sweep.
func (p *ILU0) Solve(dst, r []float64) {
	rp, col, val := p.lu.RowPtr, p.lu.Col, p.lu.Val
	n := p.lu.N
	for i := 0; i < n; i++ {
		s := r[i]
		for k := rp[i]; k < p.diag[i]; k++ {
			s -= val[k] * dst[col[k]]
		}
		dst[i] = s
	}
	for i := n - 1; i >= 0; i-- {
		s := dst[i]
		for k := p.diag[i] + 1; k < rp[i+1]; k++ {
			s -= val[k] * dst[col[k]]
		}
		dst[i] = s / val[p.diag[i]]
	}
}

func checkSquare(name string, A *sparse.CSR) {
	if A.N != A.M {
		panic(fmt.Sprintf("linsolve: %s: matrix is %d×%d, not square", name, A.N, A.M))
	}
}
