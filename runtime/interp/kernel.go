package interp

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/quadrature"
	"github.com/formwright/formwright/runtime/tape"
)

// Options tune the interpreted kernels.
type Options struct {
	// Degree is the quadrature degree; 0 selects the form's own
	// (ir.LoweredForm.QuadratureDegree).
	Degree int
}

// layoutAndDegree checks the lowered-form contract and returns the
// layout of form on cells c and the quadrature degree: opts.Degree, or
// the form's own (ir.LoweredForm.QuadratureDegree), which the generated
// kernels use too.
func layoutAndDegree(form *ir.LoweredForm, c cell.Type, opts Options) (kernel.Layout, int, error) {
	if err := form.Validate(); err != nil {
		return kernel.Layout{}, 0, err
	}
	lay, err := kernel.LayoutFor(form, c)
	if err != nil {
		return lay, 0, err
	}
	deg := opts.Degree
	if deg <= 0 {
		deg = form.QuadratureDegree()
	}
	return lay, deg, nil
}

// vecSpec is a basis-derivative vector: derivative D of the basis of
// element elem (an index into integrand.elems).
type vecSpec struct {
	elem int
	D    [3]uint8
}

type alphaPlan struct {
	vec, coef int
}

type betaPlan struct {
	vec    int
	alphas []alphaPlan
}

type blockPlan struct {
	rowOff, colOff, nr, nc int
	betas                  []betaPlan
}

type linPlan struct {
	rowOff, nr int
	vec, coef  int
}

type prevPlan struct {
	slot, off, vec int // off: local offset of (field, comp)
}

// recPlan evaluates a recovered second derivative D_ij u ≈ ½(∂_j g_i +
// ∂_i g_j) of one component from the recovered gradient g at the nodes
// (kernel.CellInput.Recovered: local dof l, axis k at l·dim + k): vi and
// vj are the basis-derivative vectors ∂_i φ and ∂_j φ.
type recPlan struct {
	slot, off, nn int
	i, j          int
	vi, vj        int
}

// integrand is the compiled, read-only description of Σ terms of one
// domain, shared by a kernel and its forks.
type integrand struct {
	lay       kernel.Layout
	n         int
	elems     []*element.Element
	fieldElem []int
	fieldOff  []int // local offset of field
	slots     *tape.Slots
	cellProg  *tape.Program
	pointProg *tape.Program
	nCell     int // coefficients constant in a cell come first,
	nHoist    int // then the hoisted subexpressions, then the varying ones
	auxSlots  []int
	nCoef     int
	vecs      []vecSpec
	blocks    []blockPlan
	linear    []linPlan
	prev      []prevPlan
	rec       []recPlan
	needDiam  bool
	needVol   bool
	affine    bool // simplex cells with their linear geometry
}

// scratch is one worker's buffers.
type scratch struct {
	env, coef, stack []float64
	J, JInv          []float64 // Dim×Dim at the current point
	det              float64
	pg               []*element.PointGeometry
	vec              [][]float64
	t                []float64
}

