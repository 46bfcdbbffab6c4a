package gogen

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// A body is the code of one Cell method, or of one local facet of a Facet
// method: the element computation for one quadrature rule.

type fieldInfo struct {
	elem  *element.Element
	ei    int // index into bodyGen.elems
	comps int
	off   int
}

// facetGeom is the quadrature data of one local facet that the
// interpreted facet kernel uses (runtime/interp): constant reference
// tangents of the facet parametrisation and the reference outward normal.
type facetGeom struct {
	tang [2][3]float64
	nref [3]float64
}

type tabs struct {
	val, grad, hess [][]float64 // [q][...]
}

type bodyGen struct {
	c        cell.Type
	dim      int
	n        int
	fields   []fieldInfo
	elems    []*element.Element // distinct field elements
	geom     *element.Element
	pts, wts []float64
	nq       int
	facet    *facetGeom
	affine   bool
	loop     bool   // loop mode: basis functions in generated loops, not unrolled
	scope    string // table name prefix: Cell, Side0Facet1 ...

	d      *dag
	etab   []tabs // per distinct element
	gtab   tabs
	tables map[string]*table
	order  []*table // tables in first-use order

	memo  map[string]int
	named map[*ir.Named]int
	err   error

	usesPrev bool
	usesRec  bool
}

func (g *bodyGen) fail(format string, a ...any) int {
	if g.err == nil {
		g.err = fmt.Errorf(format, a...)
	}
	return g.d.konst(0)
}

func tabulate(e *element.Element, pts []float64, nq, d int) tabs {
	n := e.NumNodes()
	var t tabs
	for q := 0; q < nq; q++ {
		xi := pts[q*d : (q+1)*d]
		v, gr, h := make([]float64, n), make([]float64, n*d), make([]float64, n*d*d)
		e.Eval(xi, v)
		e.EvalGrad(xi, gr)
		e.EvalHess(xi, h)
		t.val, t.grad, t.hess = append(t.val, v), append(t.grad, gr), append(t.hess, h)
	}
	return t
}

func (g *bodyGen) init() {
	g.d = newDAG()
	g.memo = map[string]int{}
	g.named = map[*ir.Named]int{}
	g.tables = map[string]*table{}
	g.nq = len(g.wts)
	for _, e := range g.elems {
		g.etab = append(g.etab, tabulate(e, g.pts, g.nq, g.dim))
	}
	g.gtab = tabulate(g.geom, g.pts, g.nq, g.dim)
}

// symA is the basis index of loop mode: a node built for it stands for
// every basis function, the generated basis loop supplying the index.
const symA = -1

// entryAt is entry for basis function a (symA: the loop variable) whose
// data start at a*stride+off.
func (g *bodyGen) entryAt(name string, data [][]float64, ei, a, stride, off int) int {
	if a != symA {
		return g.entry(name, data, a*stride+off)
	}
	return g.d.basisLeaf(g.table(name, data), stride, off, ei)
}

// entry returns the node for table data[q][idx]: a constant when the value
// is the same at every point, else a load from a tabulated table.
func (g *bodyGen) entry(name string, data [][]float64, idx int) int {
	v0 := data[0][idx]
	same := true
	for q := 1; q < len(data); q++ {
		if data[q][idx] != v0 {
			same = false
			break
		}
	}
	if same {
		return g.d.konst(v0)
	}
	return g.d.tableAt(g.table(name, data), idx)
}

// table registers tabulated data under a name (once).
func (g *bodyGen) table(name string, rows [][]float64) *table {
	t, ok := g.tables[name]
	if !ok {
		t = &table{name: g.scope + name, rows: rows}
		g.tables[name] = t
		g.order = append(g.order, t)
	}
	return t
}

func (g *bodyGen) memoize(key string, f func() int) int {
	if id, ok := g.memo[key]; ok {
		return id
	}
	id := f()
	g.memo[key] = id
	return id
}

// Reference data.

// tabName names the table of kind (Val, Grad, Hess) of distinct element
// ei, or of the geometry element for ei < 0.
func (g *bodyGen) tabName(ei int, kind string) string {
	if ei < 0 {
		return "Geom" + kind
	}
	return fmt.Sprintf("Basis%d%s", g.elems[ei].Degree, kind)
}

