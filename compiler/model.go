package compiler

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// Method is a discretisation method.
type Method uint8

// The methods formwright derives.
const (
	Galerkin Method = iota
	SUPG
	GLS
	VMS
)

var methodNames = [...]string{"galerkin", "supg", "gls", "vms"}

func (m Method) String() string { return methodNames[m] }

// AllMethods lists every method in a fixed order.
var AllMethods = []Method{Galerkin, SUPG, GLS, VMS}

// MethodByName parses a method name as written in a model or on the
// command line.
func MethodByName(s string) (Method, bool) {
	for i, n := range methodNames {
		if n == s {
			return Method(i), true
		}
	}
	return 0, false
}

// Unknown is one unknown field of a model.
type Unknown struct {
	Name    string
	Index   int
	Rank    int
	Element ir.Element
	Pos     source.Pos
}

// MeanCondition prescribes the mean of a scalar unknown over the domain,
// (1/|Ω|) ∫_Ω u dx = Value ("mean u = VALUE"). It fixes the constant that
// the operator and the boundary conditions leave free, as for the pressure
// of an enclosed flow, whose velocity is prescribed on the whole boundary.
type MeanCondition struct {
	Unknown int
	Value   ir.Expr // a constant
	Pos     source.Pos
}

// Coef is a checked coefficient ("given").
type Coef struct {
	Name string
	Def  ir.Expr
	Sym  *ir.Sym
	Pos  source.Pos
}

// Equation is one row of the block operator: L_i(u) = f_i, tested with
// the test function of unknown For.
type Equation struct {
	For int
	// Written is the operator as the model states it (all unknown-dependent
	// terms of LHS − RHS), and Source the unknown-free remainder moved to
	// the right; both are unsimplified so the derivation can show them.
	Written ir.Expr
	Source  ir.Expr
	Pos     source.Pos
}

// BCKind is the kind of a boundary condition.
type BCKind uint8

// Boundary condition kinds.
const (
	ValueBC BCKind = iota // prescribed value (essential)
	FluxBC                // prescribed flux (natural)
	RobinBC               // flux depending linearly on the unknown
)

var bcNames = [...]string{"value", "flux", "robin"}

func (k BCKind) String() string { return bcNames[k] }

// BC is a boundary condition for one unknown on some sides or parts
// (parts.go): names of the mesh, "all", or parts the model defines.
type BC struct {
	Sides []string
	// SidePos holds where each of Sides is written (nil for conditions
	// the compiler makes, which use Pos).
	SidePos []source.Pos
	Unknown int
	Kind    BCKind
	Value   ir.Expr
	Pos     source.Pos
}

// Model is a checked model: every name resolved, every expression typed.
type Model struct {
	Name      string
	File      string
	Dim       int
	Sides     []string
	Unknowns  []*Unknown
	Coefs     []*Coef // in declaration order
	Equations []*Equation
	BCs       []*BC
	// Parts are the boundary parts the model defines (parts.go).
	Parts []*PartDef
	Means []*MeanCondition
	// Quadrature is the degree of the quadrature rules the model asks for
	// ("quadrature N"); 0 leaves it to ir.LoweredForm.QuadratureDegree.
	Quadrature int
	Methods    []Method
	// Tau holds the τ definition of each equation (nil where none is
	// given); TauSym the symbol that stands for it in derived forms.
	Tau    []ir.Expr
	TauSym []*ir.Sym
	// Capture holds the discontinuity-capturing diffusivity of each
	// equation (nil where none is given; "capture for U = ..."), with the
	// residual of the equation substituted; CaptureSym the symbol that
	// stands for it in derived forms (see capture.go).
	Capture    []ir.Expr
	CaptureSym []*ir.Sym
	// FineSym holds the fine-scale velocity symbols of the last VMS
	// derivation (FineScale), so that ParseExpr reads derived forms back.
	FineSym []*ir.Sym
	// Sources maps file names to their text, for error messages.
	Sources map[string][]byte
}

// Trial returns the trial field node of unknown i.
func (m *Model) Trial(i int) *ir.Field { return m.field(i, ir.Trial) }

// Test returns the test field node of unknown i.
func (m *Model) Test(i int) *ir.Field { return m.field(i, ir.Test) }

func (m *Model) field(i int, r ir.Role) *ir.Field {
	u := m.Unknowns[i]
	return &ir.Field{At: ir.At{P: u.Pos}, Name: u.Name, Index: i, Role: r, R: u.Rank}
}

// Coef returns the coefficient with the given name, or nil.
func (m *Model) Coef(name string) *Coef {
	for _, c := range m.Coefs {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// IsSimplexP1 reports whether every unknown uses linear simplices, on which
// second derivatives of the basis vanish inside each cell.
func (m *Model) IsSimplexP1() bool {
	for _, u := range m.Unknowns {
		if u.Element != (ir.Element{Family: ir.Simplicial, Degree: 1}) {
			return false
		}
	}
	return true
}

// InverseEstimate is the value the cell quantity inverse_estimate lowers
// to: the largest inverse-estimate constant C_inv = sup h²‖Δv‖²/‖∇v‖² of
// the elements of the model's unknowns, each on its reference cell
// (element.InverseEstimate; Harari & Hughes 1992). The largest one is the
// conservative choice for a τ shared by several fields. It also returns
// the element that attains it, for the derivation notes. A value within
// 1e-9 of an integer is rounded to it: the reference values of the
// implemented elements are integers (12, 96, 240, 48, 108 for degree 2).
func (m *Model) InverseEstimate() (float64, string) {
	best, which := 0.0, ""
	for _, u := range m.Unknowns {
		c := cell.Of(m.Dim, u.Element.Family == ir.TensorProduct)
		e, err := element.Lagrange(c, u.Element.Degree)
		if err != nil {
			continue
		}
		v, err := element.InverseEstimate(e)
		if err != nil {
			continue
		}
		if r := math.Round(v); math.Abs(v-r) <= 1e-9*math.Max(1, r) {
			v = r
		}
		if v > best || which == "" {
			best, which = v, fmt.Sprintf("%s on the reference %v", u.Element, c)
		}
	}
	return best, which
}