func newIntegrand(form *ir.LoweredForm, lay kernel.Layout, bil, lin []ir.Term) (*integrand, error) {
	it := &integrand{lay: lay, n: lay.N(), slots: &tape.Slots{}}
	it.affine = lay.Cell.IsSimplex() && lay.Geometry.Degree == 1
	off := 0
	for _, f := range lay.Fields {
		ei := -1
		for j, e := range it.elems {
			if e == f.Element || (e.Degree == f.Element.Degree && e.Cell == f.Element.Cell) {
				ei = j
			}
		}
		if ei < 0 {
			ei = len(it.elems)
			it.elems = append(it.elems, f.Element)
		}
		it.fieldElem = append(it.fieldElem, ei)
		it.fieldOff = append(it.fieldOff, off)
		off += f.Element.NumNodes() * f.Components
	}
	vecID := func(field int, D [3]uint8) int {
		s := vecSpec{it.fieldElem[field], D}
		for i, v := range it.vecs {
			if v == s {
				return i
			}
		}
		it.vecs = append(it.vecs, s)
		return len(it.vecs) - 1
	}
	// Group terms: coefficient expressions per (test, trial) pair.
	type key struct {
		tf, tc, uf, uc int
		tD, uD         [3]uint8
		linear         bool
	}
	var keys []key
	var coefs [][]ir.Expr
	add := func(k key, c ir.Expr) {
		for i, q := range keys {
			if q == k {
				coefs[i] = append(coefs[i], c)
				return
			}
		}
		keys = append(keys, k)
		coefs = append(coefs, []ir.Expr{c})
	}
	// The form is valid (ir.LoweredForm.Validate, called by
	// layoutAndDegree): every term has its functions where they belong.
	for _, t := range bil {
		add(key{t.Test.Field.Index, t.Test.Comp, t.Trial.Field.Index, t.Trial.Comp, t.Test.D, t.Trial.D, false}, t.Coef)
	}
	for _, t := range lin {
		add(key{tf: t.Test.Field.Index, tc: t.Test.Comp, tD: t.Test.D, linear: true}, t.Coef)
	}
	// Split the summed coefficients into per-cell and per-point programs:
	// coefficients 0..nCell-1 are constant in a cell, the rest vary.
	var cellE, pointE []ir.Expr
	var cellK, pointK []int
	for i, cs := range coefs {
		var e ir.Expr = &ir.Add{Terms: cs}
		if len(cs) == 1 {
			e = cs[0]
		}
		d := tape.ExprDeps(e)
		it.needDiam = it.needDiam || usesQuantity(e, ir.Diameter)
		it.needVol = it.needVol || usesQuantity(e, ir.Volume)
		if d&tape.DepPoint == 0 {
			cellE = append(cellE, e)
			cellK = append(cellK, i)
		} else {
			pointE = append(pointE, e)
			pointK = append(pointK, i)
		}
	}
	// Hoist the maximal cell-constant composite subexpressions of the
	// varying coefficients (e.g. τ in τ·f(x)) into the per-cell program;
	// the per-point program reads them from environment slots.
	subst := map[int]int{}
	exprKeys := tape.NewKeys()
	var hoisted []ir.Expr
	for _, e := range pointE {
		ir.InspectOnce(e, func(x ir.Expr) bool {
			if !tape.Composite(x) || tape.ExprDeps(x)&tape.DepPoint != 0 {
				return true
			}
			if _, ok := tape.ConstValue(x); ok {
				return false
			}
			k := exprKeys.Of(x)
			if _, ok := subst[k]; !ok {
				subst[k] = it.slots.Aux()
				hoisted = append(hoisted, x)
				it.auxSlots = append(it.auxSlots, subst[k])
			}
			return false
		})
	}
	coefIdx := make([]int, len(keys))
	for j, i := range cellK {
		coefIdx[i] = j
	}
	it.nCell = len(cellK)
	it.nHoist = len(hoisted)
	for j, i := range pointK {
		coefIdx[i] = it.nCell + it.nHoist + j
	}
	it.nCoef = len(keys) + it.nHoist
	var err error
	if it.cellProg, err = tape.Compile(append(cellE, hoisted...), it.slots); err != nil {
		return nil, err
	}
	if it.pointProg, err = tape.CompileWith(pointE, it.slots, subst, exprKeys); err != nil {
		return nil, err
	}
	// Plans.
	blockOf := func(k key) *blockPlan {
		ro := it.fieldOff[k.tf] + k.tc*lay.Fields[k.tf].Element.NumNodes()
		co := it.fieldOff[k.uf] + k.uc*lay.Fields[k.uf].Element.NumNodes()
		for i := range it.blocks {
			if it.blocks[i].rowOff == ro && it.blocks[i].colOff == co {
				return &it.blocks[i]
			}
		}
		it.blocks = append(it.blocks, blockPlan{rowOff: ro, colOff: co, nr: lay.Fields[k.tf].Element.NumNodes(), nc: lay.Fields[k.uf].Element.NumNodes()})
		return &it.blocks[len(it.blocks)-1]
	}
	for i, k := range keys {
		tv := vecID(k.tf, k.tD)
		if k.linear {
			it.linear = append(it.linear, linPlan{
				rowOff: it.fieldOff[k.tf] + k.tc*lay.Fields[k.tf].Element.NumNodes(),
				nr:     lay.Fields[k.tf].Element.NumNodes(), vec: tv, coef: coefIdx[i],
			})
			continue
		}
		bp := blockOf(k)
		uv := vecID(k.uf, k.uD)
		found := false
		for j := range bp.betas {
			if bp.betas[j].vec == tv {
				bp.betas[j].alphas = append(bp.betas[j].alphas, alphaPlan{uv, coefIdx[i]})
				found = true
			}
		}
		if !found {
			bp.betas = append(bp.betas, betaPlan{vec: tv, alphas: []alphaPlan{{uv, coefIdx[i]}}})
		}
	}
	for _, p := range it.slots.Previous() {
		if p.Field < 0 || p.Field >= len(lay.Fields) || p.Comp < 0 || p.Comp >= lay.Fields[p.Field].Components {
			return nil, fmt.Errorf("interp: previous iterate of field %d component %d out of range", p.Field, p.Comp)
		}
		it.prev = append(it.prev, prevPlan{
			slot: p.Slot,
			off:  it.fieldOff[p.Field] + p.Comp*lay.Fields[p.Field].Element.NumNodes(),
			vec:  vecID(p.Field, p.D),
		})
	}
	for _, p := range it.slots.Recovered() {
		if p.Field < 0 || p.Field >= len(lay.Fields) || p.Comp < 0 || p.Comp >= lay.Fields[p.Field].Components {
			return nil, fmt.Errorf("interp: recovered derivative of field %d component %d out of range", p.Field, p.Comp)
		}
		i, j := axisOf(p.D, 0), axisOf(p.D, 1)
		var di, dj [3]uint8
		di[i], dj[j] = 1, 1
		nn := lay.Fields[p.Field].Element.NumNodes()
		it.rec = append(it.rec, recPlan{slot: p.Slot, off: it.fieldOff[p.Field] + p.Comp*nn, nn: nn,
			i: i, j: j, vi: vecID(p.Field, di), vj: vecID(p.Field, dj)})
	}
	return it, nil
}

