package ir

import "slices"

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
}

// LoweredUnknown describes one unknown field.
type LoweredUnknown struct {
	Name    string
	Rank    int    // 0 scalar, 1 vector
	Element string // P1, P2, Q1, Q2
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
