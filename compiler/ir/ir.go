package ir

import (
	"fmt"
	"math/big"

	"github.com/formwright/formwright/lang/source"
)

// Expr is a node of the typed expression IR. The family is closed: only the
// types in this file implement it.
type Expr interface {
	// Rank is 0 for a scalar, 1 for a vector, 2 for a matrix.
	Rank() int
	// Pos is the model-file position the node was made from; rewrites keep
	// the position of the node they replace.
	Pos() source.Pos
	exprNode()
}

// At is embedded in every node to carry its source position.
type At struct{ P source.Pos }

// Pos returns the source position.
func (a At) Pos() source.Pos { return a.P }

// Num is an exact rational constant.
type Num struct {
	At
	Val *big.Rat
}

// Const is a named irrational constant (only π at present).
type Const struct {
	At
	Name string
}

// Coord is a Cartesian coordinate x (Axis 0), y (1) or z (2).
type Coord struct {
	At
	Axis int
}

// AxisName is the model-language name of coordinate axis k: x, y or z.
func AxisName(k int) string { return [...]string{"x", "y", "z"}[k] }

// Time is the time variable t.
type Time struct{ At }

// SymKind says what a symbol stands for.
type SymKind uint8

const (
	// Coefficient is a model coefficient ("given"), with a definition
	// that lowering substitutes.
	Coefficient SymKind = iota
	// CellQuantity is a quantity of the cell or the discretisation (see
	// Quantity); Sym.Q says which.
	CellQuantity
	// Tau is the stabilisation parameter of one equation.
	Tau
	// Param is a formula parameter; it never survives formula expansion.
	Param
	// FineScale is the fine scale U′ = −τ R(U) of residual-based VMS
	// (compiler.FineScale), with a definition that lowering substitutes.
	FineScale
	// LaggedFineScale is the fine scale at the previous iterate,
	// −τ R(previous(U)), which convects in place of previous(U) in a model
	// that lags its convecting velocity (Picard).
	LaggedFineScale
	// Gateaux is the Gateaux derivative δX = d/dε X(u + εδu)|ε=0 of the
	// τ or fine-scale symbol Of in the direction of the Newton increment
	// δu, with a definition that lowering substitutes.
	Gateaux
	// Capture is the discontinuity-capturing diffusivity of one equation
	// ("capture for U = ..."), with a definition that lowering
	// substitutes; it may depend on the unknowns and their residual.
	Capture
)

var symKindNames = [...]string{"coefficient", "cell quantity", "tau", "parameter", "fine-scale quantity", "lagged fine-scale quantity", "gateaux derivative", "discontinuity-capturing diffusivity"}

func (k SymKind) String() string { return symKindNames[k] }

// Sym is a named quantity that is not the unknown: a coefficient, a cell
// quantity, a τ, or a formula parameter.
type Sym struct {
	At
	Name string
	Kind SymKind
	R    int
	// Deps says on what the symbol's value may depend (known from its
	// definition). A derivative along a variable not in Deps is zero.
	Deps Deps
	// Q is the quantity a CellQuantity symbol stands for.
	Q Quantity
	// Of is the symbol whose derivative a Gateaux symbol is.
	Of *Sym
}

// Deps is a set of variables a quantity may depend on.
type Deps uint8

// Dependency bits. Cell quantities and τ have none: they are constant
// inside each cell, so their derivatives inside a cell vanish.
const (
	DepX Deps = 1 << iota
	DepY
	DepZ
	DepT
)

// DepAxis is the dependency bit of coordinate axis k.
func DepAxis(k int) Deps { return DepX << uint(k) }

// Spatial reports whether the set contains any coordinate.
func (d Deps) Spatial() bool { return d&(DepX|DepY|DepZ) != 0 }

// Role says which function a Field node denotes.
type Role uint8

const (
	// Trial is the unknown u (the trial function in a weak form).
	Trial Role = iota
	// Test is the test function v paired with an unknown's equation.
	Test
	// Previous is the previous iterate of an unknown (a known field, used
	// for Picard linearisation of a convecting velocity, and the iterate
	// u_k that the residual and Jacobian of a Newton step read).
	Previous
	// Increment is the Newton increment δu of an unknown in a derived
	// Jacobian form J(u; δu, v). It appears in derivations only: lowering
	// makes it the trial function of the Newton step (see NonlinearForm).
	Increment
	// Recovered is a second derivative of the iterate that Previous
	// denotes, reconstructed from the recovered gradient G_h of that
	// iterate (a continuous field of the unknown's linear element; see
	// LoweredForm.Recovery): a FieldD with this role and the second-order
	// multi-index e_i + e_j reads ½(∂_j G_h,i + ∂_i G_h,j) of its
	// component. It appears in lowered coefficients only, where the
	// strong residual of a stabilised method on linear elements would
	// otherwise lose the second derivatives of the unknown (Jansen,
	// Collis, Whiting & Shakib 1999, CMAME 174).
	Recovered
)

var roleNames = [...]string{"trial", "test", "previous", "increment", "recovered"}

func (r Role) String() string { return roleNames[r] }

// Field is an unknown of the model, in one of its roles.
type Field struct {
	At
	Name string
	// Index is the unknown's position in the model's list of unknowns
	// (its block row and column in the block operator).
	Index int
	Role  Role
	R     int
}

// Add is a sum of terms of equal rank.
type Add struct {
	At
	Terms []Expr
}

// Mul is a product. All factors are scalars except at most one, which gives
// the product its rank.
type Mul struct {
	At
	Factors []Expr
}

// Pow is Base raised to Exp; both scalars.
type Pow struct {
	At
	Base, Exp Expr
}