func usesQuantity(e ir.Expr, want ir.Quantity) bool {
	found := false
	ir.InspectOnce(e, func(x ir.Expr) bool {
		if q, ok := x.(*ir.CellQ); ok && q.Q == want {
			found = true
		}
		return !found
	})
	return found
}

// NeedsPrevious reports whether the coefficients read a previous iterate
// (directly or through its recovered derivatives).
func (it *integrand) NeedsPrevious() bool { return len(it.prev) > 0 || len(it.rec) > 0 }

func (it *integrand) newScratch(tabs []*element.Table) *scratch {
	s := &scratch{
		env:   make([]float64, it.slots.Len()),
		coef:  make([]float64, it.nCoef),
		stack: make([]float64, max(it.cellProg.StackSize(), it.pointProg.StackSize())),
	}
	for _, t := range tabs {
		s.pg = append(s.pg, t.NewPointGeometry())
	}
	d := it.lay.Cell.Dim()
	s.J, s.JInv = make([]float64, d*d), make([]float64, d*d)
	maxN := 0
	for _, e := range it.elems {
		maxN = max(maxN, e.NumNodes())
	}
	for range it.vecs {
		s.vec = append(s.vec, make([]float64, maxN))
	}
	s.t = make([]float64, maxN)
	return s
}

// beginCell fills the per-cell environment and evaluates the per-cell
// coefficients.
func (it *integrand) beginCell(s *scratch, in *kernel.CellInput) {
	c := it.lay.Cell
	if it.needDiam {
		s.env[tape.SlotCellDiameter] = kernel.CellDiameter(c, in.Coords)
	}
	if it.needVol {
		s.env[tape.SlotCellVolume] = kernel.CellVolume(c, in.Coords)
	}
	s.env[tape.SlotT] = in.Time
	s.env[tape.SlotStep] = in.Step
	it.cellProg.Eval(s.env, s.coef[:it.nCell+it.nHoist], s.stack)
	for j, slot := range it.auxSlots {
		s.env[slot] = s.coef[it.nCell+j]
	}
}

// pointCoefs evaluates the coefficients that vary inside the cell.
func (it *integrand) pointCoefs(s *scratch) {
	it.pointProg.Eval(s.env, s.coef[it.nCell+it.nHoist:], s.stack)
}

// affineCell computes, on a simplex with its linear geometry, the
// constant Jacobian J = [x_1 − x_0, ..., x_d − x_0], its inverse, det J and
// the metric G = J^{-T} J^{-1} once per cell. It reports false for
// det J <= 0.
func (it *integrand) affineCell(s *scratch, coords []float64) bool {
	d := it.lay.Cell.Dim()
	J := s.J[:d*d]
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			J[i*d+j] = coords[(j+1)*d+i] - coords[i]
		}
	}
	det := element.Invert(d, J, s.JInv[:d*d])
	s.det = det
	if !(det > 0) {
		return false
	}
	Ji := s.JInv
	for i := 0; i < d; i++ {
		for j := 0; j < d; j++ {
			g := 0.0
			for k := 0; k < d; k++ {
				g += Ji[k*d+i] * Ji[k*d+j]
			}
			s.env[tape.SlotG+3*i+j] = g
		}
	}
	return true
}

