package compiler

import (
	"fmt"
	"math/big"
	"sort"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
)

// Lower produces the component-level discrete problem for one method, the
// input of the runtime and the kernel generator.
//
// For a nonlinear model (d.Linear set) it is the Newton step of
// LowerNonlinear, ir.NonlinearForm.Step: the linear problem J(u_k; δu, v)
// = −F(u_k; v) for the increment δu, with Newton set.
func (d *Derivation) Lower(meth Method) (*ir.LoweredForm, error) {
	m := d.Model
	if d.Linear != nil {
		nf, err := d.LowerNonlinear(meth)
		if err != nil {
			return nil, err
		}
		return nf.Step(), nil
	}
	form := d.form(meth)
	if form == nil {
		return nil, fmt.Errorf("method %s was not derived", meth)
	}
	l := newLowerer(m)
	for _, fs := range form.Fine {
		l.fine[fs.Sym.Name] = fs.Def
	}
	p := m.Equations[0].Pos
	cell := []ir.Expr{d.Galerkin.Bilinear, ir.Neg(p, d.Galerkin.Source)}
	for _, s := range form.Stab {
		cell = append(cell, s.Integrand(m.Dim))
	}
	if form.Cross != nil {
		cell = append(cell, form.Cross)
	}
	if c := captureIntegrand(m, form.Capture); c != nil {
		cell = append(cell, c)
	}
	lf := &ir.LoweredForm{Method: meth.String(), Dim: m.Dim}
	for _, u := range m.Unknowns {
		lf.Unknowns = append(lf.Unknowns, ir.LoweredUnknown{Name: u.Name, Rank: u.Rank, Element: u.Element, Constraint: m.IsConstraint(u.Index)})
	}
	in, err := l.collect(Simplify(ir.Sum(p, cell...), m.Dim), ir.Domain{})
	if err != nil {
		return nil, err
	}
	lf.Integrals = append(lf.Integrals, in)
	for _, b := range d.Galerkin.Boundary {
		in, err := l.collect(b.Integrand, ir.Domain{Side: b.Side})
		if err != nil {
			return nil, err
		}
		lf.Integrals = append(lf.Integrals, in)
	}
	l.conditions(lf)
	if d.recovers(meth) {
		recoverSecondDerivatives(lf, m.Dim)
	}
	lf.MaxDerivative = maxDeriv(lf.Integrals)
	return lf, nil
}

// conditions adds the model's value and mean conditions to lf, its
// boundary parts and where each condition applies, and the quadrature
// degree the model asks for.
func (l *lowerer) conditions(lf *ir.LoweredForm) {
	m := l.m
	for _, bc := range m.BCs {
		if bc.Kind != ValueBC {
			continue
		}
		vals := l.Lower(bc.Value)
		for _, side := range bc.Sides {
			for c, v := range vals {
				lf.Dirichlet = append(lf.Dirichlet, ir.DirichletCondition{Side: side, Unknown: bc.Unknown, Comp: c, Value: v})
			}
		}
	}
	for _, bc := range m.BCs {
		cl := ir.Claim{Unknown: bc.Unknown, Kind: bc.Kind.String(), Parts: bc.Sides, PartPos: bc.SidePos, Pos: bc.Pos}
		if len(cl.PartPos) != len(cl.Parts) {
			cl.PartPos = make([]source.Pos, len(cl.Parts))
			for i := range cl.PartPos {
				cl.PartPos[i] = bc.Pos
			}
		}
		lf.Claims = append(lf.Claims, cl)
	}
	for _, p := range m.Parts {
		set, _ := p.Set.Map(func(e ir.Expr) (ir.Expr, error) { return l.Lower(e)[0], nil })
		lf.Parts = append(lf.Parts, ir.PartDef{Name: p.Name, Set: set, Pos: p.Pos})
	}
	for _, mc := range m.Means {
		lf.Means = append(lf.Means, ir.MeanCondition{Unknown: mc.Unknown, Value: l.Lower(mc.Value)[0]})
	}
	if m.Quadrature > 0 {
		lf.Degree = m.Quadrature
	}
}

// LowerExpr writes an expression of the model as its scalar components
// (row-major), with coefficients and τ substituted: the form the runtime
// evaluates.
func LowerExpr(m *Model, e ir.Expr) []ir.Expr { return newLowerer(m).Lower(e) }

