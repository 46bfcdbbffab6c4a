package linsolve

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/sparse"
)

// Thresholds of Recommend. DirectBelow2D comes from the benchmarks of this
// package on the development machine (BenchmarkSolveP1Ratios: at 256² P1
// cells, 66 049 unknowns, the sparse LU took 11–25 times as long as CG
// with AMG, and its time grows like n^1.5 in 2D); DirectBelow3D is not
// measured: it is the 2D bound scaled down for a factorisation whose work
// grows like n² in 3D. That AMG pays on large elliptic blocks and Krylov
// with ILU on strongly advective ones is common practice, no source; the
// advective case was measured in BenchmarkSUPGRatios.
const (
	// DirectBelow2D: fewer unknowns than this, with at most
	// Dense3DRowLength nonzeros per row on average, go to the direct
	// solver.
	DirectBelow2D = 50000
	// DirectBelow3D is the same bound for denser (3D-like) rows.
	DirectBelow3D = 10000
	// Dense3DRowLength separates 2D-like patterns (P1: 7, Q1: 9) from
	// 3D-like ones (P1 tetrahedra: about 15). It is compared with the
	// nonzeros per row and per coupled component (see rowLength), so that
	// a 2D system of three coupled P1 fields (about 21 per row) counts as
	// 2D.
	Dense3DRowLength = 11
	// DirectSaddleBelow2D: a 2D-like saddle-point system (a layout with a
	// Constraint field) with fewer unknowns than this goes to the direct
	// solver. On the P1/P1 SUPG lid-driven cavity at Re = 400 on 128²
	// cells (49 923 unknowns) GMRES(100) with PrecondAMGBlock did not
	// reach 1e-10 in 10 000 iterations in the first Newton step of the
	// continuation (stalled at 6.9e-7), while the sparse LU took 4 s per
	// factorisation and 2 774 bytes per unknown (measured on the
	// development machine; the block preconditioner's diagonal Schur
	// approximation ignores the convection, which is what fails). The
	// bound keeps the factorisation below about 1 GB.
	DirectSaddleBelow2D = 250000
	// AdvectiveSkew: a matrix whose skew part exceeds this fraction of
	// its symmetric part (Frobenius norms of the off-diagonal entries of
	// the diagonally scaled matrix; see symmetryParts) is treated as
	// advection dominated.
	AdvectiveSkew = 0.3
	// AdvectiveAMGAbove: advection-dominated systems with more unknowns
	// than this go to GMRES with plain-aggregation AMG smoothed by shifted
	// ILU(0), fewer to GMRES with shifted ILU(0) alone. On the
	// skew-advection SUPG matrix the two took the same time at 512² (263
	// 169 unknowns; 42 and 71 iterations) and the AMG 0.33–0.39 of the
	// time at 1024² (68 and 180 iterations) (measured,
	// BenchmarkSUPGRatios512 and 1024).
	AdvectiveAMGAbove = 300000
)

// Recommendation is the solver Recommend chooses and why.
type Recommendation struct {
	Options Options
	Reason  string
}

