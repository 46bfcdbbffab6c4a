package bench

import (
	"math"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/quadrature"
)

// Hand-written kernels of the SUPG form of the adr model (stdlib/models/
// adr.fw): for a = (1, 1/2), κ = 1/100, σ = 0, f = 1 and Codina's
// τ = 1/(4κ/h² + 2|a|/h) with h the cell diameter (Brooks & Hughes 1982,
// CMAME 32, for the form; Codina 1998, CMAME 156, for τ),
//
//	A_ij = ∫ (φ_i + τ a·∇φ_i)(a·∇φ_j − κΔφ_j) + κ ∇φ_i·∇φ_j
//	b_i  = ∫ f (φ_i + τ a·∇φ_i).
//
// They are written as a careful engineer would write them by hand, as the
// bar for the generated kernels: closed forms on P1 triangles, tabulated
// reference data and the residual–test-function factorisation per point
// on Q2 quadrilaterals.

const (
	adrAx, adrAy = 1.0, 0.5
	adrKappa     = 0.01
)

var adrSpeed = math.Sqrt(adrAx*adrAx + adrAy*adrAy)

func codinaTau(h float64) float64 {
	return 1 / (4*adrKappa/(h*h) + 2*adrSpeed/h)
}

func fillNaN(A, b []float64) {
	for i := range A {
		A[i] = math.NaN()
	}
	for i := range b {
		b[i] = math.NaN()
	}
}

// handP1 is the P1-triangle kernel: gradients are constant, Δφ = 0, and
// ∫ φ_i = |T|/3 (exact, as is the one-point rule the form needs).
type handP1 struct{}

var handP1Layout = kernel.Layout{
	Cell: cell.Triangle, Geometry: element.MustLagrange(cell.Triangle, 1),
	Fields: []kernel.FieldLayout{{Element: element.MustLagrange(cell.Triangle, 1), Components: 1}},
}

func (handP1) Layout() kernel.Layout { return handP1Layout }

func (handP1) Cell(in *kernel.CellInput, A, b []float64) {
	A = A[:9:9]
	b = b[:3:3]
	x := in.Coords[:6:6]
	x0, y0, x1, y1, x2, y2 := x[0], x[1], x[2], x[3], x[4], x[5]
	j00, j01, j10, j11 := x1-x0, x2-x0, y1-y0, y2-y0
	det := j00*j11 - j01*j10
	if !(det > 0) {
		fillNaN(A, b)
		return
	}
	r := 1 / det
	g1x, g1y := j11*r, -j01*r
	g2x, g2y := -j10*r, j00*r
	g0x, g0y := -g1x-g2x, -g1y-g2y
	e01 := (x1-x0)*(x1-x0) + (y1-y0)*(y1-y0)
	e02 := (x2-x0)*(x2-x0) + (y2-y0)*(y2-y0)
	e12 := (x2-x1)*(x2-x1) + (y2-y1)*(y2-y1)
	h := math.Sqrt(max(e01, e02, e12))
	tau := codinaTau(h)
	area := 0.5 * det
	a0 := adrAx*g0x + adrAy*g0y
	a1 := adrAx*g1x + adrAy*g1y
	a2 := adrAx*g2x + adrAy*g2y
	// Column factors: area·(a·∇φ_j)/3 and κ·area·∇φ_j; row factor τ a·∇φ_i.
	third := area * (1.0 / 3)
	c0, c1, c2 := third*a0, third*a1, third*a2
	t0, t1, t2 := tau*area*a0, tau*area*a1, tau*area*a2
	k := adrKappa * area
	k0x, k0y, k1x, k1y, k2x, k2y := k*g0x, k*g0y, k*g1x, k*g1y, k*g2x, k*g2y
	A[0] = c0 + k0x*g0x + k0y*g0y + t0*a0
	A[1] = c1 + k1x*g0x + k1y*g0y + t0*a1
	A[2] = c2 + k2x*g0x + k2y*g0y + t0*a2
	A[3] = c0 + k0x*g1x + k0y*g1y + t1*a0
	A[4] = c1 + k1x*g1x + k1y*g1y + t1*a1
	A[5] = c2 + k2x*g1x + k2y*g1y + t1*a2
	A[6] = c0 + k0x*g2x + k0y*g2y + t2*a0
	A[7] = c1 + k1x*g2x + k1y*g2y + t2*a1
	A[8] = c2 + k2x*g2x + k2y*g2y + t2*a2
	b[0] = third + t0
	b[1] = third + t1
	b[2] = third + t2
}

// handQ2 is the Q2-quadrilateral kernel on the 3×3 Gauss rule (the rule
// the interpreted kernel picks for this form), with the Q1 geometry map.
type handQ2 struct{}

const q2n, q2q = 9, 9

var (
	handQ2Layout = kernel.Layout{
		Cell: cell.Quadrilateral, Geometry: element.MustLagrange(cell.Quadrilateral, 1),
		Fields: []kernel.FieldLayout{{Element: element.MustLagrange(cell.Quadrilateral, 2), Components: 1}},
	}
	q2W                 [q2q]float64
	q2Phi               [q2q][q2n]float64
	q2Dx, q2Dy          [q2q][q2n]float64 // ∂φ/∂ξ, ∂φ/∂η
	q2Dxx, q2Dxy, q2Dyy [q2q][q2n]float64
	q1Dx, q1Dy          [q2q][4]float64 // geometry
	q1Dxy               [4]float64      // ∂²N/∂ξ∂η of Q1 (constant)
)

