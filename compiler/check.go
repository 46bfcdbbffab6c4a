package compiler

import (
	"fmt"
	"math/big"
	"slices"
	"sort"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
)

// Loader finds a library module named in a "use" statement and returns its
// file name and source.
type Loader func(name string) (file string, src []byte, err error)

// CheckOptions configure Check.
type CheckOptions struct {
	// Load resolves "use" statements; nil means no library is available.
	Load Loader
	// Partial says the file had syntax errors, so statements may be
	// missing: errors about what is absent (no model, dimension, unknown,
	// equation or τ) are not reported, since the statement may be the one
	// that did not parse.
	Partial bool
}

// builtinNames lists every name the language defines, for "did you mean".
var builtinNames = []string{"grad", "div", "lap", "laplacian", "partial", "dot", "ddot", "outer",
	"norm", "pow", "test", "previous", "increment", "sin", "cos", "tan", "exp", "log", "sqrt", "abs", "tanh", "sinh",
	"cosh", "coth", "min", "max", "sign", "pi", "x", "y", "z", "t", "diam", "meas", "G", "inverse_estimate", "time_step", "residual"}

// retiredNames are spellings of earlier versions of the language, with
// what to write instead.
var retiredNames = map[string]string{
	"cell_diameter": "diam(K)",
	"cell_volume":   "meas(K)",
	"dt":            "partial(u, t)",
}

// defaultSides are the side names of the built-in meshes, by dimension.
var defaultSides = map[int][]string{
	1: {"left", "right"},
	2: {"left", "right", "bottom", "top"},
	3: {"left", "right", "bottom", "top", "front", "back"},
}

type formula struct {
	name   string
	params []lang.Name
	body   lang.Expr
	pos    source.Pos
	active bool // being expanded (recursion check)
}

type coefState uint8

const (
	unchecked coefState = iota
	checking
	checked
)

type coefDecl struct {
	stmt  *lang.GivenStmt
	state coefState
	coef  *Coef
}

type checker struct {
	partial  bool
	m        *Model
	errs     source.ErrorList
	dim      int
	unknowns map[string]*Unknown
	coefs    map[string]*coefDecl
	formulas map[string]*formula
	// partNames are the names of the parts the model defines (parts.go).
	partNames []string
	// Expression context.
	allowTest bool
	// residualFor allows residual(U) (in a capture statement).
	residualFor bool
	params      map[string]ir.Expr
	// expansions shares the expansion of a formula among calls with the
	// same arguments, so a chain of formulas that each call the previous
	// one twice stays linear in size (a DAG, not a tree).
	expansions map[expansionKey]ir.Expr
}

// expansionKey identifies a formula call by the formula, the context and
// the identity of its checked arguments.
type expansionKey struct {
	fm        *formula
	allowTest bool
	args      string
}

// Check resolves and types a parsed model file, returning the model and
// every error found (syntax errors are the parser's; these are semantic).
func Check(f *lang.File, opts CheckOptions) (*Model, source.ErrorList) {
	c := &checker{
		partial:  opts.Partial,
		m:        &Model{File: f.Name, Sources: map[string][]byte{f.Name: f.Src}},
		unknowns: map[string]*Unknown{},
		coefs:    map[string]*coefDecl{},
		formulas: map[string]*formula{},
	}
	c.declare(f, opts)
	if c.m.Dim == 0 {
		return c.m, c.errs
	}
	c.checkCoefs()
	c.checkEquations(f)
	c.checkParts(f) // parts.go
	c.checkBoundaries(f)
	c.checkMeans(f)
	c.checkQuadrature(f)
	c.checkStabilisation(f)
	c.checkCapture(f)
	c.checkTimeStep()
	if len(c.errs) == 0 {
		c.checkFinite()
	}
	c.errs.Sort()
	return c.m, c.errs
}

// MaxQuadrature is the highest quadrature degree a model may ask for
// (Gauss rules of 16 points per direction; far beyond what a kernel
// needs, a bound on the cost of a typo).
const MaxQuadrature = 31

// checkQuadrature reads the quadrature statement: one, with a degree from
// 1 to MaxQuadrature.
func (c *checker) checkQuadrature(f *lang.File) {
	var first *lang.QuadratureStmt
	for _, s := range f.Stmts {
		q, ok := s.(*lang.QuadratureStmt)
		if !ok {
			continue
		}
		switch {
		case first != nil:
			c.errorf(q.Pos(), q.End(), "", "second quadrature statement (first at %s)", first.Pos())
			continue
		case q.Degree < 1 || q.Degree > MaxQuadrature:
			c.errorf(q.DegreePos, q.DegreeEnd, fmt.Sprintf("give a degree from 1 to %d", MaxQuadrature), "quadrature degree %d out of range", q.Degree)
			continue
		}
		first = q
		c.m.Quadrature = q.Degree
	}
}