func (g *bodyGen) refVal(ei, a int) int {
	if ei < 0 {
		return g.entry(g.tabName(ei, "Val"), g.gtab.val, a)
	}
	return g.entryAt(g.tabName(ei, "Val"), g.etab[ei].val, ei, a, 1, 0)
}

func (g *bodyGen) refGrad(ei, a, m int) int {
	if ei < 0 {
		return g.entry(g.tabName(ei, "Grad"), g.gtab.grad, a*g.dim+m)
	}
	return g.entryAt(g.tabName(ei, "Grad"), g.etab[ei].grad, ei, a, g.dim, m)
}

func (g *bodyGen) refHess(ei, a, m, n int) int {
	d := g.dim
	if m > n {
		m, n = n, m // symmetric
	}
	if ei < 0 {
		return g.entry(g.tabName(ei, "Hess"), g.gtab.hess, (a*d+m)*d+n)
	}
	return g.entryAt(g.tabName(ei, "Hess"), g.etab[ei].hess, ei, a, d*d, m*d+n)
}

// Geometry (the formulas of element.Table.Map, so the results agree with
// the interpreted kernels to round-off).

func (g *bodyGen) coord(n, i int) int {
	return g.d.input(leafCoord, n*g.dim+i)
}

func (g *bodyGen) jac(i, j int) int {
	return g.memoize(fmt.Sprintf("J%d%d", i, j), func() int {
		var ts []int
		for n := 0; n < g.geom.NumNodes(); n++ {
			ts = append(ts, g.d.mul(g.coord(n, i), g.refGrad(-1, n, j)))
		}
		return g.d.name(g.d.add(ts...), fmt.Sprintf("j%d%d", i, j), hintGenerator)
	})
}

func (g *bodyGen) det() int {
	return g.memoize("det", func() int { return g.d.name(g.detOf(g.jac), "detJ", hintGenerator) })
}

// detOf is the determinant of the Jacobian with entries J(i, j), by
// cofactors of the first row in 3D (as element.Invert).
func (g *bodyGen) detOf(J func(i, j int) int) int {
	m, s := g.d.mul, g.d.sub
	switch g.dim {
	case 1:
		return J(0, 0)
	case 2:
		return s(m(J(0, 0), J(1, 1)), m(J(0, 1), J(1, 0)))
	}
	return g.d.add(m(J(0, 0), g.cofOf(J, 0)), m(J(0, 1), g.cofOf(J, 1)), m(J(0, 2), g.cofOf(J, 2)))
}

// cof returns the cofactors c00, c01, c02 of a 3×3 Jacobian.
func (g *bodyGen) cof(k int) int { return g.cofOf(g.jac, k) }

func (g *bodyGen) cofOf(J func(i, j int) int, k int) int {
	m, s := g.d.mul, g.d.sub
	switch k {
	case 0:
		return s(m(J(1, 1), J(2, 2)), m(J(1, 2), J(2, 1)))
	case 1:
		return s(m(J(1, 2), J(2, 0)), m(J(1, 0), J(2, 2)))
	}
	return s(m(J(1, 0), J(2, 1)), m(J(1, 1), J(2, 0)))
}

// gauss2 are the points of the 2-point Gauss rule on [−1, 1].
var gauss2 = [2]float64{-1 / math.Sqrt(3), 1 / math.Sqrt(3)}

// adj is entry (i, j) of the adjugate of J, so that ∂ξ_i/∂x_j =
// adj(i, j)/det J.
func (g *bodyGen) adj(i, j int) int {
	return g.memoize(fmt.Sprintf("adj%d%d", i, j), func() int {
		J := func(i, j int) int { return g.jac(i, j) }
		m, s := g.d.mul, g.d.sub
		switch g.dim {
		case 1:
			return g.d.konst(1)
		case 2:
			switch 2*i + j {
			case 0:
				return J(1, 1)
			case 1:
				return g.d.neg(J(0, 1))
			case 2:
				return g.d.neg(J(1, 0))
			}
			return J(0, 0)
		}
		switch 3*i + j {
		case 0:
			return g.cof(0)
		case 1:
			return s(m(J(0, 2), J(2, 1)), m(J(0, 1), J(2, 2)))
		case 2:
			return s(m(J(0, 1), J(1, 2)), m(J(0, 2), J(1, 1)))
		case 3:
			return g.cof(1)
		case 4:
			return s(m(J(0, 0), J(2, 2)), m(J(0, 2), J(2, 0)))
		case 5:
			return s(m(J(0, 2), J(1, 0)), m(J(0, 0), J(1, 2)))
		case 6:
			return g.cof(2)
		case 7:
			return s(m(J(0, 1), J(2, 0)), m(J(0, 0), J(2, 1)))
		}
		return s(m(J(0, 0), J(1, 1)), m(J(0, 1), J(1, 0)))
	})
}

