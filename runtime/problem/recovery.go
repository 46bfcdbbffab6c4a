package problem

import (
	"fmt"
	"math"
	"slices"

	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/mesh"
)

// RecoverGradient returns the recovered gradient of the finite-element
// function x (a global dof vector of dm, every field on linear simplices:
// P1, or P1 on intervals): for every dof g, the gradient of that component
// at its node, ∂_k at g·Dim + k.
//
// At interior nodes the recovery is the lumped-mass L² projection of the
// cellwise constant ∇u_h onto the continuous P1 space, per component:
//
//	g_h(x_a) = Σ_K ∫_K φ_a ∇u_h / Σ_K ∫_K φ_a  =  Σ_{K∋a} |K| ∇u_h|_K / Σ_{K∋a} |K|,
//
// the volume-weighted average of the gradients of the cells around node a
// (∫_K φ_a = |K|/(d+1) on a simplex). It is the recovery Jansen, Collis,
// Whiting & Shakib (1999, CMAME 174, 153–170) use to restore the
// second-derivative part of the stabilised residual on linear elements
// (recalled from memory; to be checked against the paper). Lumping makes
// it local and cheap, one pass over the cells; the consistent projection
// would need a mass-matrix solve per component and direction. It
// reproduces the gradient of a linear function exactly, and where the
// patch of a node is point-symmetric (uniform triangulations) it is
// second-order accurate for smooth functions (the superconvergence of
// patch averages; Zienkiewicz & Zhu 1992, IJNME 33, 1331–1364, recalled
// from memory).
//
// A boundary node's patch is one-sided, and there the average is only
// first-order accurate, which would leave an O(1) error in the recovered
// second derivatives of the cells along the boundary. So at a boundary
// node the recovered gradient is instead the value at the node of the
// least-squares linear fit to the recovered gradients of the interior
// nodes within two rings of cells, more at corners (the boundary treatment of patch
// recovery, after Zienkiewicz & Zhu 1992; recalled from memory, the
// details are this package's): second-order accurate again on uniform
// meshes. Where that fit is not determined (too few interior nodes, on
// coarse meshes) the patch average stays.
func RecoverGradient(m *mesh.Mesh, dm *dof.Numbering, x []float64) ([]float64, error) {
	r, err := NewGradientRecovery(m, dm)
	if err != nil {
		return nil, err
	}
	out := make([]float64, dm.NumDofs*dm.Dim)
	if err := r.Recover(x, out); err != nil {
		return nil, err
	}
	return out, nil
}

// GradientRecovery is the set-up of RecoverGradient on one mesh and
// numbering (the boundary nodes' fitting weights, and scratch), for
// recovering the gradients of many dof vectors; Solve keeps one per
// system. Not safe for concurrent use.
type GradientRecovery struct {
	m      *mesh.Mesh
	dm     *dof.Numbering
	weight []float64 // per dof
	fits   []boundaryFit
}

// boundaryFit gives the recovered gradient at boundary node Node as
// Σ_i W[i]·(patch average at interior node From[i]).
type boundaryFit struct {
	Node int32
	From []int32
	W    []float64
}

// NewGradientRecovery prepares RecoverGradient on m and dm.
func NewGradientRecovery(m *mesh.Mesh, dm *dof.Numbering) (*GradientRecovery, error) {
	if !dm.Cell.IsSimplex() {
		return nil, fmt.Errorf("problem: gradient recovery needs linear simplices, the mesh has %v cells", dm.Cell)
	}
	for _, f := range dm.Fields {
		if f.Element.Degree != 1 {
			return nil, fmt.Errorf("problem: gradient recovery of %s: its element has degree %d, recovery needs linear elements", f.Name, f.Element.Degree)
		}
	}
	r := &GradientRecovery{m: m, dm: dm, weight: make([]float64, dm.NumDofs)}
	if len(dm.Fields) > 0 {
		r.fits = boundaryFits(m, dm)
	}
	return r, nil
}