// checkMeans checks the mean conditions: a scalar unknown, at most one
// each, no value condition on the same unknown (which would fix the
// constant already), and a constant value.
func (c *checker) checkMeans(f *lang.File) {
	m := c.m
	seen := map[int]source.Pos{}
	for _, s := range f.Stmts {
		s, ok := s.(*lang.MeanStmt)
		if !ok {
			continue
		}
		u := c.lookupUnknown(s.Target)
		if u == nil {
			continue
		}
		if u.Rank != 0 {
			c.errorf(s.Target.Pos, s.Target.End, "a mean condition fixes one constant: the pressure of an enclosed flow, for instance", "mean of %q: only a scalar unknown can have a mean condition", u.Name)
			continue
		}
		if prev, dup := seen[u.Index]; dup {
			c.errorf(s.Pos(), s.End(), "", "second mean condition for %q (first at %s)", u.Name, prev)
			continue
		}
		seen[u.Index] = s.Pos()
		fixed := false
		for _, bc := range m.BCs {
			fixed = fixed || bc.Unknown == u.Index && bc.Kind == ValueBC
		}
		if fixed {
			c.errorf(s.Pos(), s.End(), "remove the mean condition, or the value condition on "+u.Name, "%q has a value condition on the boundary, which fixes its constant already: a mean condition would over-constrain it", u.Name)
			continue
		}
		v := c.exprWith(s.Value, false)
		if v == nil {
			continue
		}
		if v.Rank() != 0 || ir.HasField(v) || ir.Contains(v, func(e ir.Expr) bool {
			switch e := e.(type) {
			case *ir.Coord, *ir.Time:
				return true
			case *ir.Sym:
				return e.Kind == ir.CellQuantity || e.Deps != 0
			}
			return false
		}) {
			c.errorf(s.Value.Pos(), s.Value.End(), "give a number or a constant coefficient", "the mean of %q must be a constant", u.Name)
			continue
		}
		m.Means = append(m.Means, &MeanCondition{Unknown: u.Index, Value: v, Pos: s.Pos()})
	}
}

// checkTimeStep reports time_step in a model without time derivatives:
// the quantity is the Δt of the time integration, and a steady solve has
// none.
func (c *checker) checkTimeStep() {
	m := c.m
	transient := false
	var uses []ir.Expr
	for _, eq := range m.Equations {
		for _, e := range []ir.Expr{eq.Written, eq.Source} {
			if e == nil {
				continue
			}
			ir.InspectOnce(e, func(x ir.Expr) bool {
				if _, ok := x.(*ir.TimeDeriv); ok {
					transient = true
				}
				return true
			})
			uses = append(uses, e)
		}
	}
	firstUse := func(e ir.Expr) *ir.Sym {
		var at *ir.Sym
		if e == nil {
			return nil
		}
		ir.InspectOnce(e, func(x ir.Expr) bool {
			if s, ok := x.(*ir.Sym); ok && s.Kind == ir.CellQuantity && s.Q == ir.TimeStep && at == nil {
				at = s
			}
			return at == nil
		})
		return at
	}
	// Boundary data are evaluated at the nodes, where there is no step.
	for _, bc := range m.BCs {
		if at := firstUse(bc.Value); at != nil {
			c.errorf(at.Pos(), at.Pos(), "boundary data may depend on t, not on the step", "time_step in a boundary condition")
		}
	}
	if transient {
		return
	}
	for _, cf := range m.Coefs {
		uses = append(uses, cf.Def)
	}
	uses = append(uses, m.Tau...)
	uses = append(uses, m.Capture...)
	for _, e := range uses {
		if at := firstUse(e); at != nil {
			p := at.Pos()
			c.errorf(p, p, "time_step is the Δt of a transient model (one with partial(u, t)); give a steady model's value as a coefficient", "time_step in a model without time derivatives")
			return
		}
	}
}

func (c *checker) errorf(pos, end source.Pos, hint, format string, args ...any) {
	c.errs.Add(pos, end, fmt.Sprintf(format, args...), hint)
}

var reserved = map[string]bool{}

func init() {
	for _, n := range builtinNames {
		reserved[n] = true
	}
}

func (c *checker) declared(n lang.Name) bool {
	if reserved[n.Text] {
		c.errorf(n.Pos, n.End, "choose another name", "%q is a built-in name and cannot be redefined", n.Text)
		return true
	}
	var prev source.Pos
	if u, ok := c.unknowns[n.Text]; ok {
		prev = u.Pos
	} else if d, ok := c.coefs[n.Text]; ok {
		prev = d.stmt.Name.Pos
	} else if fm, ok := c.formulas[n.Text]; ok {
		prev = fm.pos
	} else {
		return false
	}
	c.errorf(n.Pos, n.End, "each name is declared once; rename one of them", "%q redeclared (first declared at %s)", n.Text, prev)
	return true
}