func init() {
	rule := quadrature.TensorGauss(cell.Quadrilateral, 3)
	e := element.MustLagrange(cell.Quadrilateral, 2)
	g := element.MustLagrange(cell.Quadrilateral, 1)
	var v [q2n]float64
	var d [2 * q2n]float64
	var hh [4 * q2n]float64
	var gd [8]float64
	var gh [16]float64
	for q := 0; q < q2q; q++ {
		xi := rule.Point(q)
		q2W[q] = rule.Weights[q]
		e.Eval(xi, v[:])
		e.EvalGrad(xi, d[:])
		e.EvalHess(xi, hh[:])
		for i := 0; i < q2n; i++ {
			q2Phi[q][i] = v[i]
			q2Dx[q][i], q2Dy[q][i] = d[2*i], d[2*i+1]
			q2Dxx[q][i], q2Dxy[q][i], q2Dyy[q][i] = hh[4*i], hh[4*i+1], hh[4*i+3]
		}
		g.EvalGrad(xi, gd[:])
		for n := 0; n < 4; n++ {
			q1Dx[q][n], q1Dy[q][n] = gd[2*n], gd[2*n+1]
		}
		if q == 0 {
			g.EvalHess(xi, gh[:])
			for n := 0; n < 4; n++ {
				q1Dxy[n] = gh[4*n+1]
			}
		}
	}
}

func (handQ2) Layout() kernel.Layout { return handQ2Layout }

func (handQ2) Cell(in *kernel.CellInput, A, b []float64) {
	A = A[: q2n*q2n : q2n*q2n]
	b = b[:q2n:q2n]
	x := in.Coords[:8:8]
	h := kernel.CellDiameter(cell.Quadrilateral, x)
	tau := codinaTau(h)
	// Mixed second derivative of the map (constant for Q1); ∂²x/∂ξ² = 0.
	cx := x[0]*q1Dxy[0] + x[2]*q1Dxy[1] + x[4]*q1Dxy[2] + x[6]*q1Dxy[3]
	cy := x[1]*q1Dxy[0] + x[3]*q1Dxy[1] + x[5]*q1Dxy[2] + x[7]*q1Dxy[3]
	var acc [q2n * q2n]float64
	var rhs [q2n]float64
	for q := 0; q < q2q; q++ {
		gx, gy := &q1Dx[q], &q1Dy[q]
		j00 := x[0]*gx[0] + x[2]*gx[1] + x[4]*gx[2] + x[6]*gx[3]
		j01 := x[0]*gy[0] + x[2]*gy[1] + x[4]*gy[2] + x[6]*gy[3]
		j10 := x[1]*gx[0] + x[3]*gx[1] + x[5]*gx[2] + x[7]*gx[3]
		j11 := x[1]*gy[0] + x[3]*gy[1] + x[5]*gy[2] + x[7]*gy[3]
		det := j00*j11 - j01*j10
		if !(det > 0) {
			fillNaN(A, b)
			return
		}
		r := 1 / det
		// K = J⁻¹: K[m][k] = ∂ξ_m/∂x_k.
		k00, k01, k10, k11 := j11*r, -j01*r, -j10*r, j00*r
		w := q2W[q] * det
		var Adv, L, Kx, Ky [q2n]float64
		phi, dx, dy := &q2Phi[q], &q2Dx[q], &q2Dy[q]
		dxx, dxy, dyy := &q2Dxx[q], &q2Dxy[q], &q2Dyy[q]
		for i := 0; i < q2n; i++ {
			px := k00*dx[i] + k10*dy[i]
			py := k01*dx[i] + k11*dy[i]
			// Physical Hessian: K^T (Ĥ − Σ_k ∂φ/∂x_k ∂²x_k/∂ξ²) K; only
			// the mixed reference entry carries the curvature term.
			mxy := dxy[i] - px*cx - py*cy
			hxx := k00*k00*dxx[i] + 2*k00*k10*mxy + k10*k10*dyy[i]
			hyy := k01*k01*dxx[i] + 2*k01*k11*mxy + k11*k11*dyy[i]
			adv := adrAx*px + adrAy*py
			// Column factors w a·∇φ and −w κ Δφ; the right-hand side is
			// ∫ f (φ + τ a·∇φ), the SUPG test function.
			Adv[i] = w * adv
			L[i] = -w * adrKappa * (hxx + hyy)
			Kx[i], Ky[i] = px, py
			rhs[i] += w * (phi[i] + tau*adv)
		}
		// A_ij += S_i w a·∇φ_j − τ a·∇φ_i w κ Δφ_j + w κ ∇φ_i·∇φ_j (the
		// Galerkin diffusion is in weak form, only the SUPG residual
		// carries Δφ_j). Grouped by the test factors φ_i, ∂φ_i/∂x and
		// ∂φ_i/∂y, the point's contribution has rank 3:
		//   A_ij += φ_i Adv_j + ∂xφ_i Cx_j + ∂yφ_i Cy_j,
		//   C_j = τ a (Adv_j + L_j) + w κ ∇φ_j.
		var Cx, Cy [q2n]float64
		wk := w * adrKappa
		for j := 0; j < q2n; j++ {
			r := tau * (Adv[j] + L[j])
			Cx[j] = adrAx*r + wk*Kx[j]
			Cy[j] = adrAy*r + wk*Ky[j]
		}
		for i := 0; i < q2n; i++ {
			pi, xi, yi := phi[i], Kx[i], Ky[i]
			row := acc[i*q2n : i*q2n+q2n : i*q2n+q2n]
			for j := range row {
				row[j] += pi*Adv[j] + xi*Cx[j] + yi*Cy[j]
			}
		}
	}
	copy(A, acc[:])
	copy(b, rhs[:])
}