// rdet is 1/det J.
func (g *bodyGen) rdet() int {
	return g.memoize("rdet", func() int { return g.d.name(g.d.recip(g.det()), "rdetJ", hintGenerator) })
}

// jinv is ∂ξ_i/∂x_j.
func (g *bodyGen) jinv(i, j int) int {
	return g.memoize(fmt.Sprintf("K%d%d", i, j), func() int {
		if g.dim == 1 {
			return g.d.name(g.rdet(), "k00", hintGenerator)
		}
		return g.d.name(g.d.mul(g.adj(i, j), g.rdet()), fmt.Sprintf("k%d%d", i, j), hintGenerator)
	})
}

// scaledR is scale·(1/det J)^p: the integration factor of a pre-integrated
// pair whose two basis derivatives carry p adjugate factors in all. In a
// cell the scale is det J itself, so the powers cancel exactly.
func (g *bodyGen) scaledR(p int) int {
	return g.memoize(fmt.Sprintf("sR%d", p), func() int {
		if g.facet != nil {
			return g.d.mul(g.measure(), g.d.powInt(g.rdet(), p))
		}
		switch p {
		case 0:
			return g.det()
		case 1:
			return g.d.konst(1)
		}
		return g.d.powInt(g.rdet(), p-1)
	})
}

func (g *bodyGen) point(k int) int {
	return g.memoize(fmt.Sprintf("X%d", k), func() int {
		var ts []int
		for n := 0; n < g.geom.NumNodes(); n++ {
			ts = append(ts, g.d.mul(g.coord(n, k), g.refVal(-1, n)))
		}
		return g.d.name(g.d.add(ts...), fmt.Sprintf("x%d", k), hintGenerator)
	})
}

func (g *bodyGen) d2x(k, a, b int) int {
	if a > b {
		a, b = b, a
	}
	return g.memoize(fmt.Sprintf("D2X%d%d%d", k, a, b), func() int {
		var ts []int
		for n := 0; n < g.geom.NumNodes(); n++ {
			ts = append(ts, g.d.mul(g.coord(n, k), g.refHess(-1, n, a, b)))
		}
		return g.d.add(ts...)
	})
}

func (g *bodyGen) metric(i, j int) int {
	if i > j {
		i, j = j, i
	}
	return g.memoize(fmt.Sprintf("G%d%d", i, j), func() int {
		var ts []int
		for k := 0; k < g.dim; k++ {
			ts = append(ts, g.d.mul(g.jinv(k, i), g.jinv(k, j)))
		}
		return g.d.name(g.d.add(ts...), fmt.Sprintf("metric%d%d", i, j), hintGenerator)
	})
}

func (g *bodyGen) normal(k int) int {
	return g.memoize(fmt.Sprintf("N%d", k), func() int {
		if g.facet == nil {
			return g.fail("gogen: the outward normal n appears in a cell integral")
		}
		nv := func(k int) int {
			var ts []int
			for i := 0; i < g.dim; i++ {
				ts = append(ts, g.d.mul(g.jinv(i, k), g.d.konst(g.facet.nref[i])))
			}
			return g.d.add(ts...)
		}
		nn := g.memoize("NN", func() int {
			var sq []int
			for kk := 0; kk < g.dim; kk++ {
				sq = append(sq, g.d.mul(nv(kk), nv(kk)))
			}
			return g.d.fn(ir.Sqrt, g.d.add(sq...))
		})
		return g.d.name(g.d.div(nv(k), nn), fmt.Sprintf("normal%d", k), hintGenerator)
	})
}

