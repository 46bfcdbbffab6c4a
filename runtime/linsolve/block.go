package linsolve

import (
	"fmt"
	"time"

	"github.com/formwright/formwright/runtime/sparse"
)

// SchurKind selects the Schur-complement approximation of the block
// preconditioner.
type SchurKind int

const (
	// SchurDiagonal approximates S = A_pp − A_pu A_uu⁻¹ A_up by the
	// diagonal of A_pp − A_pu D_uu⁻¹ A_up, D_uu = diag(A_uu). For
	// equal-order stabilised Stokes on a quasi-uniform mesh both terms
	// scale like hᵈ/ν per pressure node (the stabilisation τ_p ∫∇p·∇q
	// with τ_p ~ h²/ν, and the divergence couplings ~ h^(d−1) over a
	// viscous diagonal ~ ν h^(d−2)), as does the lumped pressure mass
	// matrix over ν, to which S is spectrally equivalent (Elman,
	// Silvester & Wathen, Finite Elements and Fast Iterative Solvers, OUP
	// 2005, §6.2 [memory]): a purely algebraic stand-in for the scaled
	// pressure mass matrix.
	SchurDiagonal SchurKind = iota
	// SchurAMG applies one AMG V-cycle to the sparse matrix
	// A_pp − A_pu D_uu⁻¹ A_up (negated if its diagonal is negative).
	SchurAMG
)

// BlockOptions controls NewBlockPreconditioner.
type BlockOptions struct {
	// AMG of the primary (velocity) block. PreSweeps 0 means 2 here:
	// V(2,2) cycles (with the default SmoothSymGS) took 45, 54, 60 GMRES
	// iterations on the stabilised Stokes matrix of the tests at 16²,
	// 32², 64² and 74 at 128², against 86 at 128² for V(1,1), and 45, 63,
	// 71 for V(2,2) with SmoothJacobi (measured,
	// TestBlockStokesIterations).
	AMG     AMGOptions
	Schur   SchurKind
	OnPhase func(PhaseReport)
}

// Block is the block upper-triangular preconditioner of a 2×2
// saddle-point system with primary unknowns u (velocities) and constraint
// unknowns p (pressures),
//
//	M = [ Â   A_up ]    M⁻¹ r:  z_p = Ŝ⁻¹ r_p,  z_u = Â⁻¹ (r_u − A_up z_p),
//	    [ 0   Ŝ    ]
//
// Â ≈ A_uu (an AMG V-cycle) and Ŝ ≈ S = A_pp − A_pu A_uu⁻¹ A_up. With the
// exact blocks, A M⁻¹ has the minimal polynomial (λ−1)², so right-
// preconditioned GMRES converges in two iterations (Murphy, Golub &
// Wathen 2000, SIAM J. Sci. Comput. 21, and Ipsen 2001, SIAM J. Sci.
// Comput. 23, for the triangular form [memory]); with spectrally
// equivalent approximations the iteration count stays bounded as the mesh
// is refined (Elman, Silvester & Wathen 2005, ch. 6 [memory]). Use it
// with GMRES: M is not symmetric.
type Block struct {
	u, p       []int32 // dofs of the two blocks, increasing
	Aup        *sparse.CSR
	Muu, Mss   Preconditioner
	ru, rp     []float64
	zu, zp, tu []float64
	bytes      int64
}

