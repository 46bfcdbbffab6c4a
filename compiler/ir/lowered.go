package ir

import (
	"fmt"
	"slices"
)

// Lowered forms: the contract between the compiler and the runtime.
//
// A derived weak form is lowered to components and expanded into terms
//
//	Σ_terms  Coef(x) · D^α u_j · D^β v_i
//
// where D^α u_j is one component of one unknown with a multi-index of
// spatial derivatives (a FieldD with Role Trial) and D^β v_i is a test
// function component (a FieldD with Role Test). Coef is a scalar expression
// made only of Num, Const, Coord, Time, CellQ, FieldD with Role Previous,
// Add, Mul, Pow and Call; lowering has substituted every coefficient, τ and
// formula. A term whose Trial is nil belongs to the linear form.

// Domain says where an integral is taken.
type Domain struct {
	// Side is "" for the sum over cells, and the boundary side's name for
	// an integral over the cells' facets on that side.
	Side string
}

// Term is one product of a coefficient, a trial derivative and a test
// derivative.
type Term struct {
	Coef  Expr
	Trial *FieldD // nil: a term of the linear form
	Test  *FieldD
}

// Integral is the lowered integrand over one domain. The integrand is
// Σ Bilinear − Σ Linear, so the discrete problem is
//
//	Σ_Bilinear ∫ Coef D^α u D^β v  =  Σ_Linear ∫ Coef D^β v .
type Integral struct {
	Domain   Domain
	Bilinear []Term
	Linear   []Term
}

// LoweredForm is the whole discrete problem for one method.
type LoweredForm struct {
	Method    string // galerkin, supg, gls or vms
	Dim       int
	Unknowns  []LoweredUnknown
	Integrals []Integral
	// Dirichlet lists the value conditions: on Side, component Comp of
	// unknown Unknown equals Value (a lowered scalar expression of x, t).
	Dirichlet []DirichletCondition
	// Means lists the mean conditions: the mean of scalar unknown Unknown
	// over the domain equals Value (a lowered constant).
	Means []MeanCondition
	// MaxDerivative is the highest spatial derivative order on trial or
	// test functions (2 for GLS/VMS with second-order operators).
	MaxDerivative int
	// Newton says the form is the Newton step of a nonlinear problem
	// (NonlinearForm.Step): its trial functions are the increment δu of
	// the iterate u_k, which the coefficients read as the previous field;
	// the value conditions hold for u, and δu vanishes where they apply.
	Newton bool
	// Degree is the quadrature degree the model asks for; 0 leaves it to
	// QuadratureDegree's automatic choice.
	Degree int
	// Parts are the boundary parts the model defines (parts.go); value
	// conditions and boundary integrals may name them as sides. The
	// runtime computes their facets on the mesh. Kernels do not read them.
	Parts []PartDef
	// Claims say where each boundary condition applies, with positions in
	// the model, for the checks that need the mesh (parts.go).
	Claims []Claim
}

// LoweredUnknown describes one unknown field.
type LoweredUnknown struct {
	Name    string
	Rank    int // 0 scalar, 1 vector
	Element Element
	// Constraint marks an unknown that its own equation does not contain:
	// it acts as a constraint on the others, like the pressure of an
	// incompressible flow (div(vel) = 0). Solvers treat its block as a
	// Schur complement. It is not part of FormHash: kernels do not read it.
	Constraint bool
}

// Components is the number of scalar components of the unknown in
// dimension dim.
func (u LoweredUnknown) Components(dim int) int {
	if u.Rank == 1 {
		return dim
	}
	return 1
}

// MeanCondition prescribes the mean of a scalar unknown over the domain.
type MeanCondition struct {
	Unknown int
	Value   Expr
}

// DirichletCondition is a prescribed value on a boundary side.
type DirichletCondition struct {
	Side    string
	Unknown int
	Comp    int
	Value   Expr
}

// Sides lists the boundary sides that carry an integral, in the order they
// first appear; facet kernels (interpreted and generated) follow it.
func (lf *LoweredForm) Sides() []string {
	var sides []string
	for _, in := range lf.Integrals {
		if s := in.Domain.Side; s != "" && !slices.Contains(sides, s) {
			sides = append(sides, s)
		}
	}
	return sides
}

// Family is the element family of the form's unknowns (Validate checks
// that they share one).
func (lf *LoweredForm) Family() Family {
	if len(lf.Unknowns) == 0 {
		return 0
	}
	return lf.Unknowns[0].Element.Family
}

// ContractError is a lowered form that breaks the contract above.
type ContractError struct{ Msg string }

func (e *ContractError) Error() string { return "lowered form: " + e.Msg }