// measure is the surface measure factor of a facet point, |J t_1| (2D) or
// |J t_1 × J t_2| (3D), 1 in 1D.
func (g *bodyGen) measure() int {
	return g.memoize("meas", func() int {
		d := g.dim
		if d == 1 {
			return g.d.konst(1)
		}
		var t [2][3]int
		for m := 0; m < d-1; m++ {
			for i := 0; i < d; i++ {
				var ts []int
				for j := 0; j < d; j++ {
					ts = append(ts, g.d.mul(g.jac(i, j), g.d.konst(g.facet.tang[m][j])))
				}
				t[m][i] = g.d.add(ts...)
			}
		}
		var sq []int
		if d == 2 {
			sq = []int{g.d.mul(t[0][0], t[0][0]), g.d.mul(t[0][1], t[0][1])}
		} else {
			c := [3]int{
				g.d.sub(g.d.mul(t[0][1], t[1][2]), g.d.mul(t[0][2], t[1][1])),
				g.d.sub(g.d.mul(t[0][2], t[1][0]), g.d.mul(t[0][0], t[1][2])),
				g.d.sub(g.d.mul(t[0][0], t[1][1]), g.d.mul(t[0][1], t[1][0])),
			}
			for _, x := range c {
				sq = append(sq, g.d.mul(x, x))
			}
		}
		return g.d.name(g.d.fn(ir.Sqrt, g.d.add(sq...)), "surface", hintGenerator)
	})
}

// scale is the factor of the quadrature weight: det J in a cell, the
// surface measure on a facet.
func (g *bodyGen) scale() int {
	if g.facet != nil {
		return g.measure()
	}
	return g.det()
}

func (g *bodyGen) weight() int {
	return g.memoize("w", func() int {
		var w int
		if g.nq == 1 {
			w = g.d.konst(g.wts[0])
		} else {
			same := true
			for _, x := range g.wts {
				same = same && x == g.wts[0]
			}
			if same {
				w = g.d.konst(g.wts[0])
			} else {
				t, ok := g.tables["Weights"]
				if !ok {
					t = &table{name: g.scope + "Weights", vec: g.wts}
					g.tables["Weights"] = t
					g.order = append(g.order, t)
				}
				w = g.d.tableAt(t, -1)
			}
		}
		return g.d.name(g.d.mul(w, g.scale()), "w", hintGenerator)
	})
}

func (g *bodyGen) cellDiameter() int {
	return g.memoize("diam", func() int {
		nv, d := g.c.NumVertices(), g.dim
		h2 := -1
		for a := 0; a < nv; a++ {
			for b := a + 1; b < nv; b++ {
				var sq []int
				for k := 0; k < d; k++ {
					t := g.d.sub(g.coord(a, k), g.coord(b, k))
					sq = append(sq, g.d.mul(t, t))
				}
				s := g.d.add(sq...)
				if h2 < 0 {
					h2 = s
				} else {
					h2 = g.d.minmax(opMax, h2, s)
				}
			}
		}
		return g.d.name(g.d.fn(ir.Sqrt, h2), "diameter", hintGenerator)
	})
}

func (g *bodyGen) cellVolume() int {
	return g.memoize("vol", func() int {
		if g.c.IsSimplex() {
			return g.d.name(g.d.fn(ir.Abs, g.d.mul(g.det(), g.d.konst(g.c.Measure()))), "volume", hintGenerator)
		}
		// |Σ_p det J(ξ_p)| over the 2^d-point Gauss rule on [−1, 1]^d (weights
		// 1), exact for the bilinear and trilinear maps (element.Measure).
		var dets []int
		xi := make([]float64, g.dim)
		grad := make([]float64, g.geom.NumNodes()*g.dim)
		for p := 0; p < 1<<g.dim; p++ {
			for k := range xi {
				xi[k] = gauss2[(p>>k)&1]
			}
			g.geom.EvalGrad(xi, grad)
			J := func(i, j int) int {
				var ts []int
				for n := 0; n < g.geom.NumNodes(); n++ {
					ts = append(ts, g.d.mul(g.coord(n, i), g.d.konst(grad[n*g.dim+j])))
				}
				return g.d.add(ts...)
			}
			dets = append(dets, g.detOf(J))
		}
		return g.d.name(g.d.fn(ir.Abs, g.d.add(dets...)), "volume", hintGenerator)
	})
}

// Basis derivatives in physical coordinates.

func order(D [3]uint8) int { return int(D[0]) + int(D[1]) + int(D[2]) }

// axes returns the axes of a multi-index of order 1 or 2, lowest first.
func axes(D [3]uint8) []int {
	var out []int
	for k := 0; k < 3; k++ {
		for r := uint8(0); r < D[k]; r++ {
			out = append(out, k)
		}
	}
	return out
}