// Recommend chooses a solver for A with the given layout (nil: scalar),
// for a "--solver auto" choice:
//
//  1. small systems (fewer than DirectBelow2D unknowns, DirectBelow3D for
//     rows longer than Dense3DRowLength per coupled component; 2D-like
//     saddle-point systems below DirectSaddleBelow2D) → direct;
//  2. a layout with Constraint fields (a saddle-point system) → GMRES with
//     PrecondAMGBlock;
//  3. symmetric (to 1e-12 of the largest entry) with a positive diagonal →
//     CG with PrecondAMG (elliptic-like: mesh-independent iteration
//     counts);
//  4. nonsymmetric with a skew part above AdvectiveSkew of the symmetric
//     part (advection dominated) → GMRES(100) with ILU(0) shifted by 0.1,
//     or, above AdvectiveAMGAbove unknowns, with plain-aggregation AMG
//     smoothed by that shifted ILU(0): its iteration count grows more
//     slowly under refinement, and it overtakes the ILU(0) alone near
//     512² (BenchmarkSUPGRatios);
//  5. otherwise (mildly nonsymmetric, positive diagonal) → GMRES with
//     PrecondAMG; a row with a non-positive diagonal → GMRES with ILU(0).
//
// Options.Layout is set to layout; Workers and tolerances are left zero
// for the caller.
func Recommend(A *sparse.CSR, layout *Layout) Recommendation {
	checkSquare("recommend", A)
	n := A.N
	o := Options{Layout: layout}
	dense := rowLength(A, layout) > Dense3DRowLength
	constraint := ""
	if layout != nil {
		for _, f := range layout.Fields {
			if f.Constraint {
				constraint = f.Name
				break
			}
		}
	}
	limit, what := DirectBelow2D, "unknowns"
	switch {
	case dense:
		limit = DirectBelow3D
	case constraint != "":
		limit, what = DirectSaddleBelow2D, "unknowns of a 2D saddle-point system"
	}
	if n < limit {
		o.Method = MethodDirect
		return Recommendation{o, fmt.Sprintf("%d %s < %d: sparse LU", n, what, limit)}
	}
	if constraint != "" {
		o.Method, o.Precond, o.Restart = MethodGMRES, PrecondAMGBlock, 100
		return Recommendation{o, fmt.Sprintf("saddle point (constraint field %q): GMRES with AMG on the primary block and a diagonal Schur complement", constraint)}
	}
	posDiag := true
	for i := 0; i < n; i++ {
		if !(A.At(i, i) > 0) {
			posDiag = false
			break
		}
	}
	sym, skew := symmetryParts(A)
	switch {
	case skew <= 1e-12*sym && posDiag:
		o.Method, o.Precond = MethodCG, PrecondAMG
		return Recommendation{o, "symmetric with a positive diagonal: CG with AMG"}
	case skew > AdvectiveSkew*sym && posDiag && n > AdvectiveAMGAbove:
		o.Method, o.Precond, o.Restart = MethodGMRES, PrecondAMG, 100
		o.AMG = AMGOptions{Smoother: SmoothILU0, ILUShift: 0.1, Unsmoothed: true}
		return Recommendation{o, fmt.Sprintf("skew part %.2g of the symmetric part (advection dominated), %d unknowns: GMRES with plain-aggregation AMG smoothed by shifted ILU(0)", skew/sym, n)}
	case skew > AdvectiveSkew*sym || !posDiag:
		o.Method, o.Precond, o.ILUShift, o.Restart = MethodGMRES, PrecondILU0, 0.1, 100
		return Recommendation{o, fmt.Sprintf("skew part %.2g of the symmetric part (advection dominated) or a non-positive diagonal: GMRES with shifted ILU(0)", skew/sym)}
	}
	o.Method, o.Precond, o.Restart = MethodGMRES, PrecondAMG, 100
	return Recommendation{o, fmt.Sprintf("mildly nonsymmetric (skew part %.2g of the symmetric part): GMRES with AMG", skew/sym)}
}

// rowLength is the average number of nonzeros per row and per coupled
// component: NNZ/n divided by the number of components the layout has
// (a field of k components counts k). It measures the stencil of one
// scalar field, which tells a 2D from a 3D mesh whatever the number of
// coupled fields.
func rowLength(A *sparse.CSR, layout *Layout) float64 {
	comps := 0
	if layout != nil {
		for _, f := range layout.Fields {
			comps += max(1, f.Components)
		}
	}
	return float64(A.NNZ()) / float64(max(1, A.N)) / float64(max(1, comps))
}

// symmetryParts returns the Frobenius norms of the symmetric and the skew
// part of the off-diagonal entries of the diagonally scaled matrix,
// a_ij/√|a_ii a_jj| (entries with a zero diagonal unscaled). The scaling
// and the omitted diagonal keep eliminated Dirichlet rows (a unit
// diagonal against entries of size h) from hiding the operator's own
// balance of diffusion and advection.
func symmetryParts(A *sparse.CSR) (sym, skew float64) {
	d := make([]float64, A.N)
	for i := range d {
		d[i] = 1
		if v := math.Abs(A.At(i, i)); v > 0 {
			d[i] = 1 / math.Sqrt(v)
		}
	}
	T := A.Transpose()
	for i := 0; i < A.N; i++ {
		p, q := A.RowPtr[i], T.RowPtr[i]
		for p < A.RowPtr[i+1] || q < T.RowPtr[i+1] {
			var a, t float64
			var j int32
			switch {
			case q >= T.RowPtr[i+1] || p < A.RowPtr[i+1] && A.Col[p] < T.Col[q]:
				a, j = A.Val[p], A.Col[p]
				p++
			case p >= A.RowPtr[i+1] || T.Col[q] < A.Col[p]:
				t, j = T.Val[q], T.Col[q]
				q++
			default:
				a, t, j = A.Val[p], T.Val[q], A.Col[p]
				p++
				q++
			}
			if int(j) == i {
				continue
			}
			s := d[i] * d[j]
			sym += (a + t) * (a + t) * s * s / 4
			skew += (a - t) * (a - t) * s * s / 4
		}
	}
	return math.Sqrt(sym), math.Sqrt(skew)
}