// Validate checks the contract: the dimension, the unknowns (one element
// family, ranks 0 and 1), every term's trial and test derivatives, the
// leaves of every coefficient, and the boundary and mean conditions. The
// interpreted kernels and the back ends call it before they read a form,
// so each of them may rely on it.
func (lf *LoweredForm) Validate() error {
	bad := func(format string, args ...any) error { return &ContractError{fmt.Sprintf(format, args...)} }
	if lf.Dim < 1 || lf.Dim > 3 {
		return bad("dimension %d", lf.Dim)
	}
	if len(lf.Unknowns) == 0 {
		return bad("no unknowns")
	}
	for _, u := range lf.Unknowns {
		if _, err := ParseElement(u.Element.String()); err != nil {
			return bad("unknown %s: %v", u.Name, err)
		}
		if u.Element.Family != lf.Family() && lf.Dim > 1 {
			return bad("unknowns mix %v and %v elements", lf.Unknowns[0].Element, u.Element)
		}
		if u.Rank != 0 && u.Rank != 1 {
			return bad("unknown %s has rank %d", u.Name, u.Rank)
		}
	}
	field := func(f *FieldD, role Role) error {
		if f == nil || f.Field == nil {
			return bad("a term without its %v function", role)
		}
		if f.Field.Role != role {
			return bad("%v function %s where the %v function belongs", f.Field.Role, f.Field.Name, role)
		}
		if f.Field.Index < 0 || f.Field.Index >= len(lf.Unknowns) {
			return bad("field %s has index %d of %d unknowns", f.Field.Name, f.Field.Index, len(lf.Unknowns))
		}
		if u := lf.Unknowns[f.Field.Index]; f.Comp < 0 || f.Comp >= u.Components(lf.Dim) {
			return bad("component %d of %s", f.Comp, u.Name)
		}
		for k := lf.Dim; k < 3; k++ {
			if f.D[k] != 0 {
				return bad("derivative along axis %d in %d dimensions", k, lf.Dim)
			}
		}
		if int(f.D[0])+int(f.D[1])+int(f.D[2]) > 2 {
			return bad("a derivative of order %d of %s (the elements give up to second derivatives)", int(f.D[0])+int(f.D[1])+int(f.D[2]), f.Field.Name)
		}
		if f.DT != 0 && role != Previous {
			return bad("a time derivative of the %v function (lowering for a time step removes them)", role)
		}
		return nil
	}
	var leafErr error
	coef := func(e Expr) error {
		leafErr = nil
		InspectOnce(e, func(x Expr) bool {
			if leafErr != nil {
				return false
			}
			switch x := x.(type) {
			case *Num, *Add, *Mul, *Pow, *Time, *Named:
			case *Const:
				if x.Name != "pi" {
					leafErr = bad("unknown constant %s", x.Name)
				}
			case *Coord:
				if x.Axis < 0 || x.Axis >= lf.Dim {
					leafErr = bad("coordinate axis %d in %d dimensions", x.Axis, lf.Dim)
				}
			case *CellQ:
				if x.Q == NoQuantity || x.Q >= numQuantities || x.Q == InverseEstimate {
					leafErr = bad("quantity %v in a coefficient", x.Q)
				} else if x.I < 0 || x.J < 0 || (x.Q.Rank() >= 1 && x.I >= lf.Dim) || (x.Q.Rank() == 2 && x.J >= lf.Dim) {
					leafErr = bad("component (%d, %d) of %v", x.I, x.J, x.Q)
				}
			case *Call:
				if x.Fn == Norm || len(x.Args) != x.Fn.Arity() {
					leafErr = bad("%v with %d arguments in a coefficient", x.Fn, len(x.Args))
				}
			case *FieldD:
				if x.Field != nil && x.Field.Role == Recovered {
					leafErr = field(x, Recovered)
					if o := int(x.D[0]) + int(x.D[1]) + int(x.D[2]); leafErr == nil && o != 2 {
						leafErr = bad("a recovered derivative of order %d of %s (recovery gives second derivatives only)", o, x.Field.Name)
					}
					break
				}
				leafErr = field(x, Previous)
			default:
				leafErr = bad("%T in a coefficient", x)
			}
			return leafErr == nil
		})
		return leafErr
	}
	for _, in := range lf.Integrals {
		for _, t := range in.Bilinear {
			if err := field(t.Trial, Trial); err != nil {
				return err
			}
			if err := field(t.Test, Test); err != nil {
				return err
			}
			if err := coef(t.Coef); err != nil {
				return err
			}
		}
		for _, t := range in.Linear {
			if t.Trial != nil {
				return bad("a linear term with a trial function")
			}
			if err := field(t.Test, Test); err != nil {
				return err
			}
			if err := coef(t.Coef); err != nil {
				return err
			}
		}
	}
	for _, d := range lf.Dirichlet {
		if d.Unknown < 0 || d.Unknown >= len(lf.Unknowns) || d.Comp < 0 || d.Comp >= lf.Unknowns[d.Unknown].Components(lf.Dim) {
			return bad("value condition on component %d of unknown %d", d.Comp, d.Unknown)
		}
		if err := coef(d.Value); err != nil {
			return err
		}
	}
	for _, p := range lf.Parts {
		if p.Name == "" || p.Name == AllParts {
			return bad("a part named %q", p.Name)
		}
		if err := p.Set.validate(); err != nil {
			return bad("part %s: %v", p.Name, err)
		}
	}
	for _, c := range lf.Claims {
		if c.Unknown < 0 || c.Unknown >= len(lf.Unknowns) || !slices.Contains(bcKinds, c.Kind) || len(c.Parts) == 0 {
			return bad("a condition of kind %q on unknown %d of %d, on %d parts", c.Kind, c.Unknown, len(lf.Unknowns), len(c.Parts))
		}
	}
	for _, m := range lf.Means {
		if m.Unknown < 0 || m.Unknown >= len(lf.Unknowns) || lf.Unknowns[m.Unknown].Rank != 0 {
			return bad("mean condition on unknown %d, which is not a scalar", m.Unknown)
		}
	}
	return nil
}