// lowerer writes tensor expressions as lists of scalar component
// expressions (row-major, dim^rank entries), substituting the definitions of
// coefficients and τ, so that only fields, coordinates, time and cell
// quantities remain.
type lowerer struct {
	m    *Model
	dim  int
	memo map[string][]ir.Expr
	// done holds the components of every node lowered so far, so a
	// subexpression shared by several parents is lowered once and its
	// components shared.
	done map[ir.Expr][]ir.Expr
	// tt memoises whether a lowered node holds a trial or test field.
	tt map[ir.Expr]bool
	// fine holds the definitions of the fine-scale and Gateaux symbols of
	// the form being lowered, by symbol name.
	fine map[string]ir.Expr
	// newton lowers a nonlinear model's forms: the state u (Role Trial)
	// becomes the iterate (Role Previous) and the increment δu (Role
	// Increment) the trial function.
	newton bool
}

func newLowerer(m *Model) *lowerer {
	return &lowerer{m: m, dim: m.Dim, memo: map[string][]ir.Expr{}, fine: map[string]ir.Expr{},
		done: map[ir.Expr][]ir.Expr{}, tt: map[ir.Expr]bool{}}
}

func (l *lowerer) pow(r int) int {
	n := 1
	for i := 0; i < r; i++ {
		n *= l.dim
	}
	return n
}

// Lower returns the scalar components of e, simplified.
func (l *lowerer) Lower(e ir.Expr) []ir.Expr {
	c := l.lower(e)
	for i := range c {
		c[i] = Simplify(c[i], l.dim)
	}
	return c
}

func (l *lowerer) lower(e ir.Expr) []ir.Expr {
	if c, ok := l.done[e]; ok {
		return c
	}
	c := l.lowerNode(e)
	l.done[e] = c
	return c
}