func (g *bodyGen) physGrad(ei, a, k int) int {
	return g.memoize(fmt.Sprintf("g%d.%d.%d", ei, a, k), func() int {
		var ts []int
		for m := 0; m < g.dim; m++ {
			ts = append(ts, g.d.mul(g.jinv(m, k), g.refGrad(ei, a, m)))
		}
		return g.d.add(ts...)
	})
}

func (g *bodyGen) physHess(ei, a, k, l int) int {
	if k > l {
		k, l = l, k
	}
	return g.memoize(fmt.Sprintf("h%d.%d.%d.%d", ei, a, k, l), func() int {
		// H_kl = Σ_{p≤r} (K_pk K_rl + [p≠r] K_rk K_pl) m_pr: the factors
		// depend on the point only and are shared by all basis functions.
		var ts []int
		for p := 0; p < g.dim; p++ {
			for r := p; r < g.dim; r++ {
				ts = append(ts, g.d.mul(g.hessFactor(p, r, k, l), g.refHessMapped(ei, a, p, r)))
			}
		}
		return g.d.add(ts...)
	})
}

// refHessMapped is m_pr = ∂²φ_a/∂ξ_p∂ξ_r − Σ_k ∂φ_a/∂x_k ∂²x_k/∂ξ_p∂ξ_r,
// the reference Hessian corrected for the curvature of the map, so that
// the physical Hessian is K^T m K (K = J⁻¹).
func (g *bodyGen) refHessMapped(ei, a, p, r int) int {
	if p > r {
		p, r = r, p // Ĥ and ∂²x/∂ξ² are symmetric
	}
	return g.memoize(fmt.Sprintf("mm%d.%d.%d.%d", ei, a, p, r), func() int {
		ts := []int{g.refHess(ei, a, p, r)}
		for k := 0; k < g.dim; k++ {
			ts = append(ts, g.d.neg(g.d.mul(g.physGrad(ei, a, k), g.d2x(k, p, r))))
		}
		return g.d.add(ts...)
	})
}

// basisSum is Σ_D D^D φ_a over the multi-indices Ds (distinct). Two or more
// second derivatives are summed through the mapped reference Hessian,
// Σ_(k,l) H_kl = Σ_{p≤r} (Σ_(k,l) hf_prkl) m_pr: the weights are shared by
// all basis functions at the point, so a Laplacian costs one product per
// reference entry and basis function instead of one per physical entry.
func (g *bodyGen) basisSum(ei, a int, Ds [][3]uint8) int {
	var ts []int
	var second [][2]int
	for _, D := range Ds {
		if order(D) == 2 {
			ax := axes(D)
			second = append(second, [2]int{ax[0], ax[1]})
			continue
		}
		ts = append(ts, g.basis(ei, a, D))
	}
	if len(second) == 1 {
		ts = append(ts, g.physHess(ei, a, second[0][0], second[0][1]))
	}
	if len(second) > 1 {
		for p := 0; p < g.dim; p++ {
			for r := p; r < g.dim; r++ {
				var ws []int
				for _, kl := range second {
					ws = append(ws, g.hessFactor(p, r, kl[0], kl[1]))
				}
				ts = append(ts, g.d.mul(g.d.add(ws...), g.refHessMapped(ei, a, p, r)))
			}
		}
	}
	return g.d.add(ts...)
}

// hessFactor is K_pk K_rl + [p≠r] K_rk K_pl (K = J⁻¹), p ≤ r, k ≤ l.
func (g *bodyGen) hessFactor(p, r, k, l int) int {
	return g.memoize(fmt.Sprintf("hf%d%d%d%d", p, r, k, l), func() int {
		f := g.d.mul(g.jinv(p, k), g.jinv(r, l))
		if p != r {
			f = g.d.add(f, g.d.mul(g.jinv(r, k), g.jinv(p, l)))
		}
		return f
	})
}

// basis returns D^D φ_a of distinct element ei at the current point.
func (g *bodyGen) basis(ei, a int, D [3]uint8) int {
	switch order(D) {
	case 0:
		return g.refVal(ei, a)
	case 1:
		return g.physGrad(ei, a, axes(D)[0])
	}
	ax := axes(D)
	return g.physHess(ei, a, ax[0], ax[1])
}