// Call applies an elementary function. The result is a scalar.
type Call struct {
	At
	Fn   Func
	Args []Expr
}

// Vec is a vector (or, when its elements are vectors, a matrix given by
// rows).
type Vec struct {
	At
	Elems []Expr
}

// Comp selects component I (0-based) of a vector, or row I of a matrix.
type Comp struct {
	At
	X Expr
	I int
}

// Dot contracts the last index of A with the first index of B: the dot
// product of two vectors, a matrix–vector product, and so on.
type Dot struct {
	At
	A, B Expr
}

// DDot is the double contraction A:B = Σ_ij A_ij B_ij of two matrices.
type DDot struct {
	At
	A, B Expr
}

// Grad is the gradient; for a vector X, (∇X)_ij = ∂X_i/∂x_j.
type Grad struct {
	At
	X Expr
}

// Div is the divergence; for a matrix X, (∇·X)_i = Σ_j ∂X_ij/∂x_j.
type Div struct {
	At
	X Expr
}

// Lap is the Laplacian, componentwise for vectors.
type Lap struct {
	At
	X Expr
}

// Partial is the partial derivative with respect to coordinate Axis.
type Partial struct {
	At
	X    Expr
	Axis int
}

// TimeDeriv is the partial time derivative ∂X/∂t.
type TimeDeriv struct {
	At
	X Expr
}

// Outer is the outer product (A⊗B)_ij = A_i B_j of two vectors.
type Outer struct {
	At
	A, B Expr
}

// FieldD is a scalar leaf of lowered (componentwise) expressions: one
// component of a field, differentiated D[k] times in coordinate k, and
// DT times in time. It appears only after lowering.
type FieldD struct {
	At
	Field *Field
	Comp  int
	D     [3]uint8
	DT    uint8
}

// Named is one scalar component of a coefficient, τ or fine-scale quantity
// in a lowered expression, kept under its model name: X is the component's
// lowered definition and Sym the symbol it came from (with I, J the
// component, 0 for scalars). Lowering makes one Named per component and
// shares it wherever the symbol occurs. Evaluators and derivatives see
// through it; the simplifier treats it as one factor of the enclosing
// expression (its definition is simplified on its own), so derived forms
// and generated kernels read τ_c rather than τ's expanded formula, and a
// back end computes it once under that name.
type Named struct {
	At
	Sym  *Sym
	I, J int
	X    Expr
}

// Name is the model name of the component: the symbol's name, with
// 1-based component indices for vectors and matrices ("a[2]").
func (n *Named) Name() string {
	switch n.Sym.R {
	case 1:
		return fmt.Sprintf("%s[%d]", n.Sym.Name, n.I+1)
	case 2:
		return fmt.Sprintf("%s[%d][%d]", n.Sym.Name, n.I+1, n.J+1)
	}
	return n.Sym.Name
}

// CellQ is a scalar leaf of lowered expressions: component (I, J) of a
// quantity (I = J = 0 for scalar ones).
type CellQ struct {
	At
	Q    Quantity
	I, J int
}

func (*Num) exprNode()       {}
func (*Const) exprNode()     {}
func (*Coord) exprNode()     {}
func (*Time) exprNode()      {}
func (*Sym) exprNode()       {}
func (*Field) exprNode()     {}
func (*Add) exprNode()       {}
func (*Mul) exprNode()       {}
func (*Pow) exprNode()       {}
func (*Call) exprNode()      {}
func (*Vec) exprNode()       {}
func (*Comp) exprNode()      {}
func (*Dot) exprNode()       {}
func (*DDot) exprNode()      {}
func (*Outer) exprNode()     {}
func (*Grad) exprNode()      {}
func (*Div) exprNode()       {}
func (*Lap) exprNode()       {}
func (*Partial) exprNode()   {}
func (*TimeDeriv) exprNode() {}
func (*FieldD) exprNode()    {}
func (*CellQ) exprNode()     {}
func (*Named) exprNode()     {}

// Rank implementations.

func (*Num) Rank() int   { return 0 }
func (*Const) Rank() int { return 0 }
func (*Coord) Rank() int { return 0 }
func (*Time) Rank() int  { return 0 }
func (s *Sym) Rank() int { return s.R }

func (f *Field) Rank() int { return f.R }

func (a *Add) Rank() int {
	if len(a.Terms) == 0 {
		return 0
	}
	return a.Terms[0].Rank()
}

func (m *Mul) Rank() int {
	r := 0
	for _, f := range m.Factors {
		if f.Rank() > r {
			r = f.Rank()
		}
	}
	return r
}

func (*Pow) Rank() int  { return 0 }
func (*Call) Rank() int { return 0 }

func (v *Vec) Rank() int {
	if len(v.Elems) == 0 {
		return 1
	}
	return 1 + v.Elems[0].Rank()
}

func (c *Comp) Rank() int      { return c.X.Rank() - 1 }
func (d *Dot) Rank() int       { return d.A.Rank() + d.B.Rank() - 2 }
func (*DDot) Rank() int        { return 0 }
func (*Outer) Rank() int       { return 2 }
func (g *Grad) Rank() int      { return g.X.Rank() + 1 }
func (d *Div) Rank() int       { return d.X.Rank() - 1 }
func (l *Lap) Rank() int       { return l.X.Rank() }
func (p *Partial) Rank() int   { return p.X.Rank() }
func (d *TimeDeriv) Rank() int { return d.X.Rank() }
func (*FieldD) Rank() int      { return 0 }
func (*CellQ) Rank() int       { return 0 }
func (n *Named) Rank() int     { return n.X.Rank() }