// point prepares quadrature point q with tables tabs (one per element):
// the geometry, the basis-derivative vectors, the per-point environment
// (x, G; facet kernels add the normal) and the previous-iterate values. It
// returns the cell quadrature weight w_q·|det J| and false for a
// non-positive Jacobian.
//
// On simplices (affine map, linear geometry) the Jacobian comes from
// affineCell and the physical derivatives are J^{-T}∇_ξφ and
// J^{-T}H_ξφ J^{-1}; otherwise element.Table.Map computes them, with the
// curvature term of the non-affine map in the Hessians.
func (it *integrand) point(s *scratch, tabs []*element.Table, q int, in *kernel.CellInput) (float64, bool) {
	d := it.lay.Cell.Dim()
	var w float64
	if it.affine {
		if q == 0 && !it.affineCell(s, in.Coords) {
			return 0, false
		}
		xi := tabs[0].Rule.Points[q*d : (q+1)*d]
		J := s.J
		for i := 0; i < d; i++ {
			x := in.Coords[i]
			for j := 0; j < d; j++ {
				x += J[i*d+j] * xi[j]
			}
			s.env[tape.SlotX+i] = x
		}
		w = tabs[0].Rule.Weights[q] * s.det
	} else {
		for i, t := range tabs {
			if err := t.Map(in.Coords, q, s.pg[i]); err != nil {
				return 0, false
			}
		}
		pg := s.pg[0]
		copy(s.env[tape.SlotX:tape.SlotX+d], pg.X)
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				s.env[tape.SlotG+3*i+j] = pg.G[i*d+j]
			}
		}
		copy(s.J, pg.J)
		copy(s.JInv, pg.JInv)
		w = pg.Weight
	}
	Ji := s.JInv
	for v, spec := range it.vecs {
		t := tabs[spec.elem]
		nn := it.elems[spec.elem].NumNodes()
		dst := s.vec[v][:nn]
		o := int(spec.D[0]) + int(spec.D[1]) + int(spec.D[2])
		if o == 0 {
			copy(dst, t.Value(q))
			continue
		}
		k := axisOf(spec.D, 0)
		if !it.affine {
			g := s.pg[spec.elem]
			if o == 1 {
				for i := range dst {
					dst[i] = g.Grad[i*d+k]
				}
			} else {
				l := axisOf(spec.D, 1)
				for i := range dst {
					dst[i] = g.Hess[(i*d+k)*d+l]
				}
			}
			continue
		}
		if o == 1 {
			gr := t.Grads[q*nn*d : (q+1)*nn*d]
			for i := range dst {
				v := 0.0
				for m := 0; m < d; m++ {
					v += Ji[m*d+k] * gr[i*d+m]
				}
				dst[i] = v
			}
			continue
		}
		l := axisOf(spec.D, 1)
		hs := t.Hess[q*nn*d*d : (q+1)*nn*d*d]
		for i := range dst {
			v := 0.0
			for m := 0; m < d; m++ {
				for p := 0; p < d; p++ {
					v += Ji[m*d+k] * hs[(i*d+m)*d+p] * Ji[p*d+l]
				}
			}
			dst[i] = v
		}
	}
	for _, p := range it.prev {
		v := s.vec[p.vec]
		nn := it.elems[it.vecs[p.vec].elem].NumNodes()
		if in.Previous == nil {
			s.env[p.slot] = 0
			continue
		}
		sum := 0.0
		pv := in.Previous[p.off:]
		for i := 0; i < nn && i < len(pv); i++ {
			sum += pv[i] * v[i]
		}
		s.env[p.slot] = sum
	}
	for _, p := range it.rec {
		if in.Recovered == nil {
			s.env[p.slot] = 0
			continue
		}
		vi, vj := s.vec[p.vi][:p.nn], s.vec[p.vj][:p.nn]
		sum := 0.0
		for a := 0; a < p.nn; a++ {
			l := (p.off + a) * d
			sum += in.Recovered[l+p.i]*vj[a] + in.Recovered[l+p.j]*vi[a]
		}
		s.env[p.slot] = sum / 2
	}
	return w, true
}

// table tabulates element ei of the integrand on rule, telling Map to skip
// the physical Hessians when no term or previous-iterate value needs a
// second derivative of that element's basis.
func (it *integrand) table(ei int, e, geom *element.Element, rule quadrature.Rule) *element.Table {
	t := e.SampleWith(geom, rule)
	t.NoHessians = true
	for _, v := range it.vecs {
		if v.elem == ei && int(v.D[0])+int(v.D[1])+int(v.D[2]) == 2 {
			t.NoHessians = false
		}
	}
	return t
}