func (l *lowerer) lowerNode(e ir.Expr) []ir.Expr {
	p := e.Pos()
	at := ir.At{P: p}
	switch e := e.(type) {
	case *ir.Num, *ir.Const, *ir.Coord, *ir.Time, *ir.CellQ, *ir.FieldD:
		return []ir.Expr{e}
	case *ir.Sym:
		return l.sym(e)
	case *ir.Field:
		if l.newton {
			switch e.Role {
			case ir.Trial:
				f := *e
				f.Role = ir.Previous
				e = &f
			case ir.Increment:
				f := *e
				f.Role = ir.Trial
				e = &f
			}
		}
		if e.R == 0 {
			return []ir.Expr{&ir.FieldD{At: at, Field: e}}
		}
		out := make([]ir.Expr, l.dim)
		for i := range out {
			out[i] = &ir.FieldD{At: at, Field: e, Comp: i}
		}
		return out
	case *ir.Add:
		var acc [][]ir.Expr
		for _, t := range e.Terms {
			acc = append(acc, l.lower(t))
		}
		out := make([]ir.Expr, len(acc[0]))
		for i := range out {
			parts := make([]ir.Expr, len(acc))
			for j := range acc {
				parts[j] = acc[j][i]
			}
			out[i] = ir.Sum(p, parts...)
		}
		return out
	case *ir.Mul:
		var scal []ir.Expr
		var tens []ir.Expr
		for _, f := range e.Factors {
			c := l.lower(f)
			if f.Rank() == 0 {
				scal = append(scal, c[0])
			} else {
				tens = c
			}
		}
		if tens == nil {
			return []ir.Expr{ir.Prod(p, scal...)}
		}
		out := make([]ir.Expr, len(tens))
		for i, t := range tens {
			out[i] = ir.Prod(p, append(append([]ir.Expr(nil), scal...), t)...)
		}
		return out
	case *ir.Pow:
		return []ir.Expr{&ir.Pow{At: at, Base: l.lower(e.Base)[0], Exp: l.lower(e.Exp)[0]}}
	case *ir.Call:
		if e.Fn == ir.Norm {
			a := l.lower(e.Args[0])
			sq := make([]ir.Expr, len(a))
			for i, x := range a {
				sq[i] = &ir.Pow{At: at, Base: x, Exp: ir.Int(p, 2)}
			}
			return []ir.Expr{&ir.Pow{At: at, Base: ir.Sum(p, sq...), Exp: ir.Rat(p, 1, 2)}}
		}
		args := make([]ir.Expr, len(e.Args))
		for i, a := range e.Args {
			args[i] = l.lower(a)[0]
		}
		return []ir.Expr{&ir.Call{At: at, Fn: e.Fn, Args: args}}
	case *ir.Vec:
		var out []ir.Expr
		for _, x := range e.Elems {
			out = append(out, l.lower(x)...)
		}
		return out
	case *ir.Comp:
		c := l.lower(e.X)
		n := l.pow(e.X.Rank() - 1)
		return c[e.I*n : (e.I+1)*n]
	case *ir.Dot:
		a, b := l.lower(e.A), l.lower(e.B)
		na, nb := l.pow(e.A.Rank()-1), l.pow(e.B.Rank()-1)
		out := make([]ir.Expr, na*nb)
		for i := 0; i < na; i++ {
			for j := 0; j < nb; j++ {
				parts := make([]ir.Expr, l.dim)
				for k := 0; k < l.dim; k++ {
					parts[k] = ir.Prod(p, a[i*l.dim+k], b[k*nb+j])
				}
				out[i*nb+j] = ir.Sum(p, parts...)
			}
		}
		return out
	case *ir.DDot:
		a, b := l.lower(e.A), l.lower(e.B)
		parts := make([]ir.Expr, len(a))
		for i := range a {
			parts[i] = ir.Prod(p, a[i], b[i])
		}
		return []ir.Expr{ir.Sum(p, parts...)}
	case *ir.Outer:
		a, b := l.lower(e.A), l.lower(e.B)
		out := make([]ir.Expr, 0, len(a)*len(b))
		for _, x := range a {
			for _, y := range b {
				out = append(out, ir.Prod(p, x, y))
			}
		}
		return out
	case *ir.Grad:
		c := l.lower(e.X)
		out := make([]ir.Expr, 0, len(c)*l.dim)
		for _, x := range c {
			for k := 0; k < l.dim; k++ {
				out = append(out, &ir.Partial{At: at, X: x, Axis: k})
			}
		}
		return out
	case *ir.Div:
		c := l.lower(e.X)
		n := len(c) / l.dim
		out := make([]ir.Expr, n)
		for i := 0; i < n; i++ {
			parts := make([]ir.Expr, l.dim)
			for k := 0; k < l.dim; k++ {
				parts[k] = &ir.Partial{At: at, X: c[i*l.dim+k], Axis: k}
			}
			out[i] = ir.Sum(p, parts...)
		}
		return out
	case *ir.Lap:
		c := l.lower(e.X)
		out := make([]ir.Expr, len(c))
		for i, x := range c {
			parts := make([]ir.Expr, l.dim)
			for k := 0; k < l.dim; k++ {
				parts[k] = &ir.Partial{At: at, X: &ir.Partial{At: at, X: x, Axis: k}, Axis: k}
			}
			out[i] = ir.Sum(p, parts...)
		}
		return out
	case *ir.Partial:
		c := l.lower(e.X)
		out := make([]ir.Expr, len(c))
		for i, x := range c {
			out[i] = &ir.Partial{At: at, X: x, Axis: e.Axis}
		}
		return out
	case *ir.TimeDeriv:
		c := l.lower(e.X)
		out := make([]ir.Expr, len(c))
		for i, x := range c {
			out[i] = &ir.TimeDeriv{At: at, X: x}
		}
		return out
	}
	panic(fmt.Sprintf("compiler: lower: unexpected %T", e))
}