func (c *checker) declare(f *lang.File, opts CheckOptions) {
	m := c.m
	var modelSeen, dimSeen *source.Pos
	for _, s := range f.Stmts {
		switch s := s.(type) {
		case *lang.ModelStmt:
			if modelSeen != nil {
				c.errorf(s.Pos(), s.End(), "a file states one model", "second model statement (first at %s)", *modelSeen)
				continue
			}
			p := s.Pos()
			modelSeen = &p
			m.Name = s.Name.Text
		case *lang.DimensionStmt:
			if dimSeen != nil {
				c.errorf(s.Pos(), s.End(), "", "second dimension statement (first at %s)", *dimSeen)
				continue
			}
			p := s.Pos()
			dimSeen = &p
			if s.Dim < 1 || s.Dim > 3 {
				c.errorf(s.DimPos, s.DimEnd, "use 1, 2 or 3", "dimension must be 1, 2 or 3, not %d", s.Dim)
				continue
			}
			m.Dim = s.Dim
		case *lang.SidesStmt:
			for _, n := range s.Names {
				if slices.Contains(m.Sides, n.Text) {
					c.errorf(n.Pos, n.End, "", "side %q listed twice", n.Text)
					continue
				}
				m.Sides = append(m.Sides, n.Text)
			}
		case *lang.UseStmt:
			for _, n := range s.Names {
				c.use(n, opts)
			}
		case *lang.UnknownStmt:
			if c.declared(s.Name) {
				continue
			}
			u := &Unknown{Name: s.Name.Text, Index: len(m.Unknowns), Pos: s.Name.Pos}
			if s.Rank == "vector" {
				u.Rank = 1
			}
			el, err := ir.ParseElement(s.Element.Text)
			switch {
			case err != nil:
				c.errorf(s.Element.Pos, s.Element.End, "use P1 or P2 (simplices) or Q1 or Q2 (quadrilaterals, hexahedra)", "unknown element %q", s.Element.Text)
			case len(m.Unknowns) > 0 && m.Unknowns[0].Element.Family != 0 && m.Unknowns[0].Element.Family != el.Family:
				c.errorf(s.Element.Pos, s.Element.End, fmt.Sprintf("a mesh has one kind of cell: use %c elements here too", m.Unknowns[0].Element.String()[0]),
					"unknown %s uses %v elements, but %s uses %v", u.Name, el, m.Unknowns[0].Name, m.Unknowns[0].Element)
			}
			u.Element = el
			c.unknowns[u.Name] = u
			m.Unknowns = append(m.Unknowns, u)
		case *lang.GivenStmt:
			if c.declared(s.Name) {
				continue
			}
			c.coefs[s.Name.Text] = &coefDecl{stmt: s}
		case *lang.FormulaStmt:
			if c.declared(s.Name) {
				continue
			}
			c.formulas[s.Name.Text] = &formula{name: s.Name.Text, params: s.Params, body: s.Body, pos: s.Name.Pos}
		}
	}
	if modelSeen == nil && !c.partial {
		c.errorf(source.Pos{File: f.Name, Line: 1, Col: 1}, source.Pos{}, "start the file with \"model NAME\"", "missing model statement")
	}
	if dimSeen == nil {
		if !c.partial {
			c.errorf(source.Pos{File: f.Name, Line: 1, Col: 1}, source.Pos{}, "add \"dimension 1\", \"dimension 2\" or \"dimension 3\"", "missing dimension statement")
		}
		return
	}
	c.dim = m.Dim
	if len(m.Sides) == 0 {
		m.Sides = append([]string(nil), defaultSides[m.Dim]...)
	}
	if len(m.Unknowns) == 0 && !c.partial {
		c.errorf(source.Pos{File: f.Name, Line: 1, Col: 1}, source.Pos{}, "declare one with \"unknown u: scalar P1\"", "the model has no unknown")
	}
	for _, u := range m.Unknowns {
		if u.Rank == 1 && m.Dim == 1 {
			c.errorf(u.Pos, source.Pos{}, "in one dimension use a scalar", "vector unknown %q in a 1-dimensional model", u.Name)
		}
	}
}

func (c *checker) use(n lang.Name, opts CheckOptions) {
	if opts.Load == nil {
		c.errorf(n.Pos, n.End, "", "no library to load %q from", n.Text)
		return
	}
	file, src, err := opts.Load(n.Text)
	if err != nil {
		c.errorf(n.Pos, n.End, "the library has: "+libraryHint(opts), "cannot use %q: %v", n.Text, err)
		return
	}
	c.m.Sources[file] = src
	lf, errs := lang.Parse(file, src)
	for _, e := range errs {
		c.errs = append(c.errs, e)
	}
	if lf == nil {
		return
	}
	for _, s := range lf.Stmts {
		switch s := s.(type) {
		case *lang.FormulaStmt:
			if _, dup := c.formulas[s.Name.Text]; dup {
				continue // the same module used twice
			}
			c.formulas[s.Name.Text] = &formula{name: s.Name.Text, params: s.Params, body: s.Body, pos: s.Name.Pos}
		case *lang.ModelStmt:
		default:
			c.errorf(s.Pos(), s.End(), "", "a library module may only define formulas")
		}
	}
}

func libraryHint(opts CheckOptions) string {
	if _, _, err := opts.Load(""); err != nil {
		return strings.TrimPrefix(err.Error(), "library modules: ")
	}
	return ""
}

// depsOf collects the variables an expression depends on.
func depsOf(e ir.Expr) ir.Deps {
	var d ir.Deps
	ir.InspectOnce(e, func(n ir.Expr) bool {
		switch n := n.(type) {
		case *ir.Coord:
			d |= ir.DepAxis(n.Axis)
		case *ir.Time:
			d |= ir.DepT
		case *ir.Sym:
			d |= n.Deps
		case *ir.Field:
			d |= spaceDeps | ir.DepT
		}
		return true
	})
	return d
}

func (c *checker) checkCoefs() {
	names := make([]string, 0, len(c.coefs))
	for n := range c.coefs {
		names = append(names, n)
	}
	sort.Slice(names, func(i, j int) bool {
		return c.coefs[names[i]].stmt.Pos().Offset < c.coefs[names[j]].stmt.Pos().Offset
	})
	for _, n := range names {
		c.coef(n)
	}
	for _, n := range names {
		if d := c.coefs[n]; d.coef != nil {
			c.m.Coefs = append(c.m.Coefs, d.coef)
		}
	}
}

// coef checks a coefficient on first use, so declarations may come in any
// order; a cycle is an error.
func (c *checker) coef(name string) *Coef {
	d := c.coefs[name]
	switch d.state {
	case checked:
		return d.coef
	case checking:
		s := d.stmt
		c.errorf(s.Name.Pos, s.Name.End, "a coefficient cannot be defined through itself", "coefficient %q depends on itself", name)
		return nil
	}
	d.state = checking
	saveTest, saveParams := c.allowTest, c.params
	c.allowTest, c.params = false, nil
	def := c.expr(d.stmt.Value)
	c.allowTest, c.params = saveTest, saveParams
	d.state = checked
	if def == nil {
		return nil
	}
	if ir.HasRole(def, ir.Trial) {
		c.errorf(d.stmt.Value.Pos(), d.stmt.Value.End(), "write the dependence in the equation, or define a formula (formula k(s) = 1 + s^2, then k(u) in the equation), or use previous(u) for a lagged value", "coefficient %q depends on an unknown", name)
		return nil
	}
	sym := &ir.Sym{At: ir.At{P: d.stmt.Name.Pos}, Name: name, Kind: ir.Coefficient, R: def.Rank(), Deps: depsOf(def)}
	d.coef = &Coef{Name: name, Def: def, Sym: sym, Pos: d.stmt.Name.Pos}
	return d.coef
}