// NewBlockPreconditioner builds the block preconditioner of A for the
// fields of layout: the fields marked Constraint form the p block, the
// others the u block. It panics if there is no constraint field or no
// primary field (programmer misuse) and returns the typed errors of
// NewAMG and *SingularError for a zero Schur diagonal.
func NewBlockPreconditioner(A *sparse.CSR, layout *Layout, opts BlockOptions) (*Block, error) {
	checkSquare("amg-block", A)
	if layout == nil {
		panic("linsolve: NewBlockPreconditioner needs a Layout with a Constraint field")
	}
	if err := layout.check(A.N); err != nil {
		panic(err.Error())
	}
	start := time.Now()
	inP := make([]bool, A.N)
	var uLayout Layout
	var u, p []int32
	for _, f := range layout.Fields {
		if f.Constraint {
			for i := f.Offset; i < f.Offset+f.Nodes*f.Components; i++ {
				inP[i] = true
			}
		}
	}
	for i := 0; i < A.N; i++ {
		if inP[i] {
			p = append(p, int32(i))
		} else {
			u = append(u, int32(i))
		}
	}
	if len(u) == 0 || len(p) == 0 {
		panic("linsolve: NewBlockPreconditioner: the layout needs both primary and Constraint fields")
	}
	pos := make([]int32, A.N) // position of each dof within its block
	for k, i := range u {
		pos[i] = int32(k)
	}
	for k, i := range p {
		pos[i] = int32(k)
	}
	for _, f := range layout.Fields {
		if !f.Constraint {
			g := f
			g.Offset = int(pos[f.Offset])
			uLayout.Fields = append(uLayout.Fields, g)
		}
	}
	Auu := subMatrix(A, u, inP, false, pos)
	Aup := subMatrix(A, u, inP, true, pos)
	Apu := subMatrix(A, p, inP, false, pos)
	App := subMatrix(A, p, inP, true, pos)
	amgOpts := opts.AMG
	if amgOpts.PreSweeps == 0 {
		amgOpts.PreSweeps = 2
	}
	Muu, err := NewAMG(Auu, &uLayout, amgOpts)
	if err != nil {
		return nil, err
	}
	dinv := make([]float64, Auu.N)
	for i := range dinv {
		dinv[i] = 1 / Auu.At(i, i)
	}
	b := &Block{u: u, p: p, Aup: Aup, Muu: Muu}
	b.bytes = Muu.Bytes() + csrBytes(Auu) + csrBytes(Aup)
	switch opts.Schur {
	case SchurDiagonal:
		// diag(A_pp) − Σ_k A_pu[i,k] A_up[k,i] / a_kk, with A_upᵀ by rows.
		AupT := Aup.Transpose()
		d := App.Diagonal(nil)
		for i := range d {
			s := 0.0
			q := AupT.RowPtr[i]
			for k := Apu.RowPtr[i]; k < Apu.RowPtr[i+1]; k++ {
				c := Apu.Col[k]
				for q < AupT.RowPtr[i+1] && AupT.Col[q] < c {
					q++
				}
				if q < AupT.RowPtr[i+1] && AupT.Col[q] == c {
					s += Apu.Val[k] * AupT.Val[q] * dinv[c]
				}
			}
			d[i] -= s
			if d[i] == 0 || !finite(d[i]) {
				return nil, &SingularError{Solver: "amg-block", Row: int(p[i]), What: fmt.Sprintf("Schur-complement diagonal %v", d[i])}
			}
			d[i] = 1 / d[i]
		}
		b.Mss = &Jacobi{inv: d}
		b.bytes += int64(8 * len(d))
	case SchurAMG:
		// S = A_pp − A_pu D⁻¹ A_up.
		DAup := Aup.Clone()
		for k := 0; k < DAup.N; k++ {
			for q := DAup.RowPtr[k]; q < DAup.RowPtr[k+1]; q++ {
				DAup.Val[q] *= dinv[k]
			}
		}
		S := addScaled(App, spgemm(Apu, DAup, max(1, opts.AMG.Workers)), -1)
		neg := 0
		d := S.Diagonal(nil)
		for _, v := range d {
			if v < 0 {
				neg++
			}
		}
		sign := 1.0
		if neg > len(d)/2 {
			sign = -1
			for q := range S.Val {
				S.Val[q] = -S.Val[q]
			}
		}
		Ms, err := NewAMG(S, nil, opts.AMG)
		if err != nil {
			return nil, err
		}
		b.Mss = &signed{Ms, sign}
		b.bytes += Ms.Bytes() + csrBytes(S)
	default:
		panic(fmt.Sprintf("linsolve: unknown SchurKind %d", int(opts.Schur)))
	}
	b.ru, b.zu, b.tu = make([]float64, len(u)), make([]float64, len(u)), make([]float64, len(u))
	b.rp, b.zp = make([]float64, len(p)), make([]float64, len(p))
	b.bytes += int64(8 * (3*len(u) + 2*len(p) + len(u) + len(p)))
	if opts.OnPhase != nil {
		opts.OnPhase(PhaseReport{Phase: "block-setup", Step: 1, Steps: 1, Detail: fmt.Sprintf("%d primary and %d constraint unknowns", len(u), len(p)), Elapsed: time.Since(start)})
	}
	return b, nil
}