func (l *lowerer) sym(s *ir.Sym) []ir.Expr {
	at := ir.At{P: s.P}
	switch s.Kind {
	case ir.Coefficient:
		key := "c:" + s.Name
		if c, ok := l.memo[key]; ok {
			return c
		}
		cf := l.m.Coef(s.Name)
		if cf == nil {
			panic("compiler: lower: unknown coefficient " + s.Name)
		}
		c := l.named(cf.Sym, l.Lower(cf.Def))
		l.memo[key] = c
		return c
	case ir.FineScale, ir.LaggedFineScale, ir.Gateaux:
		key := "f:" + s.Name
		if c, ok := l.memo[key]; ok {
			return c
		}
		def, ok := l.fine[s.Name]
		if !ok {
			panic("compiler: lower: unknown fine-scale velocity " + s.Name)
		}
		c := l.named(s, l.Lower(def))
		l.memo[key] = c
		return c
	case ir.Tau:
		key := "t:" + s.Name
		if c, ok := l.memo[key]; ok {
			return c
		}
		for i, ts := range l.m.TauSym {
			if ts != nil && ts.Name == s.Name {
				c := l.named(ts, l.Lower(l.m.Tau[i]))
				l.memo[key] = c
				return c
			}
		}
		panic("compiler: lower: unknown tau " + s.Name)
	case ir.Capture:
		key := "c:" + s.Name
		if c, ok := l.memo[key]; ok {
			return c
		}
		def := l.m.captureDefinition(s)
		if def == nil {
			panic("compiler: lower: unknown capture diffusivity " + s.Name)
		}
		c := l.named(s, l.Lower(def))
		l.memo[key] = c
		return c
	case ir.CellQuantity:
		if s.Q == ir.InverseEstimate {
			// A constant of the elements, not of the cell: lowered to its
			// value so that every kernel, interpreted or generated, uses
			// the same number.
			v, _ := l.m.InverseEstimate()
			r := new(big.Rat)
			r.SetFloat64(v)
			return []ir.Expr{&ir.Num{At: at, Val: r}}
		}
		switch s.R {
		case 0:
			return []ir.Expr{&ir.CellQ{At: at, Q: s.Q}}
		case 1:
			out := make([]ir.Expr, l.dim)
			for i := range out {
				out[i] = &ir.CellQ{At: at, Q: s.Q, I: i}
			}
			return out
		}
		out := make([]ir.Expr, 0, l.dim*l.dim)
		for i := 0; i < l.dim; i++ {
			for j := 0; j < l.dim; j++ {
				out = append(out, &ir.CellQ{At: at, Q: s.Q, I: i, J: j})
			}
		}
		return out
	}
	panic("compiler: lower: unexpected symbol " + s.Name)
}

// named wraps each lowered component of symbol s in an ir.Named, so the
// symbol keeps its name through lowering. Numbers stay bare (they fold
// into the expressions that use them), and so do components that contain
// the unknown or the test function (the form's terms are read off them).
func (l *lowerer) named(s *ir.Sym, comps []ir.Expr) []ir.Expr {
	out := make([]ir.Expr, len(comps))
	for k, c := range comps {
		switch c.(type) {
		case *ir.Num, *ir.Const, *ir.Named:
			out[k] = c
			continue
		}
		if hasTT(c) {
			out[k] = c
			continue
		}
		n := &ir.Named{At: ir.At{P: s.P}, Sym: s, X: c}
		switch s.R {
		case 1:
			n.I = k
		case 2:
			n.I, n.J = k/l.dim, k%l.dim
		}
		out[k] = n
	}
	return out
}

// NonlinearError reports a term of a form that is not bilinear.
type NonlinearError struct {
	Pos source.Pos
	Msg string
}

func (e *NonlinearError) Error() string { return fmt.Sprintf("%s: %s", e.Pos, e.Msg) }

// mono is one monomial of an expanded integrand.
type mono struct {
	coef        []ir.Expr
	trial, test *ir.FieldD
}

// monomials expands a lowered scalar integrand into products of a
// coefficient, at most one trial derivative and at most one test
// derivative, distributing only over sums that hold fields (so coefficient
// expressions stay compact).
func (l *lowerer) monomials(e ir.Expr) ([]mono, error) {
	switch e := e.(type) {
	case *ir.FieldD:
		switch e.Field.Role {
		case ir.Trial:
			return []mono{{trial: e}}, nil
		case ir.Test:
			return []mono{{test: e}}, nil
		}
	case *ir.Add:
		if l.hasTT(e) {
			var out []mono
			for _, t := range e.Terms {
				ms, err := l.monomials(t)
				if err != nil {
					return nil, err
				}
				out = append(out, ms...)
			}
			return out, nil
		}
	case *ir.Mul:
		if l.hasTT(e) {
			acc := []mono{{}}
			for _, f := range e.Factors {
				ms, err := l.monomials(f)
				if err != nil {
					return nil, err
				}
				var next []mono
				for _, a := range acc {
					for _, b := range ms {
						if (a.trial != nil && b.trial != nil) || (a.test != nil && b.test != nil) {
							return nil, &NonlinearError{e.P, "term is not bilinear in the unknown and the test function"}
						}
						c := mono{coef: append(append([]ir.Expr(nil), a.coef...), b.coef...), trial: a.trial, test: a.test}
						if b.trial != nil {
							c.trial = b.trial
						}
						if b.test != nil {
							c.test = b.test
						}
						next = append(next, c)
					}
				}
				acc = next
			}
			return acc, nil
		}
	case *ir.Pow:
		if l.hasTT(e) {
			if n, ok := e.Exp.(*ir.Num); ok && n.Val.Cmp(big.NewRat(1, 1)) == 0 {
				return l.monomials(e.Base)
			}
			return nil, &NonlinearError{e.P, "the unknown or the test function appears inside a power"}
		}
	}
	if l.hasTT(e) {
		return nil, &NonlinearError{e.Pos(), "the unknown or the test function appears inside a function"}
	}
	return []mono{{coef: []ir.Expr{e}}}, nil
}

