package compiler

import (
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
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
	Element string // P1, P2, Q1, Q2
	Pos     lang.Pos
}

// Coef is a checked coefficient ("given").
type Coef struct {
	Name string
	Def  ir.Expr
	Sym  *ir.Sym
	Pos  lang.Pos
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
	Pos     lang.Pos
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

// BC is a boundary condition on some sides for one unknown.
type BC struct {
	Sides   []string
	Unknown int
	Kind    BCKind
	Value   ir.Expr
	Pos     lang.Pos
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
	Methods   []Method
	// Tau holds the τ definition of each equation (nil where none is
	// given); TauSym the symbol that stands for it in derived forms.
	Tau    []ir.Expr
	TauSym []*ir.Sym
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
		if u.Element != "P1" {
			return false
		}
	}
	return true
}