// recovered is a recovered second derivative D_ij u_c ≈ ½(∂_j g_i +
// ∂_i g_j) of the previous iterate, from the recovered gradient g at the
// element nodes (rv[l·dim + k] for local dof l, axis k; ir.Recovered).
func (g *bodyGen) recovered(e *ir.FieldD) int {
	d := g.d
	if e.DT != 0 || order(e.D) != 2 {
		return g.fail("gogen: a recovered derivative that is not of order 2")
	}
	f := e.Field.Index
	if f < 0 || f >= len(g.fields) || e.Comp < 0 || e.Comp >= g.fields[f].comps {
		return g.fail("gogen: recovered derivative of field %d component %d out of range", f, e.Comp)
	}
	for k := g.dim; k < 3; k++ {
		if e.D[k] != 0 {
			return g.fail("gogen: derivative along axis %d in %d dimensions", k, g.dim)
		}
	}
	g.usesRec = true
	ax := axes(e.D)
	i, j := ax[0], ax[1]
	var di, dj [3]uint8
	di[i], dj[j] = 1, 1
	fi := g.fields[f]
	nn := fi.elem.NumNodes()
	var ts []int
	for a := 0; a < nn; a++ {
		l := fi.off + e.Comp*nn + a
		ts = append(ts, d.mul(d.input(leafRec, l*g.dim+i), g.basis(fi.ei, a, dj)))
		ts = append(ts, d.mul(d.input(leafRec, l*g.dim+j), g.basis(fi.ei, a, di)))
	}
	return d.mul(d.konst(0.5), d.add(ts...))
}

// Coefficients.

func (g *bodyGen) coef(e ir.Expr) int {
	if e == nil {
		return g.fail("gogen: nil coefficient")
	}
	if e.Rank() != 0 {
		return g.fail("gogen: coefficient of rank %d", e.Rank())
	}
	d := g.d
	switch e := e.(type) {
	case *ir.Named:
		// A coefficient, τ or fine-scale quantity: computed once, under its
		// model name (names.go).
		if id, ok := g.named[e]; ok {
			return id
		}
		plain, mangled := localName(e.Sym.Name, e.Sym.R, e.I, e.J)
		id := g.d.nameModel(g.coef(e.X), plain, mangled)
		g.named[e] = id
		return id
	case *ir.Num:
		f, _ := e.Val.Float64()
		return d.konst(f)
	case *ir.Const:
		if e.Name == "pi" {
			return d.konst(math.Pi)
		}
		return g.fail("gogen: unknown constant %q", e.Name)
	case *ir.Coord:
		if e.Axis < 0 || e.Axis >= g.dim {
			return g.fail("gogen: coordinate axis %d in %d dimensions", e.Axis, g.dim)
		}
		return g.point(e.Axis)
	case *ir.Time:
		return d.input(leafTime, 0)
	case *ir.CellQ:
		switch e.Q {
		case ir.Diameter:
			return g.cellDiameter()
		case ir.Volume:
			return g.cellVolume()
		case ir.TimeStep:
			return d.input(leafStep, 0)
		case ir.Metric:
			if e.I < 0 || e.I >= g.dim || e.J < 0 || e.J >= g.dim {
				return g.fail("gogen: G[%d][%d] in %d dimensions", e.I, e.J, g.dim)
			}
			return g.metric(e.I, e.J)
		case ir.Normal:
			if e.I < 0 || e.I >= g.dim {
				return g.fail("gogen: n[%d] in %d dimensions", e.I, g.dim)
			}
			return g.normal(e.I)
		}
		return g.fail("gogen: unknown quantity %v", e.Q)
	case *ir.FieldD:
		if e.Field != nil && e.Field.Role == ir.Recovered {
			return g.recovered(e)
		}
		if e.Field == nil || e.Field.Role != ir.Previous {
			return g.fail("gogen: a trial or test function inside a coefficient")
		}
		if e.DT != 0 || order(e.D) > 2 {
			return g.fail("gogen: unsupported derivative of a previous iterate")
		}
		f := e.Field.Index
		if f < 0 || f >= len(g.fields) || e.Comp < 0 || e.Comp >= g.fields[f].comps {
			return g.fail("gogen: previous iterate of field %d component %d out of range", f, e.Comp)
		}
		for k := g.dim; k < 3; k++ {
			if e.D[k] != 0 {
				return g.fail("gogen: derivative along axis %d in %d dimensions", k, g.dim)
			}
		}
		g.usesPrev = true
		fi := g.fields[f]
		nn := fi.elem.NumNodes()
		var ts []int
		for a := 0; a < nn; a++ {
			pv := d.input(leafPrev, fi.off+e.Comp*nn+a)
			ts = append(ts, d.mul(pv, g.basis(fi.ei, a, e.D)))
		}
		return d.add(ts...)
	case *ir.Add:
		if len(e.Terms) == 0 {
			return g.fail("gogen: empty sum")
		}
		var ts []int
		for _, t := range e.Terms {
			ts = append(ts, g.coef(t))
		}
		return d.add(ts...)
	case *ir.Mul:
		if len(e.Factors) == 0 {
			return g.fail("gogen: empty product")
		}
		var fs []int
		for _, f := range e.Factors {
			fs = append(fs, g.coef(f))
		}
		return d.mul(fs...)
	case *ir.Pow:
		b := g.coef(e.Base)
		if n, ok := ir.SmallIntExponent(e.Exp); ok {
			return d.powInt(b, n)
		}
		return d.pow(b, g.coef(e.Exp))
	case *ir.Call:
		if len(e.Args) != e.Fn.Arity() {
			return g.fail("gogen: %s with %d arguments", e.Fn, len(e.Args))
		}
		switch e.Fn {
		case ir.Min:
			return d.minmax(opMin, g.coef(e.Args[0]), g.coef(e.Args[1]))
		case ir.Max:
			return d.minmax(opMax, g.coef(e.Args[0]), g.coef(e.Args[1]))
		case ir.Norm:
			return g.fail("gogen: norm of a vector in a lowered coefficient")
		}
		if e.Fn.GoName() == "" && e.Fn != ir.Coth && e.Fn != ir.Sign {
			return g.fail("gogen: function %s", e.Fn)
		}
		return d.fn(e.Fn, g.coef(e.Args[0]))
	}
	return g.fail("gogen: unsupported node %T in a lowered coefficient", e)
}

