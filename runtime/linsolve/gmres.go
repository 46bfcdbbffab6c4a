package linsolve

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"
)

// GMRES solves A x = b by restarted GMRES(m) (Saad & Schultz 1986, SIAM J.
// Sci. Stat. Comput. 7, 856–869) with right preconditioning: it minimises
// ‖b − A M⁻¹ u‖ over the Krylov space of A M⁻¹ and sets x = x₀ + M⁻¹u, so
// the residual it monitors is the true (unpreconditioned) residual. The
// Arnoldi basis is orthogonalised by modified Gram–Schmidt and the
// Hessenberg least-squares problem is reduced by Givens rotations (Saad
// 2003, §6.5 and §9.3.2). M nil means Identity. x holds the initial
// guess on entry and the solution on return.
//
// Memory: (m+1)·n floats for the basis plus O(m²). Without restart (m ≥ n)
// GMRES reaches the exact solution in at most n steps in exact arithmetic.
// At each restart the true residual is recomputed.
//
// Errors: *BreakdownError if the Hessenberg matrix is singular,
// *NonFiniteError on NaN/Inf, *NotConvergedError after MaxIter inner steps.
func GMRES(A Operator, b, x []float64, M Preconditioner, opts Options) (Result, error) {
	const name = "gmres"
	mon := newMonitor(name, A, b, x, opts)
	if mon.bnorm == 0 {
		return zeroRHS(name, x), nil
	}
	if M == nil {
		M = Identity{}
	}
	n := A.Dim()
	m := min(opts.restart(), n)
	V := make([][]float64, m+1)
	for i := range V {
		V[i] = make([]float64, n)
	}
	H := make([]float64, (m+1)*m) // H[i*m+j]
	cs := make([]float64, m)
	sn := make([]float64, m)
	g := make([]float64, m+1)
	y := make([]float64, m)
	r := make([]float64, n)
	z := make([]float64, n)
	w := make([]float64, n)

	total := 0
	for {
		beta := residual(A, b, x, r)
		if !finite(beta) {
			return Result{}, &NonFiniteError{Solver: name, Iter: total, What: "residual norm"}
		}
		if beta <= mon.target {
			return Result{Solver: name, Iterations: total, Residual: mon.rel(beta)}, nil
		}
		if total >= mon.maxIter {
			return Result{Solver: name, Iterations: total, Residual: mon.rel(beta)}, mon.notConverged(total, beta)
		}
		floats.ScaleTo(V[0], 1/beta, r)
		for i := range g {
			g[i] = 0
		}
		g[0] = beta
		k := 0
		for j := 0; j < m && total < mon.maxIter; j++ {
			total++
			M.Solve(z, V[j])
			A.Apply(w, z)
			for i := 0; i <= j; i++ {
				h := floats.Dot(w, V[i])
				H[i*m+j] = h
				floats.AddScaled(w, -h, V[i])
			}
			hn := floats.Norm(w, 2)
			H[(j+1)*m+j] = hn
			if hn != 0 {
				floats.ScaleTo(V[j+1], 1/hn, w)
			}
			// Apply the previous rotations to column j, then zero H[j+1][j].
			for i := 0; i < j; i++ {
				a, c := H[i*m+j], H[(i+1)*m+j]
				H[i*m+j] = cs[i]*a + sn[i]*c
				H[(i+1)*m+j] = -sn[i]*a + cs[i]*c
			}
			a, c := H[j*m+j], H[(j+1)*m+j]
			rho := math.Hypot(a, c)
			if rho == 0 {
				cs[j], sn[j] = 1, 0
			} else {
				cs[j], sn[j] = a/rho, c/rho
			}
			H[j*m+j] = rho
			H[(j+1)*m+j] = 0
			g[j+1] = -sn[j] * g[j]
			g[j] = cs[j] * g[j]
			res := math.Abs(g[j+1])
			if !finite(res) || !finite(rho) {
				return Result{}, &NonFiniteError{Solver: name, Iter: total, What: "Arnoldi vector"}
			}
			mon.report(total, res)
			k = j + 1
			if res <= mon.target || hn == 0 {
				break
			}
		}
		// Back substitution for y, then x += M⁻¹ V y.
		for i := k - 1; i >= 0; i-- {
			s := g[i]
			for l := i + 1; l < k; l++ {
				s -= H[i*m+l] * y[l]
			}
			d := H[i*m+i]
			if d == 0 {
				return Result{}, &BreakdownError{Solver: name, Iter: total, What: fmt.Sprintf("singular Hessenberg matrix (zero diagonal %d)", i)}
			}
			y[i] = s / d
		}
		for i := range w {
			w[i] = 0
		}
		for i := 0; i < k; i++ {
			floats.AddScaled(w, y[i], V[i])
		}
		M.Solve(z, w)
		floats.Add(x, z)
	}
}