func (c *checker) checkEquations(f *lang.File) {
	m := c.m
	byUnknown := map[int]*lang.EquationStmt{}
	for _, s := range f.Stmts {
		s, ok := s.(*lang.EquationStmt)
		if !ok {
			continue
		}
		u := c.lookupUnknown(s.For)
		if u == nil {
			continue
		}
		if prev, dup := byUnknown[u.Index]; dup {
			c.errorf(s.For.Pos, s.For.End, "one equation per unknown", "second equation for %q (first at %s)", u.Name, prev.Pos())
			continue
		}
		byUnknown[u.Index] = s
		lhs := c.expr(s.LHS)
		rhs := c.expr(s.RHS)
		if lhs == nil || rhs == nil {
			continue
		}
		if lhs.Rank() != rhs.Rank() {
			c.errorf(s.RHS.Pos(), s.RHS.End(), "both sides of an equation have the same rank",
				"the left side is a %s but the right side is a %s", rankName(lhs.Rank()), rankName(rhs.Rank()))
			continue
		}
		if lhs.Rank() != u.Rank {
			c.errorf(s.LHS.Pos(), s.LHS.End(), "the equation for a vector unknown is a vector equation, for a scalar a scalar one",
				"the equation for %q is a %s equation but %q is a %s", u.Name, rankName(lhs.Rank()), u.Name, rankName(u.Rank))
			continue
		}
		p := s.Pos()
		whole := ir.Sub(p, lhs, rhs)
		var op, src []ir.Expr
		ok = true
		// Terms with an unknown form the operator, which may be nonlinear
		// in it (compiler.Linearise derives its linearisation); the rest is
		// the source.
		for _, t := range additiveTerms(whole) {
			if ir.HasRole(t, ir.Trial) {
				op = append(op, t)
			} else {
				src = append(src, ir.Neg(t.Pos(), t))
			}
		}
		if !ok {
			continue
		}
		if len(op) == 0 {
			c.errorf(s.LHS.Pos(), s.RHS.End(), fmt.Sprintf("the equation for %q must contain %q", u.Name, u.Name), "the operator does not contain any unknown")
			continue
		}
		eq := &Equation{For: u.Index, Written: ir.Sum(p, op...), Pos: p}
		if len(src) == 0 {
			eq.Source = ir.Zero(p, u.Rank, m.Dim)
		} else {
			eq.Source = ir.Sum(p, src...)
		}
		m.Equations = append(m.Equations, eq)
	}
	if len(c.errs) == 0 && !c.partial {
		for _, u := range m.Unknowns {
			if _, ok := byUnknown[u.Index]; !ok {
				c.errorf(u.Pos, source.Pos{}, fmt.Sprintf("add \"equation for %s: ... = ...\"", u.Name), "no equation for unknown %q", u.Name)
			}
		}
	}
	sort.SliceStable(m.Equations, func(i, j int) bool { return m.Equations[i].For < m.Equations[j].For })
}

func rankName(r int) string {
	switch r {
	case 0:
		return "scalar"
	case 1:
		return "vector"
	}
	return "matrix"
}

// lookupUnknown returns the unknown named n, or reports that there is
// none (with a suggestion) and returns nil.
func (c *checker) lookupUnknown(n lang.Name) *Unknown {
	u, ok := c.unknowns[n.Text]
	if !ok {
		c.unknownName(n, "unknown")
		return nil
	}
	return u
}

func (c *checker) unknownName(n lang.Name, what string) {
	var cand []string
	for k := range c.unknowns {
		cand = append(cand, k)
	}
	sort.Strings(cand)
	hint := ""
	if s := source.Suggest(n.Text, cand); s != "" {
		hint = fmt.Sprintf("did you mean %q?", s)
	} else if len(cand) > 0 {
		hint = "the unknowns are " + strings.Join(cand, ", ")
	}
	c.errorf(n.Pos, n.End, hint, "%q is not an %s of this model", n.Text, what)
}