// boundaryFits finds the boundary nodes of the (shared) P1 space of field
// 0, topologically (the vertices of facets that belong to one cell), and
// the least-squares extrapolation weights of each from the interior nodes
// of its two-ring.
func boundaryFits(m *mesh.Mesh, dm *dof.Numbering) []boundaryFit {
	d := dm.Dim
	nodes := dm.Fields[0].NumNodes
	xs := dm.NodeCoords(0)
	// Boundary nodes: those of the facets that belong to one cell.
	boundary := make([]bool, nodes)
	facets := m.Cell.Facets()
	for _, f := range m.TopologicalBoundary() {
		cn := dm.CellNodes(0, int(f.Cell))
		for _, l := range facets[f.Facet] {
			boundary[cn[l]] = true
		}
	}
	// Node → cells.
	cellsOf := make([][]int32, nodes)
	for c := 0; c < dm.NumCells; c++ {
		for _, n := range dm.CellNodes(0, c) {
			cellsOf[n] = append(cellsOf[n], int32(c))
		}
	}
	neighbours := func(set map[int32]bool) map[int32]bool {
		out := map[int32]bool{}
		for n := range set {
			for _, c := range cellsOf[n] {
				for _, o := range dm.CellNodes(0, int(c)) {
					out[o] = true
				}
			}
		}
		return out
	}
	var fits []boundaryFit
	for a := 0; a < nodes; a++ {
		if !boundary[a] {
			continue
		}
		// The two-ring, widened (up to four rings) where it holds too few
		// interior nodes for the fit, as at the corners.
		ring := neighbours(map[int32]bool{int32(a): true})
		for rings := 2; rings <= 4; rings++ {
			ring = neighbours(ring)
			var from []int32
			for n := range ring {
				if !boundary[n] {
					from = append(from, n)
				}
			}
			if len(from) < 2*(d+1) {
				continue
			}
			slices.Sort(from)
			if w, ok := extrapolationWeights(xs, d, a, from); ok {
				fits = append(fits, boundaryFit{Node: int32(a), From: from, W: w})
				break
			}
		}
	}
	return fits
}

// extrapolationWeights returns w with Σ_i w_i g_i the value at x_a of the
// least-squares linear fit g(x) ≈ α + β·(x − x_a) to values g_i at the
// points from: w = first row of (AᵀA)⁻¹Aᵀ, A_i = [1, x_i − x_a]. It
// reports false when AᵀA is singular or ill-conditioned.
func extrapolationWeights(xs []float64, d, a int, from []int32) ([]float64, bool) {
	n := d + 1
	if len(from) < n+1 {
		return nil, false
	}
	var ata, inv [16]float64
	row := func(i int, dst []float64) {
		dst[0] = 1
		for k := 0; k < d; k++ {
			dst[1+k] = xs[int(from[i])*d+k] - xs[a*d+k]
		}
	}
	var ai [4]float64
	scale := 0.0
	for i := range from {
		row(i, ai[:n])
		for p := 0; p < n; p++ {
			for q := 0; q < n; q++ {
				ata[p*n+q] += ai[p] * ai[q]
			}
		}
		for k := 1; k < n; k++ {
			scale = math.Max(scale, math.Abs(ai[k]))
		}
	}
	// Scale the coordinates so the test on det is dimensionless.
	var sc [16]float64
	for p := 0; p < n; p++ {
		for q := 0; q < n; q++ {
			f := 1.0
			if p > 0 {
				f /= scale
			}
			if q > 0 {
				f /= scale
			}
			sc[p*n+q] = ata[p*n+q] * f
		}
	}
	if !invertSmall(n, sc[:n*n], inv[:n*n], 1e-8*float64(len(from))) {
		return nil, false
	}
	w := make([]float64, len(from))
	for i := range from {
		row(i, ai[:n])
		v := 0.0
		for q := 0; q < n; q++ {
			f := 1.0
			if q > 0 {
				f /= scale
			}
			v += inv[q] * ai[q] * f // row 0 of the scaled inverse; α needs no unscaling
		}
		w[i] = v
	}
	return w, true
}