// NonPolynomialSurplus is the degree a coefficient that is not a
// polynomial of the coordinates (exp(−100(x − 1/8)²), 1/(1 + x), ...)
// adds to the degree of the quadrature, on top of the degrees of the basis
// functions it multiplies: a smooth but not polynomial integrand needs a
// rule beyond the polynomial part. With 4, a P1 source term is integrated
// with a degree-5 rule (3 Gauss points on an interval), which reproduces
// the nodal values of the peaked-source SUPG problem of Donea & Huerta
// (2003, ch. 2) to 1e-4 where the 2-point rule misses them by 4e-3
// (testdata/REFERENCES.md). Common practice, no source for the value.
const NonPolynomialSurplus = 4

// QuadratureDegree is the quadrature degree the kernels of the form use,
// interpreted and generated alike: Degree when the model sets it,
// otherwise the degree of the integrands. On simplicial cells that is
//
//	max over terms of (k_test − |β|) + (k_trial − |α|) + p(coef)   (k_trial = 0 for linear terms),
//
// which integrates the product exactly on affine cells when the
// coefficient is a polynomial of degree p(coef) in the coordinates
// (PolyDegree); a coefficient that is not a polynomial counts as
// NonPolynomialSurplus. On quadrilaterals and hexahedra the tensor Gauss
// rule counts the degree per coordinate direction, where a derivative does
// not lower the degree in the other directions, so a term counts
// k_test + k_trial + 1 + p(coef), the +1 for the bilinear det J of a
// general quadrilateral (k_max+1 points per direction, the usual choice).
// The result is at least 1. Common practice, no source. The form must be
// valid.
func (lf *LoweredForm) QuadratureDegree() int {
	if lf.Degree > 0 {
		return lf.Degree
	}
	simplicial := lf.Dim == 1 || lf.Family() == Simplicial
	degree := func(f *FieldD) int { return lf.Unknowns[f.Field.Index].Element.Degree }
	order := func(f *FieldD) int { return int(f.D[0]) + int(f.D[1]) + int(f.D[2]) }
	fieldDeg := func(f *FieldD) int { return max(0, degree(f)-order(f)) }
	kmax := 0
	for _, u := range lf.Unknowns {
		kmax = max(kmax, u.Element.Degree)
	}
	// A quantity that varies inside a cell (the metric G of a bilinear
	// map, the normal of a curved facet) counts like one more function of
	// the highest degree; on affine simplices it is constant.
	quantityDeg := func(c *CellQ) int {
		if simplicial || c.Q.Variation() != PerPoint {
			return 0
		}
		return kmax
	}
	q := 0
	for _, in := range lf.Integrals {
		for _, ts := range [][]Term{in.Bilinear, in.Linear} {
			for _, t := range ts {
				var d int
				if simplicial {
					d = max(0, degree(t.Test)-order(t.Test))
					if t.Trial != nil {
						d += max(0, degree(t.Trial)-order(t.Trial))
					}
				} else {
					d = degree(t.Test) + 1
					if t.Trial != nil {
						d += degree(t.Trial)
					}
				}
				p, ok := PolyDegree(t.Coef, fieldDeg, quantityDeg)
				if !ok {
					p = NonPolynomialSurplus
				}
				q = max(q, d+p)
			}
		}
	}
	return max(q, 1)
}