func (c *checker) checkBoundaries(f *lang.File) {
	m := c.m
	type key struct {
		side string
		u    int
	}
	seen := map[key]source.Pos{}
	for _, s := range f.Stmts {
		s, ok := s.(*lang.BoundaryStmt)
		if !ok {
			continue
		}
		u := c.lookupUnknown(s.Target)
		if u == nil {
			continue
		}
		bc := &BC{Unknown: u.Index, Pos: s.Pos()}
		for _, n := range s.Sides {
			// A side of the mesh, the whole boundary, or a part the
			// model defines (parts.go); the mesh's names are checked
			// against the mesh when the model runs on it.
			if n.Text != ir.AllParts && !slices.Contains(m.Sides, n.Text) && m.Part(n.Text) == nil {
				if !slices.Contains(c.partNames, n.Text) { // a part with errors is reported already
					c.errorf(n.Pos, n.End, c.partHint(n.Text, c.partNames), "%q is neither a side nor a part of this model", n.Text)
				}
				continue
			}
			k := key{n.Text, u.Index}
			if prev, dup := seen[k]; dup {
				c.errorf(n.Pos, n.End, "one condition per unknown and side", "second condition for %q on %q (first at %s)", u.Name, n.Text, prev)
				continue
			}
			prev, dup := seen[key{ir.AllParts, u.Index}]
			if n.Text == ir.AllParts {
				for k, p := range seen {
					if k.u == u.Index && (!dup || p.Offset < prev.Offset) {
						prev, dup = p, true
					}
				}
			}
			if dup {
				c.errorf(n.Pos, n.End, "a condition on all covers the whole boundary: name the other parts instead (part rest = all minus ...)", "second condition for %q on part of the boundary (first at %s)", u.Name, prev)
				continue
			}
			seen[k] = n.Pos
			bc.Sides = append(bc.Sides, n.Text)
			bc.SidePos = append(bc.SidePos, n.Pos)
		}
		v := c.exprWith(s.Value, false)
		if v == nil {
			continue
		}
		if v.Rank() != u.Rank {
			c.errorf(s.Value.Pos(), s.Value.End(), "", "%q is a %s but the condition gives a %s", u.Name, rankName(u.Rank), rankName(v.Rank()))
			continue
		}
		switch {
		case !s.Flux:
			bc.Kind = ValueBC
			if ir.HasRole(v, ir.Trial) {
				c.errorf(s.Value.Pos(), s.Value.End(), "a value condition gives the value; for a condition that involves the unknown use flux(...)", "a prescribed value cannot depend on the unknown")
				continue
			}
		default:
			bc.Kind = FluxBC
			for _, t := range additiveTerms(v) {
				deg, bad := trialDegree(t)
				if bad != nil || deg > 1 {
					c.errorf(t.Pos(), source.Pos{}, "a Robin condition is linear in the unknown: flux(u) = g − β u", "nonlinear boundary condition")
					break
				}
				if deg == 1 {
					bc.Kind = RobinBC
				}
			}
		}
		bc.Value = v
		if len(bc.Sides) > 0 {
			m.BCs = append(m.BCs, bc)
		}
	}
}

func (c *checker) checkStabilisation(f *lang.File) {
	m := c.m
	m.Tau = make([]ir.Expr, len(m.Unknowns))
	m.TauSym = make([]*ir.Sym, len(m.Unknowns))
	seen := map[Method]bool{}
	for _, s := range f.Stmts {
		switch s := s.(type) {
		case *lang.StabiliseStmt:
			for _, n := range s.Methods {
				meth, ok := MethodByName(n.Text)
				if !ok {
					hint := "the methods are galerkin, supg, gls and vms"
					if sug := source.Suggest(n.Text, methodNames[:]); sug != "" {
						hint = fmt.Sprintf("did you mean %q?", sug)
					}
					c.errorf(n.Pos, n.End, hint, "unknown method %q", n.Text)
					continue
				}
				if !seen[meth] {
					seen[meth] = true
					m.Methods = append(m.Methods, meth)
				}
			}
		case *lang.TauStmt:
			u := c.lookupUnknown(s.For)
			if u == nil {
				continue
			}
			if m.Tau[u.Index] != nil {
				c.errorf(s.For.Pos, s.For.End, "", "second tau for %q", u.Name)
				continue
			}
			v := c.exprWith(s.Value, false)
			if v == nil {
				continue
			}
			if v.Rank() != 0 {
				c.errorf(s.Value.Pos(), s.Value.End(), "τ is a scalar for each equation (block-diagonal)", "tau must be a scalar, not a %s", rankName(v.Rank()))
				continue
			}
			m.Tau[u.Index] = v
			m.TauSym[u.Index] = &ir.Sym{At: ir.At{P: s.For.Pos}, Name: "tau_" + u.Name, Kind: ir.Tau}
		}
	}
	sort.Slice(m.Methods, func(i, j int) bool { return m.Methods[i] < m.Methods[j] })
	needTau := false
	for _, meth := range m.Methods {
		if meth != Galerkin {
			needTau = true
		}
	}
	if needTau && !c.partial {
		for _, u := range m.Unknowns {
			if m.Tau[u.Index] == nil {
				c.errorf(u.Pos, source.Pos{}, fmt.Sprintf("add \"tau for %s = ...\" (the library module tau has standard definitions)", u.Name), "a stabilised method needs tau for %q", u.Name)
			}
		}
	}
}

func (c *checker) exprWith(e lang.Expr, allowTest bool) ir.Expr {
	save := c.allowTest
	c.allowTest = allowTest
	defer func() { c.allowTest = save }()
	return c.expr(e)
}

// expr types one expression; it returns nil after reporting an error.
func (c *checker) expr(e lang.Expr) ir.Expr {
	at := ir.At{P: e.Pos()}
	switch e := e.(type) {
	case *lang.Number:
		r, ok := new(big.Rat).SetString(e.Text)
		if !ok {
			c.errorf(e.Pos(), e.End(), "", "malformed number %q", e.Text)
			return nil
		}
		return &ir.Num{At: at, Val: r}
	case *lang.Ident:
		return c.ident(e)
	case *lang.Unary:
		x := c.expr(e.X)
		if x == nil {
			return nil
		}
		if e.Op == "-" {
			return ir.Neg(e.Pos(), x)
		}
		return x
	case *lang.Binary:
		return c.binary(e)
	case *lang.Index:
		x := c.expr(e.X)
		if x == nil {
			return nil
		}
		if x.Rank() == 0 {
			c.errorf(e.IndexPos, e.End(), "only vectors and matrices have components", "cannot take component %d of a scalar", e.Index)
			return nil
		}
		if e.Index < 1 || e.Index > c.dim {
			c.errorf(e.IndexPos, e.End(), fmt.Sprintf("components are numbered 1 to %d", c.dim), "component %d out of range", e.Index)
			return nil
		}
		return &ir.Comp{At: at, X: x, I: e.Index - 1}
	case *lang.List:
		var el []ir.Expr
		for _, x := range e.Elems {
			v := c.expr(x)
			if v == nil {
				return nil
			}
			el = append(el, v)
		}
		if len(el) != c.dim {
			c.errorf(e.Pos(), e.End(), fmt.Sprintf("a vector in a %d-dimensional model has %d components", c.dim, c.dim), "vector with %d components", len(el))
			return nil
		}
		for _, v := range el[1:] {
			if v.Rank() != el[0].Rank() {
				c.errorf(e.Pos(), e.End(), "", "mixed scalars and vectors in one list")
				return nil
			}
		}
		if el[0].Rank() > 1 {
			c.errorf(e.Pos(), e.End(), "", "tensors above rank 2 are not supported")
			return nil
		}
		return &ir.Vec{At: at, Elems: el}
	case *lang.Call:
		return c.call(e)
	}
	c.errorf(e.Pos(), e.End(), "", "unsupported expression")
	return nil
}