// Recover writes the recovered gradient of x into out (NumDofs·Dim), as
// RecoverGradient returns it.
func (r *GradientRecovery) Recover(x, out []float64) error {
	m, dm := r.m, r.dm
	d := dm.Dim
	if len(x) != dm.NumDofs || len(out) != dm.NumDofs*d {
		return fmt.Errorf("problem: gradient recovery of %d values into %d for %d dofs", len(x), len(out), dm.NumDofs)
	}
	weight := r.weight
	clear(out)
	clear(weight)
	nv := d + 1
	var J, Ji [9]float64
	var grad [3]float64
	for c := 0; c < dm.NumCells; c++ {
		vs := m.Cells[c*nv : (c+1)*nv]
		// J = [x_1 − x_0, ..., x_d − x_0]; ∇φ_a = row a−1 of J⁻¹ (a ≥ 1),
		// ∇φ_0 = −Σ_a ∇φ_a.
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				J[i*d+j] = m.Coords[int(vs[j+1])*d+i] - m.Coords[int(vs[0])*d+i]
			}
		}
		det := element.Invert(d, J[:d*d], Ji[:d*d])
		w := math.Abs(det)
		if !(w > 0) {
			return fmt.Errorf("problem: gradient recovery: cell %d is degenerate", c)
		}
		dofs := dm.CellDofs(c)
		for k := range dm.Fields {
			f := &dm.Fields[k]
			for comp := 0; comp < f.Components; comp++ {
				base := f.LocalOffset + comp*nv
				u0 := x[dofs[base]]
				for j := 0; j < d; j++ {
					g := 0.0
					for a := 1; a < nv; a++ {
						g += (x[dofs[base+a]] - u0) * Ji[(a-1)*d+j]
					}
					grad[j] = g
				}
				for a := 0; a < nv; a++ {
					gd := int(dofs[base+a])
					weight[gd] += w
					for j := 0; j < d; j++ {
						out[gd*d+j] += w * grad[j]
					}
				}
			}
		}
	}
	for g, w := range weight {
		if w > 0 {
			for j := 0; j < d; j++ {
				out[g*d+j] /= w
			}
		}
	}
	// Boundary nodes: extrapolate from the interior (the interior values
	// are final, so the order of the fits does not matter).
	for k := range dm.Fields {
		f := &dm.Fields[k]
		for comp := 0; comp < f.Components; comp++ {
			for _, fit := range r.fits {
				g := dm.Global(k, comp, int(fit.Node))
				for j := 0; j < d; j++ {
					v := 0.0
					for i, n := range fit.From {
						v += fit.W[i] * out[dm.Global(k, comp, int(n))*d+j]
					}
					out[g*d+j] = v
				}
			}
		}
	}
	return nil
}

// invertSmall inverts the n×n matrix a (n ≤ 4, row-major) into inv by
// Gauss–Jordan elimination with partial pivoting; it reports false when a
// pivot falls below tol.
func invertSmall(n int, a, inv []float64, tol float64) bool {
	var m [4][8]float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			m[i][j] = a[i*n+j]
		}
		m[i][n+i] = 1
	}
	for c := 0; c < n; c++ {
		p := c
		for r := c + 1; r < n; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[p][c]) {
				p = r
			}
		}
		if !(math.Abs(m[p][c]) > tol) {
			return false
		}
		m[c], m[p] = m[p], m[c]
		piv := m[c][c]
		for j := 0; j < 2*n; j++ {
			m[c][j] /= piv
		}
		for r := 0; r < n; r++ {
			if r != c && m[r][c] != 0 {
				f := m[r][c]
				for j := 0; j < 2*n; j++ {
					m[r][j] -= f * m[c][j]
				}
			}
		}
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			inv[i*n+j] = m[i][n+j]
		}
	}
	return true
}