func hasTT(e ir.Expr) bool { return ir.HasRole(e, ir.Trial) || ir.HasRole(e, ir.Test) }

// hasTT is hasTT memoised per node.
func (l *lowerer) hasTT(e ir.Expr) bool {
	if v, ok := l.tt[e]; ok {
		return v
	}
	v := false
	switch e := e.(type) {
	case *ir.FieldD:
		v = e.Field.Role == ir.Trial || e.Field.Role == ir.Test
	case *ir.Field:
		v = e.Role == ir.Trial || e.Role == ir.Test
	default:
		for _, k := range ir.Children(e) {
			if l.hasTT(k) {
				v = true
				break
			}
		}
	}
	l.tt[e] = v
	return v
}

func fdKey(f *ir.FieldD) [7]int {
	if f == nil {
		return [7]int{-1}
	}
	return [7]int{f.Field.Index, int(f.Field.Role), f.Comp, int(f.D[0]), int(f.D[1]), int(f.D[2]), int(f.DT)}
}

func lessKey(a, b [7]int) bool {
	for i := range a {
		if a[i] != b[i] {
			return a[i] < b[i]
		}
	}
	return false
}

// collect lowers a scalar integrand of B − F and gathers its terms by
// (test derivative, trial derivative), simplifying each coefficient.
func (l *lowerer) collect(integrand ir.Expr, dom ir.Domain) (ir.Integral, error) {
	out := ir.Integral{Domain: dom}
	low := l.Lower(integrand)[0]
	ms, err := l.monomials(low)
	if err != nil {
		return out, err
	}
	type key struct{ test, trial [7]int }
	groups := map[key]*ir.Term{}
	var order []key
	for _, mo := range ms {
		if mo.test == nil {
			if len(mo.coef) == 1 && ir.IsZero(mo.coef[0]) {
				continue
			}
			return out, &NonlinearError{low.Pos(), "a term of the form has no test function"}
		}
		k := key{fdKey(mo.test), fdKey(mo.trial)}
		g, ok := groups[k]
		c := mulOf(low.Pos(), mo.coef...)
		if !ok {
			g = &ir.Term{Coef: c, Trial: mo.trial, Test: mo.test}
			groups[k] = g
			order = append(order, k)
			continue
		}
		g.Coef = ir.Sum(low.Pos(), g.Coef, c)
	}
	sort.Slice(order, func(i, j int) bool {
		if order[i].test != order[j].test {
			return lessKey(order[i].test, order[j].test)
		}
		return lessKey(order[i].trial, order[j].trial)
	})
	for _, k := range order {
		g := groups[k]
		g.Coef = Simplify(g.Coef, l.dim)
		if ir.IsZero(g.Coef) {
			continue
		}
		if g.Trial == nil {
			// Terms without the unknown move to the right-hand side.
			g.Coef = Simplify(ir.Neg(g.Coef.Pos(), g.Coef), l.dim)
			out.Linear = append(out.Linear, *g)
		} else {
			out.Bilinear = append(out.Bilinear, *g)
		}
	}
	return out, nil
}

// maxDeriv is the highest derivative order on trial or test functions.
func maxDeriv(ints []ir.Integral) int {
	m := 0
	for _, in := range ints {
		for _, ts := range [][]ir.Term{in.Bilinear, in.Linear} {
			for _, t := range ts {
				for _, f := range []*ir.FieldD{t.Trial, t.Test} {
					if f != nil {
						if o := int(f.D[0] + f.D[1] + f.D[2]); o > m {
							m = o
						}
					}
				}
			}
		}
	}
	return m
}