func (c *checker) ident(e *lang.Ident) ir.Expr {
	at := ir.At{P: e.Pos()}
	if c.params != nil {
		if v, ok := c.params[e.Name]; ok {
			return v
		}
	}
	switch e.Name {
	case "x", "y", "z":
		axis := int(e.Name[0] - 'x')
		if axis >= c.dim {
			c.errorf(e.Pos(), e.End(), fmt.Sprintf("a %d-dimensional model has coordinates %s", c.dim, strings.Join([]string{"x", "y", "z"}[:c.dim], ", ")), "coordinate %q does not exist here", e.Name)
			return nil
		}
		return &ir.Coord{At: at, Axis: axis}
	case "t":
		return &ir.Time{At: at}
	case "pi":
		return &ir.Const{At: at, Name: "pi"}
	}
	if q, ok := ir.QuantityByName(e.Name); ok {
		return &ir.Sym{At: at, Name: e.Name, Kind: ir.CellQuantity, R: q.Rank(), Q: q}
	}
	if now, ok := retiredNames[e.Name]; ok && c.coefs[e.Name] == nil && c.unknowns[e.Name] == nil {
		c.errorf(e.Pos(), e.End(), "write "+now, "%s is the spelling of an earlier version", e.Name)
		return nil
	}
	if u, ok := c.unknowns[e.Name]; ok {
		return &ir.Field{At: at, Name: u.Name, Index: u.Index, Role: ir.Trial, R: u.Rank}
	}
	if _, ok := c.coefs[e.Name]; ok {
		cf := c.coef(e.Name)
		if cf == nil {
			return nil
		}
		s := *cf.Sym
		s.P = e.Pos()
		return &s
	}
	if _, ok := c.formulas[e.Name]; ok {
		c.errorf(e.Pos(), e.End(), fmt.Sprintf("call it: %s(...)", e.Name), "%q is a formula, not a value", e.Name)
		return nil
	}
	c.errorf(e.Pos(), e.End(), c.suggest(e.Name), "unknown identifier %q", e.Name)
	return nil
}

func (c *checker) suggest(name string) string {
	if c.errs.Full() {
		return "" // the error will be dropped: spare the search
	}
	var cand []string
	cand = append(cand, builtinNames...)
	for k := range c.unknowns {
		cand = append(cand, k)
	}
	for k := range c.coefs {
		cand = append(cand, k)
	}
	for k := range c.formulas {
		cand = append(cand, k)
	}
	for k := range c.params {
		cand = append(cand, k)
	}
	sort.Strings(cand)
	if s := source.Suggest(name, cand); s != "" {
		return fmt.Sprintf("did you mean %q?", s)
	}
	return ""
}

func (c *checker) binary(e *lang.Binary) ir.Expr {
	x := c.expr(e.X)
	y := c.expr(e.Y)
	if x == nil || y == nil {
		return nil
	}
	at := ir.At{P: e.Pos()}
	switch e.Op {
	case "+", "-":
		if x.Rank() != y.Rank() {
			c.errorf(e.OpPos, source.Pos{}, "both operands of + and - have the same rank", "cannot %s a %s and a %s", map[string]string{"+": "add", "-": "subtract"}[e.Op], rankName(x.Rank()), rankName(y.Rank()))
			return nil
		}
		if e.Op == "-" {
			return &ir.Add{At: at, Terms: []ir.Expr{x, ir.Neg(e.OpPos, y)}}
		}
		return &ir.Add{At: at, Terms: []ir.Expr{x, y}}
	case "*":
		if x.Rank() > 0 && y.Rank() > 0 {
			c.errorf(e.OpPos, source.Pos{}, "use . (or dot) to contract two vectors, outer(a, b) for their outer product", "cannot multiply a %s by a %s with *", rankName(x.Rank()), rankName(y.Rank()))
			return nil
		}
		return &ir.Mul{At: at, Factors: []ir.Expr{x, y}}
	case "/":
		if y.Rank() > 0 {
			c.errorf(e.Y.Pos(), e.Y.End(), "", "cannot divide by a %s", rankName(y.Rank()))
			return nil
		}
		return &ir.Mul{At: at, Factors: []ir.Expr{x, &ir.Pow{At: ir.At{P: e.Y.Pos()}, Base: y, Exp: ir.Int(e.Y.Pos(), -1)}}}
	case "^":
		if x.Rank() > 0 || y.Rank() > 0 {
			c.errorf(e.OpPos, source.Pos{}, "powers are of scalars; for |a|² write a . a", "cannot raise a %s to a %s power", rankName(x.Rank()), rankName(y.Rank()))
			return nil
		}
		return &ir.Pow{At: at, Base: x, Exp: y}
	case ".":
		return c.dot(e.OpPos, e.Pos(), x, y)
	}
	c.errorf(e.OpPos, source.Pos{}, "", "unknown operator %q", e.Op)
	return nil
}

