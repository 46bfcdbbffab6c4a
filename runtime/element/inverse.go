package element

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"github.com/formwright/formwright/runtime/quadrature"
)

// InverseEstimate returns the constant of the inverse estimate
//
//	h² ‖Δv‖²_K ≤ C_inv ‖∇v‖²_K  for all v in the element space,
//
// C_inv = sup h²‖Δv‖²/‖∇v‖², computed on the reference cell of e with h its
// diameter (the largest distance between two vertices, as diam(K)).
// Harari & Hughes (1992, CMAME 97) define and tabulate such constants;
// Franca, Frey & Hughes (1992, CMAME 95) write C_k = 1/C_inv and bound the
// diffusive limit of τ with it, which keeps the VMS and GLS forms coercive
// for any degree [memory for both references].
//
// The supremum is the largest eigenvalue of L v = μ S v with the
// reference stiffness S_ij = ∫∇φ_i·∇φ_j and L_ij = ∫Δφ_i Δφ_j, on the
// complement of the constants (the null space of S, where L vanishes too).
// It is invariant under scaling of the cell, not under distortion: on
// cells far from the reference shape the true constant differs. Linear
// simplices and Q1 cells have Δv = 0 on the reference cell and give 0.
func InverseEstimate(e *Element) (float64, error) {
	c, n, d := e.Cell, e.NumNodes(), e.Dim()
	rule := quadrature.For(c, 2*e.Degree)
	S := mat.NewSymDense(n, nil)
	L := mat.NewSymDense(n, nil)
	grad := make([]float64, n*d)
	hess := make([]float64, n*d*d)
	lap := make([]float64, n)
	for q := 0; q < rule.NumPoints(); q++ {
		xi, w := rule.Point(q), rule.Weights[q]
		e.EvalGrad(xi, grad)
		e.EvalHess(xi, hess)
		for a := 0; a < n; a++ {
			lap[a] = 0
			for k := 0; k < d; k++ {
				lap[a] += hess[(a*d+k)*d+k]
			}
		}
		for a := 0; a < n; a++ {
			for b := a; b < n; b++ {
				g := 0.0
				for k := 0; k < d; k++ {
					g += grad[a*d+k] * grad[b*d+k]
				}
				S.SetSym(a, b, S.At(a, b)+w*g)
				L.SetSym(a, b, L.At(a, b)+w*lap[a]*lap[b])
			}
		}
	}
	// S = Q Λ Qᵀ; on the range of S the problem is the ordinary symmetric
	// one for Λ_r^{-1/2} Q_rᵀ L Q_r Λ_r^{-1/2}.
	var es mat.EigenSym
	if !es.Factorize(S, true) {
		return 0, fmt.Errorf("element: inverse estimate of %v degree %d: stiffness eigen-decomposition failed", c, e.Degree)
	}
	vals := es.Values(nil)
	var Q mat.Dense
	es.VectorsTo(&Q)
	top := vals[len(vals)-1]
	var keep []int
	for i, v := range vals {
		if v > 1e-10*top {
			keep = append(keep, i)
		}
	}
	if len(keep) != n-1 {
		return 0, fmt.Errorf("element: inverse estimate of %v degree %d: stiffness has %d null vectors, want 1 (the constants)", c, e.Degree, n-len(keep))
	}
	Z := mat.NewDense(n, len(keep), nil)
	for j, i := range keep {
		s := 1 / math.Sqrt(vals[i])
		for r := 0; r < n; r++ {
			Z.Set(r, j, Q.At(r, i)*s)
		}
	}
	var LZ, B mat.Dense
	LZ.Mul(L, Z)
	B.Mul(Z.T(), &LZ)
	m := len(keep)
	Bs := mat.NewSymDense(m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			Bs.SetSym(i, j, (B.At(i, j)+B.At(j, i))/2)
		}
	}
	var eb mat.EigenSym
	if !eb.Factorize(Bs, false) {
		return 0, fmt.Errorf("element: inverse estimate of %v degree %d: eigen-decomposition failed", c, e.Degree)
	}
	bv := eb.Values(nil)
	mu := max(0, bv[len(bv)-1])
	if mu < 1e-12 {
		mu = 0 // Δv = 0 on the reference cell, up to round-off
	}
	h := Diameter(c, c.Vertices())
	return h * h * mu, nil
}