// PolyDegree returns the degree of e as a polynomial of the coordinates,
// and false when e is not one. Time and numbers have degree 0, a quantity
// quantityDeg of it, an iterate's value or derivative fieldDeg of it.
// Named quantities count as their definitions.
func PolyDegree(e Expr, fieldDeg func(*FieldD) int, quantityDeg func(*CellQ) int) (int, bool) {
	memo := map[Expr][2]int{}
	var deg func(e Expr) (int, bool)
	deg = func(e Expr) (int, bool) {
		if v, ok := memo[e]; ok {
			return v[0], v[1] == 1
		}
		d, ok := polyDegree(e, fieldDeg, quantityDeg, deg)
		okv := 0
		if ok {
			okv = 1
		}
		memo[e] = [2]int{d, okv}
		return d, ok
	}
	return deg(e)
}

func polyDegree(e Expr, fieldDeg func(*FieldD) int, quantityDeg func(*CellQ) int, deg func(Expr) (int, bool)) (int, bool) {
	switch e := e.(type) {
	case *Num, *Const, *Time:
		return 0, true
	case *CellQ:
		return quantityDeg(e), true
	case *Coord:
		return 1, true
	case *FieldD:
		return fieldDeg(e), true
	case *Named:
		return deg(e.X)
	case *Add:
		m := 0
		for _, t := range e.Terms {
			d, ok := deg(t)
			if !ok {
				return 0, false
			}
			m = max(m, d)
		}
		return m, true
	case *Mul:
		s := 0
		for _, f := range e.Factors {
			d, ok := deg(f)
			if !ok {
				return 0, false
			}
			s += d
		}
		return s, true
	case *Pow:
		b, ok := deg(e.Base)
		if !ok {
			return 0, false
		}
		if x, ok := deg(e.Exp); b == 0 && ok && x == 0 {
			return 0, true // a constant of the cell
		}
		if n, ok := e.Exp.(*Num); ok && n.Val.IsInt() && n.Val.Sign() > 0 && n.Val.Num().IsInt64() && n.Val.Num().Int64() <= 64 {
			return b * int(n.Val.Num().Int64()), true
		}
		return 0, false
	case *Call:
		for _, a := range e.Args {
			if d, ok := deg(a); !ok || d > 0 {
				return 0, false
			}
		}
		return 0, true // a function of constants of the cell
	}
	return 0, false
}

// IsTransient reports whether the form has time derivatives of the
// unknown (it must be stepped in time before kernels can be built).
func (lf *LoweredForm) IsTransient() bool {
	for _, in := range lf.Integrals {
		for _, t := range in.Bilinear {
			if t.Trial != nil && t.Trial.DT > 0 {
				return true
			}
		}
	}
	return false
}

// ReadsPrevious reports whether a coefficient of the form reads the
// previous iterate of an unknown (a Picard-iterated form), directly or
// through the second derivatives recovered from it.
func (lf *LoweredForm) ReadsPrevious() bool {
	return lf.reads(Previous) || lf.reads(Recovered)
}

// ReadsRecovered reports whether a coefficient of the form reads a
// recovered second derivative of the previous iterate (Role Recovered):
// the runtime then computes the recovered gradient of the iterate before
// each assembly and hands it to the kernels (CellInput.Recovered).
func (lf *LoweredForm) ReadsRecovered() bool { return lf.reads(Recovered) }

func (lf *LoweredForm) reads(r Role) bool {
	for _, in := range lf.Integrals {
		for _, ts := range [][]Term{in.Bilinear, in.Linear} {
			for _, t := range ts {
				if HasRole(t.Coef, r) {
					return true
				}
			}
		}
	}
	return false
}

// SteppedForm is a transient form rewritten into the steady problem of
// one implicit time step, with Δt the quantity TimeStep.
//
// When Mass is nil, Step is the whole step: its previous field is the old
// time level uⁿ, fixed during the step. When Mass is not nil, the form is
// also Picard-iterated, so previous(·) keeps meaning the iterate within
// the step; the old level enters as the right-hand side Mass(u_prev) uⁿ,
// assembled again at every iteration where Mass reads the iterate.
type SteppedForm struct {
	Step, Mass *LoweredForm
}

// SmallIntExponent returns n when the exponent e is an exact integer with
// |n| ≤ 64: the powers that both evaluators of lowered forms (the
// interpreter's tape and the generated kernels) write as repeated
// multiplication, so that they agree to the last bit.
func SmallIntExponent(e Expr) (int, bool) {
	n, ok := e.(*Num)
	if !ok || !n.Val.IsInt() || !n.Val.Num().IsInt64() {
		return 0, false
	}
	v := n.Val.Num().Int64()
	if v < -64 || v > 64 {
		return 0, false
	}
	return int(v), true
}
