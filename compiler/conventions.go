package compiler

import (
	"fmt"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
)

// Coefficient names with a meaning beyond the model's equations, read by
// the commands: exact_<unknown> is the exact solution that solve compares
// with, initial_<unknown> the initial value of a transient model, and step
// the default time step.
const (
	ExactPrefix   = "exact_"
	InitialPrefix = "initial_"
	StepName      = "step"
)

// StatedExact returns the lowered components of the coefficient
// exact_<unknown i>, or nil when the model states no exact solution for
// it or states one of the wrong rank.
func (m *Model) StatedExact(i int) []ir.Expr {
	c := m.Coef(ExactPrefix + m.Unknowns[i].Name)
	if c == nil || c.Def.Rank() != m.Unknowns[i].Rank {
		return nil
	}
	return LowerExpr(m, c.Sym)
}

// Initial returns the lowered components of the coefficient
// initial_<unknown i>, or nil when the model has none (the unknown starts
// at zero). A coefficient of the wrong rank is an error.
func (m *Model) Initial(i int) ([]ir.Expr, error) {
	u := m.Unknowns[i]
	c := m.Coef(InitialPrefix + u.Name)
	if c == nil {
		return nil, nil
	}
	if c.Def.Rank() != u.Rank {
		return nil, fmt.Errorf("%s: %s%s must have the rank of %s", c.Pos, InitialPrefix, u.Name, u.Name)
	}
	return LowerExpr(m, c.Sym), nil
}

// StepValue returns the value of the coefficient step when the model
// gives one that is a constant.
func (m *Model) StepValue() (float64, bool) {
	c := m.Coef(StepName)
	if c == nil || c.Def.Rank() != 0 {
		return 0, false
	}
	low := LowerExpr(m, c.Sym)[0]
	if ir.Contains(low, func(e ir.Expr) bool {
		switch e.(type) {
		case *ir.Coord, *ir.Time, *ir.CellQ, *ir.FieldD:
			return true
		}
		return false
	}) {
		return 0, false
	}
	return ir.Eval(low, nil), true
}

// ParseMethods reads a list of method names separated by commas, or
// "all"; "" gives nil.
func ParseMethods(s string) ([]Method, error) {
	if s == "" {
		return nil, nil
	}
	if s == "all" {
		return AllMethods, nil
	}
	var out []Method
	for _, n := range strings.Split(s, ",") {
		m, ok := MethodByName(strings.TrimSpace(n))
		if !ok {
			return nil, fmt.Errorf("unknown method %q (use galerkin, supg, gls, vms or all)", n)
		}
		out = append(out, m)
	}
	return out, nil
}

// DefaultMethods are the methods a command uses when none is asked for:
// the model's stabilise list, or Galerkin.
func (m *Model) DefaultMethods() []Method {
	if len(m.Methods) > 0 {
		return m.Methods
	}
	return []Method{Galerkin}
}

// DefaultMethod is the method solve uses when none is asked for: the
// model's first stabilised method, else Galerkin.
func (m *Model) DefaultMethod() Method {
	for _, meth := range m.Methods {
		if meth != Galerkin {
			return meth
		}
	}
	return Galerkin
}

// CheckMethod reports whether the model can be derived with meth: a
// stabilised method needs a τ for every unknown.
func (m *Model) CheckMethod(meth Method) error {
	if meth == Galerkin {
		return nil
	}
	for _, u := range m.Unknowns {
		if m.Tau[u.Index] == nil {
			return fmt.Errorf("%s needs a tau for %s: add \"tau for %s = ...\" to the model", meth, u.Name, u.Name)
		}
	}
	return nil
}

// ExpectedOrders gives the orders a convergence study expects for unknown
// i with elements of degree k: L² k+1 and H¹ k when its own equation has a
// second-order part (Ciarlet 1978); L² k and no H¹ check when it has none,
// as for the pressure of an equal-order stabilised flow pair (Hughes,
// Franca & Balestra 1986, CMAME 59) — testdata/REFERENCES.md.
func (m *Model) ExpectedOrders(i int) (l2, h1 float64, checkH1 bool) {
	k := float64(m.Unknowns[i].Element.Degree)
	for _, s := range SplitOperator(m) {
		if s.For == i && s.Parts[Diffusive] != nil {
			return k + 1, k, true
		}
	}
	return k, 0, false
}

// HasMean reports whether unknown i has a mean condition (it is fixed only
// up to a constant by the equations).
func (m *Model) HasMean(i int) bool {
	for _, mc := range m.Means {
		if mc.Unknown == i {
			return true
		}
	}
	return false
}

// IsTransient reports whether an equation holds a time derivative of an
// unknown (the model is stepped in time).
func (m *Model) IsTransient() bool {
	for _, eq := range m.Equations {
		if _, td := derivOrder(eq.Written); td {
			return true
		}
	}
	return false
}

// IsConstraint reports whether unknown i is absent from its own equation
// (the pressure in div(vel) = 0): it then acts as a constraint on the
// other unknowns, and its block of the assembled matrix is zero or a small
// stabilisation term.
func (m *Model) IsConstraint(i int) bool {
	for _, eq := range m.Equations {
		if eq.For != i {
			continue
		}
		return !ir.Contains(eq.Written, func(e ir.Expr) bool {
			f, ok := e.(*ir.Field)
			return ok && f.Role == ir.Trial && f.Index == i
		})
	}
	return false
}