func (c *checker) dot(opPos, p source.Pos, x, y ir.Expr) ir.Expr {
	if x.Rank() == 0 || y.Rank() == 0 {
		c.errorf(opPos, source.Pos{}, "use * to multiply by a scalar", "dot product of a %s and a %s", rankName(x.Rank()), rankName(y.Rank()))
		return nil
	}
	return &ir.Dot{At: ir.At{P: p}, A: x, B: y}
}

func (c *checker) call(e *lang.Call) ir.Expr {
	at := ir.At{P: e.Pos()}
	nargs := func(n int) bool {
		if len(e.Args) != n {
			c.errorf(e.FuncPos, e.End(), "", "%s takes %d argument%s, not %d", e.Func, n, plural(n), len(e.Args))
			return false
		}
		return true
	}
	if fm, ok := c.formulas[e.Func]; ok {
		return c.expandFormula(e, fm)
	}
	switch e.Func {
	case "residual":
		return c.residualCall(e)
	case "test", "previous", "increment":
		if !nargs(1) {
			return nil
		}
		id, ok := e.Args[0].(*lang.Ident)
		u := (*Unknown)(nil)
		if ok {
			u = c.unknowns[id.Name]
		}
		if u == nil {
			c.errorf(e.Args[0].Pos(), e.Args[0].End(), "", "%s(...) takes the name of an unknown", e.Func)
			return nil
		}
		role := ir.Previous
		switch e.Func {
		case "test":
			if !c.allowTest {
				c.errorf(e.FuncPos, e.End(), "test functions appear in derived forms, not in a model's statements", "test(...) is not allowed here")
				return nil
			}
			role = ir.Test
		case "increment":
			// The Newton increment δu of a derived Jacobian.
			if !c.allowTest {
				c.errorf(e.FuncPos, e.End(), "the increment δu appears in derived Jacobians, not in a model's statements", "increment(...) is not allowed here")
				return nil
			}
			role = ir.Increment
		}
		return &ir.Field{At: at, Name: u.Name, Index: u.Index, Role: role, R: u.Rank}
	case "diam", "meas":
		// diam(K) and meas(K): the diameter and the measure of the cell.
		if id, ok := singleIdent(e.Args); !ok || id.Name != "K" {
			at, end := e.FuncPos, e.End()
			if len(e.Args) == 1 {
				at, end = e.Args[0].Pos(), e.Args[0].End()
			}
			c.errorf(at, end, fmt.Sprintf("write %s(K), K being the cell", e.Func), "%s takes the cell K", e.Func)
			return nil
		}
		q, _ := ir.QuantityByName(e.Func + "(K)")
		return &ir.Sym{At: at, Name: q.String(), Kind: ir.CellQuantity, R: q.Rank(), Q: q}
	case "dt":
		c.errorf(e.FuncPos, e.End(), "write partial(u, t)", "dt(...) is the spelling of an earlier version")
		return nil
	case "partial":
		if len(e.Args) < 2 {
			c.errorf(e.FuncPos, e.End(), "write partial(u, x), partial(u, x, y) or partial(u, t)", "partial needs an expression and at least one coordinate")
			return nil
		}
		if id, ok := e.Args[1].(*lang.Ident); ok && id.Name == "t" {
			// The time derivative: partial(u, t), first order, alone.
			if len(e.Args) != 2 {
				c.errorf(e.Args[2].Pos(), e.End(), "write partial(u, t) alone; a derivative in time and space is not part of the language", "partial in t takes one expression and t")
				return nil
			}
			x := c.expr(e.Args[0])
			if x == nil {
				return nil
			}
			return &ir.TimeDeriv{At: at, X: x}
		}
		x := c.expr(e.Args[0])
		if x == nil {
			return nil
		}
		for _, a := range e.Args[1:] {
			id, ok := a.(*lang.Ident)
			if !ok || len(id.Name) != 1 || id.Name[0] < 'x' || int(id.Name[0]-'x') >= c.dim {
				c.errorf(a.Pos(), a.End(), fmt.Sprintf("the coordinates are %s", strings.Join([]string{"x", "y", "z"}[:c.dim], ", ")), "partial derivatives are taken by a coordinate")
				return nil
			}
			x = &ir.Partial{At: at, X: x, Axis: int(id.Name[0] - 'x')}
		}
		return x
	}
	var args []ir.Expr
	for _, a := range e.Args {
		v := c.expr(a)
		if v == nil {
			return nil
		}
		args = append(args, v)
	}
	switch e.Func {
	case "grad":
		if !nargs(1) {
			return nil
		}
		if args[0].Rank() > 1 {
			c.errorf(e.Args[0].Pos(), e.Args[0].End(), "grad applies to scalars and vectors", "grad of a matrix")
			return nil
		}
		return &ir.Grad{At: at, X: args[0]}
	case "div":
		if !nargs(1) {
			return nil
		}
		if args[0].Rank() == 0 {
			c.errorf(e.Args[0].Pos(), e.Args[0].End(), "div applies to vectors and matrices; did you mean grad?", "div of a scalar")
			return nil
		}
		return &ir.Div{At: at, X: args[0]}
	case "lap", "laplacian":
		if !nargs(1) {
			return nil
		}
		if args[0].Rank() > 1 {
			c.errorf(e.Args[0].Pos(), e.Args[0].End(), "", "laplacian of a matrix")
			return nil
		}
		return &ir.Lap{At: at, X: args[0]}
	case "dot":
		if !nargs(2) {
			return nil
		}
		return c.dot(e.FuncPos, e.Pos(), args[0], args[1])
	case "ddot", "outer":
		if !nargs(2) {
			return nil
		}
		want := 2
		if e.Func == "outer" {
			want = 1
		}
		if args[0].Rank() != want || args[1].Rank() != want {
			c.errorf(e.FuncPos, e.End(), "", "%s takes two %ss, not a %s and a %s", e.Func, rankName(want), rankName(args[0].Rank()), rankName(args[1].Rank()))
			return nil
		}
		if e.Func == "ddot" {
			return &ir.DDot{At: at, A: args[0], B: args[1]}
		}
		return &ir.Outer{At: at, A: args[0], B: args[1]}
	case "pow":
		if !nargs(2) {
			return nil
		}
		if args[0].Rank() > 0 || args[1].Rank() > 0 {
			c.errorf(e.FuncPos, e.End(), "", "pow takes scalars")
			return nil
		}
		return &ir.Pow{At: at, Base: args[0], Exp: args[1]}
	}
	fn, ok := ir.FuncByName(e.Func)
	if !ok {
		c.errorf(e.FuncPos, source.Pos{}, c.suggest(e.Func), "unknown function %q", e.Func)
		return nil
	}
	if !nargs(fn.Arity()) {
		return nil
	}
	want := 0
	if fn == ir.Norm {
		want = 1
	}
	for i, a := range args {
		if a.Rank() != want {
			c.errorf(e.Args[i].Pos(), e.Args[i].End(), "", "%s takes a %s, not a %s", e.Func, rankName(want), rankName(a.Rank()))
			return nil
		}
	}
	return &ir.Call{At: at, Fn: fn, Args: args}
}