// axisOf returns the axis of the (which+1)-th unit in the multi-index D
// (D of order 1 or 2).
func axisOf(D [3]uint8, which int) int {
	n := 0
	for k := 0; k < 3; k++ {
		for r := uint8(0); r < D[k]; r++ {
			if n == which {
				return k
			}
			n++
		}
	}
	return 0
}

// accumulate adds weight w times the integrand at the current point.
func (it *integrand) accumulate(s *scratch, w float64, A, b []float64) {
	n := it.n
	coef := s.coef
	for bi := range it.blocks {
		bp := &it.blocks[bi]
		t := s.t[:bp.nc]
		for _, be := range bp.betas {
			clear(t)
			for _, a := range be.alphas {
				c := w * coef[a.coef]
				u := s.vec[a.vec][:bp.nc]
				for j, x := range u {
					t[j] += c * x
				}
			}
			tv := s.vec[be.vec][:bp.nr]
			for i, x := range tv {
				if x == 0 {
					continue
				}
				row := A[(bp.rowOff+i)*n+bp.colOff : (bp.rowOff+i)*n+bp.colOff+bp.nc]
				for j, y := range t {
					row[j] += x * y
				}
			}
		}
	}
	for _, lp := range it.linear {
		c := w * coef[lp.coef]
		v := s.vec[lp.vec][:lp.nr]
		bb := b[lp.rowOff : lp.rowOff+lp.nr]
		for i, x := range v {
			bb[i] += c * x
		}
	}
}

func fillNaN(A, b []float64) {
	nan := math.NaN()
	for i := range A {
		A[i] = nan
	}
	for i := range b {
		b[i] = nan
	}
}

// Kernel is the interpreted cell kernel of a lowered form: it implements
// kernel.Kernel and kernel.Forker.
type Kernel struct {
	it   *integrand
	tabs []*element.Table
	rule quadrature.Rule
	s    *scratch
}

var (
	_ kernel.Kernel      = (*Kernel)(nil)
	_ kernel.Forker      = (*Kernel)(nil)
	_ kernel.FacetKernel = (*FacetKernel)(nil)
)

func splitIntegrals(form *ir.LoweredForm, side string) (bil, lin []ir.Term) {
	for _, in := range form.Integrals {
		if in.Domain.Side == side {
			bil = append(bil, in.Bilinear...)
			lin = append(lin, in.Linear...)
		}
	}
	return bil, lin
}

// NewKernel builds the interpreted kernel of the cell integrals of form
// (all integrals with Domain.Side == "") on cells of type c.
func NewKernel(form *ir.LoweredForm, c cell.Type, opts Options) (*Kernel, error) {
	lay, deg, err := layoutAndDegree(form, c, opts)
	if err != nil {
		return nil, err
	}
	bil, lin := splitIntegrals(form, "")
	it, err := newIntegrand(form, lay, bil, lin)
	if err != nil {
		return nil, err
	}
	k := &Kernel{it: it, rule: quadrature.For(c, deg)}
	for ei, e := range it.elems {
		k.tabs = append(k.tabs, it.table(ei, e, lay.Geometry, k.rule))
	}
	k.s = it.newScratch(k.tabs)
	return k, nil
}

// Layout implements kernel.Kernel.
func (k *Kernel) Layout() kernel.Layout { return k.it.lay }

// Fork implements kernel.Forker: same tables and tapes, new scratch.
func (k *Kernel) Fork() kernel.Kernel {
	f := *k
	f.s = k.it.newScratch(k.tabs)
	return &f
}

// Rule is the quadrature rule the kernel integrates with.
func (k *Kernel) Rule() quadrature.Rule { return k.rule }

// NeedsPrevious reports whether the form's coefficients read a previous
// iterate (a nonlinear problem solved by Picard iteration).
func (k *Kernel) NeedsPrevious() bool { return k.it.NeedsPrevious() }

// Cell implements kernel.Kernel. On a cell with a non-positive Jacobian
// determinant it fills A and b with NaN, which the linear solvers report
// as a *linsolve.NonFiniteError. It does not allocate.
func (k *Kernel) Cell(in *kernel.CellInput, A, b []float64) {
	it, s := k.it, k.s
	clear(A[:it.n*it.n])
	clear(b[:it.n])
	it.beginCell(s, in)
	for q := 0; q < k.rule.NumPoints(); q++ {
		w, ok := it.point(s, k.tabs, q, in)
		if !ok {
			fillNaN(A[:it.n*it.n], b[:it.n])
			return
		}
		it.pointCoefs(s)
		it.accumulate(s, w, A, b)
	}
}