// Terms grouped per (test, trial) pair, as the interpreted kernel groups
// them.

type termKey struct {
	tf, tc, uf, uc int
	tD, uD         [3]uint8
	linear         bool
}

type group struct {
	key   termKey
	terms []ir.Term
	coef  int // node of the summed coefficient
	cellA bool
}

func (g *bodyGen) groups(bil, lin []ir.Term) ([]*group, error) {
	var out []*group
	find := func(k termKey) *group {
		for _, gr := range out {
			if gr.key == k {
				return gr
			}
		}
		gr := &group{key: k}
		out = append(out, gr)
		return gr
	}
	// The form is valid (ir.LoweredForm.Validate, called by cellFor): every
	// term has its test and trial functions where they belong.
	for _, t := range bil {
		k := termKey{t.Test.Field.Index, t.Test.Comp, t.Trial.Field.Index, t.Trial.Comp, t.Test.D, t.Trial.D, false}
		gr := find(k)
		gr.terms = append(gr.terms, t)
	}
	for _, t := range lin {
		gr := find(termKey{tf: t.Test.Field.Index, tc: t.Test.Comp, tD: t.Test.D, linear: true})
		gr.terms = append(gr.terms, t)
	}
	for i, gr := range out {
		var cs []int
		for _, t := range gr.terms {
			cs = append(cs, g.coef(t.Coef))
		}
		gr.coef = g.d.name(g.d.add(cs...), fmt.Sprintf("coef%d", i), hintGeneric)
		gr.cellA = g.affine && !g.loop && g.d.nodes[gr.coef].lv <= lvCell
	}
	return out, g.err
}

// symmetric reports whether the bilinear groups are invariant under
// swapping test and trial (same coefficient node after hash-consing).
func symmetric(gs []*group) bool {
	any := false
	for _, a := range gs {
		if a.key.linear {
			continue
		}
		any = true
		sw := termKey{a.key.uf, a.key.uc, a.key.tf, a.key.tc, a.key.uD, a.key.tD, false}
		ok := false
		for _, b := range gs {
			if !b.key.linear && b.key == sw && b.coef == a.coef {
				ok = true
			}
		}
		if !ok {
			return false
		}
	}
	return any
}