// singleIdent returns the only argument if it is a name.
func singleIdent(args []lang.Expr) (*lang.Ident, bool) {
	if len(args) != 1 {
		return nil, false
	}
	id, ok := args[0].(*lang.Ident)
	return id, ok
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// expandFormula inlines a formula call: the body is checked with the
// parameters bound to the (checked) arguments.
func (c *checker) expandFormula(e *lang.Call, fm *formula) ir.Expr {
	if len(e.Args) != len(fm.params) {
		c.errorf(e.FuncPos, e.End(), fmt.Sprintf("formula %s is declared at %s", fm.name, fm.pos), "%s takes %d argument%s, not %d", fm.name, len(fm.params), plural(len(fm.params)), len(e.Args))
		return nil
	}
	if fm.active {
		c.errorf(e.FuncPos, e.End(), "formulas cannot call themselves", "formula %q is recursive", fm.name)
		return nil
	}
	bind := map[string]ir.Expr{}
	key := expansionKey{fm: fm, allowTest: c.allowTest}
	for i, a := range e.Args {
		v := c.expr(a)
		if v == nil {
			return nil
		}
		bind[fm.params[i].Text] = v
		key.args += fmt.Sprintf("%p,", v)
	}
	if v, ok := c.expansions[key]; ok {
		return v
	}
	save := c.params
	c.params = bind
	fm.active = true
	v := c.expr(fm.body)
	fm.active = false
	c.params = save
	if v != nil {
		if c.expansions == nil {
			c.expansions = map[expansionKey]ir.Expr{}
		}
		c.expansions[key] = v
	}
	return v
}

// exprPrefix wraps a lone expression into a statement the parser accepts.
const exprPrefix = "given expression_ = "

// ParseExpr reads one expression in the model language against a checked
// model: its unknowns, coefficients, the cell quantities and the names
// derived forms use (test(u), tau_<u> and the normal n). Errors carry
// positions in src (file name "name", line 1 onwards).
func (m *Model) ParseExpr(name, src string) (ir.Expr, source.ErrorList) {
	f, errs := lang.Parse(name, []byte(exprPrefix+src))
	shift := func(p source.Pos) source.Pos {
		if p.Line == 1 {
			p.Col -= len(exprPrefix)
			if p.Col < 1 {
				p.Col = 1
			}
		}
		p.Offset -= len(exprPrefix)
		if p.Offset < 0 {
			p.Offset = 0
		}
		return p
	}
	for _, e := range errs {
		e.Pos, e.End = shift(e.Pos), shift(e.End)
	}
	if len(errs) > 0 {
		return nil, errs
	}
	var g *lang.GivenStmt
	for _, s := range f.Stmts {
		if gs, ok := s.(*lang.GivenStmt); ok && g == nil {
			g = gs
		} else {
			errs.Add(shift(s.Pos()), shift(s.End()), "expected one expression", "")
			return nil, errs
		}
	}
	if g == nil {
		errs.Add(source.Pos{File: name, Line: 1, Col: 1}, source.Pos{}, "expected an expression", "")
		return nil, errs
	}
	c := &checker{m: m, dim: m.Dim, unknowns: map[string]*Unknown{}, coefs: map[string]*coefDecl{}, formulas: map[string]*formula{}, allowTest: true}
	for _, u := range m.Unknowns {
		c.unknowns[u.Name] = u
	}
	for _, cf := range m.Coefs {
		c.coefs[cf.Name] = &coefDecl{state: checked, coef: cf}
	}
	c.params = map[string]ir.Expr{"n": &ir.Sym{Name: Normal.Name, Kind: Normal.Kind, R: 1, Q: Normal.Q}}
	for i, ts := range m.TauSym {
		if ts != nil {
			c.params[ts.Name] = m.TauSym[i]
		}
	}
	for _, fs := range m.FineSym {
		c.params[fs.Name] = fs
	}
	for _, cs := range m.CaptureSym {
		if cs != nil {
			c.params[cs.Name] = cs
		}
	}
	e := c.expr(g.Value)
	for _, er := range c.errs {
		er.Pos, er.End = shift(er.Pos), shift(er.End)
	}
	return e, c.errs
}