// newBlock assembles a Block from given inner solvers (for tests).
func newBlock(A *sparse.CSR, u, p []int32, inP []bool, Muu, Mss Preconditioner) *Block {
	pos := make([]int32, A.N)
	for k, i := range u {
		pos[i] = int32(k)
	}
	for k, i := range p {
		pos[i] = int32(k)
	}
	return &Block{u: u, p: p, Aup: subMatrix(A, u, inP, true, pos), Muu: Muu, Mss: Mss,
		ru: make([]float64, len(u)), zu: make([]float64, len(u)), tu: make([]float64, len(u)),
		rp: make([]float64, len(p)), zp: make([]float64, len(p))}
}

// Solve applies M⁻¹.
func (b *Block) Solve(dst, r []float64) {
	for k, i := range b.p {
		b.rp[k] = r[i]
	}
	b.Mss.Solve(b.zp, b.rp)
	b.Aup.MulVec(b.tu, b.zp)
	for k, i := range b.u {
		b.ru[k] = r[i] - b.tu[k]
	}
	b.Muu.Solve(b.zu, b.ru)
	for k, i := range b.u {
		dst[i] = b.zu[k]
	}
	for k, i := range b.p {
		dst[i] = b.zp[k]
	}
}

// Bytes is the memory of the preconditioner: the extracted blocks, the AMG
// hierarchy, the Schur approximation and the work vectors.
func (b *Block) Bytes() int64 { return b.bytes }

// signed applies s·M⁻¹.
type signed struct {
	M Preconditioner
	s float64
}

func (p *signed) Solve(dst, r []float64) {
	p.M.Solve(dst, r)
	if p.s != 1 {
		for i := range dst {
			dst[i] *= p.s
		}
	}
}

// subMatrix extracts the rows rows of A and the columns in the p block
// (pcols) or in the u block (!pcols), renumbered by pos.
func subMatrix(A *sparse.CSR, rows []int32, inP []bool, pcols bool, pos []int32) *sparse.CSR {
	ncols := 0
	for _, b := range inP {
		if b == pcols {
			ncols++
		}
	}
	S := &sparse.CSR{N: len(rows), M: ncols, RowPtr: make([]int, len(rows)+1)}
	for r, i := range rows {
		for q := A.RowPtr[i]; q < A.RowPtr[i+1]; q++ {
			if j := A.Col[q]; inP[j] == pcols {
				S.Col = append(S.Col, pos[j])
				S.Val = append(S.Val, A.Val[q])
			}
		}
		S.RowPtr[r+1] = len(S.Col)
	}
	return S
}

// addScaled returns A + s·B for matrices of the same shape.
func addScaled(A, B *sparse.CSR, s float64) *sparse.CSR {
	C := &sparse.CSR{N: A.N, M: A.M, RowPtr: make([]int, A.N+1)}
	for i := 0; i < A.N; i++ {
		p, q := A.RowPtr[i], B.RowPtr[i]
		for p < A.RowPtr[i+1] || q < B.RowPtr[i+1] {
			switch {
			case q >= B.RowPtr[i+1] || p < A.RowPtr[i+1] && A.Col[p] < B.Col[q]:
				C.Col, C.Val = append(C.Col, A.Col[p]), append(C.Val, A.Val[p])
				p++
			case p >= A.RowPtr[i+1] || B.Col[q] < A.Col[p]:
				C.Col, C.Val = append(C.Col, B.Col[q]), append(C.Val, s*B.Val[q])
				q++
			default:
				C.Col, C.Val = append(C.Col, A.Col[p]), append(C.Val, A.Val[p]+s*B.Val[q])
				p++
				q++
			}
		}
		C.RowPtr[i+1] = len(C.Col)
	}
	return C
}
