package lang

import "github.com/formwright/formwright/lang/source"

// The AST. It is what Parse returns and what the compiler walks. Two closed
// families, Stmt and Expr, are sealed by unexported marker methods, so a type
// switch over them can be exhaustive. Every node embeds a Span (From, To),
// giving it Pos() and End(); the positions are exactly those participle
// recorded for the grammar structs the node was lowered from. Parentheses
// are not kept as nodes: the tree shape records the grouping, and the Span
// of a node whose operand was parenthesised covers the parentheses.

// Node is any statement or expression.
type Node interface {
	Pos() source.Pos // first character
	End() source.Pos // just after the last character
}

// Name is an identifier written in the source, with its position.
type Name struct {
	Pos, End source.Pos
	Text     string
}

// File is a parsed model file.
type File struct {
	Name  string // file name as given to Parse
	Src   []byte // the source text
	Stmts []Stmt // the statements that parsed cleanly, in source order
}

// Stmt is one statement. The concrete types are *ModelStmt, *DimensionStmt,
// *SidesStmt, *UseStmt, *UnknownStmt, *GivenStmt, *FormulaStmt,
// *EquationStmt, *BoundaryStmt, *StabiliseStmt, *TauStmt, *CaptureStmt, *MeanStmt,
// *QuadratureStmt and *PartStmt.
type Stmt interface {
	Node
	stmtNode()
}

// ModelStmt is "model NAME".
type ModelStmt struct {
	source.Span
	Name Name
}

// DimensionStmt is "dimension INT". DimPos and DimEnd delimit the number.
type DimensionStmt struct {
	source.Span
	Dim            int
	DimPos, DimEnd source.Pos
}

// SidesStmt is "sides NAME {, NAME}".
type SidesStmt struct {
	source.Span
	Names []Name
}

// UseStmt is "use NAME {, NAME}"; the names are standard library modules.
type UseStmt struct {
	source.Span
	Names []Name
}

// UnknownStmt is "unknown NAME : RANK ELEMENT". Rank is "scalar" or
// "vector"; Element is recorded as written (the checker validates it).
type UnknownStmt struct {
	source.Span
	Name    Name
	Rank    string
	Element Name
}

// GivenStmt is "given NAME = EXPR".
type GivenStmt struct {
	source.Span
	Name  Name
	Value Expr
}

// FormulaStmt is "formula NAME ( PARAMS ) = EXPR".
type FormulaStmt struct {
	source.Span
	Name   Name
	Params []Name
	Body   Expr
}

// EquationStmt is "equation for NAME : LHS = RHS".
type EquationStmt struct {
	source.Span
	For      Name
	LHS, RHS Expr
}

// BoundaryStmt is "at SIDES : TARGET = EXPR". Flux is true when the target
// was written "flux(NAME)" (a flux or Robin condition) and false for a value
// condition "NAME".
type BoundaryStmt struct {
	source.Span
	Sides  []Name
	Flux   bool
	Target Name
	Value  Expr
}

// StabiliseStmt is "stabilise METHOD {, METHOD}".
type StabiliseStmt struct {
	source.Span
	Methods []Name
}

// TauStmt is "tau for NAME = EXPR".
type TauStmt struct {
	source.Span
	For   Name
	Value Expr
}

// CaptureStmt is "capture for NAME = EXPR": a discontinuity-capturing
// diffusivity for the equation of unknown NAME, which the compiler adds to
// every stabilised form of that equation as Σ_K (κ_dc ∇u, ∇v)_K. EXPR may
// read residual(NAME), the residual of the equation.
type CaptureStmt struct {
	source.Span
	For   Name
	Value Expr
}

// QuadratureStmt is "quadrature INT": the degree of the quadrature rules
// of every integral of the model, instead of the automatic choice.
type QuadratureStmt struct {
	source.Span
	Degree               int
	DegreePos, DegreeEnd source.Pos
}

// MeanStmt is "mean NAME = EXPR": the mean of an unknown over the domain,
// for an unknown the other conditions fix only up to a constant (the
// pressure of an enclosed flow).
type MeanStmt struct {
	source.Span
	Target Name
	Value  Expr
}

// PartStmt is "part NAME = SET": a boundary part the model defines, to be
// named in conditions like a side.
type PartStmt struct {
	source.Span
	Name Name
	Set  PartSet
}

// PartSet is a set of boundary facets. The concrete types are *PartName,
// *PartWhere and *PartBinary.
type PartSet interface {
	Node
	partNode()
}

// PartName is a part named in a set: a side or part of the mesh, "all", or
// a part the model defines.
type PartName struct {
	source.Span
	Name string
}

// PartWhere is a midpoint condition "{T0 R0 T1 R1 T2 ...}": the boundary
// facets whose midpoint satisfies every comparison Terms[i] Rels[i]
// Terms[i+1]. Rels are "<=", "<", ">=", ">" or "="; RelPos their positions.
type PartWhere struct {
	source.Span
	Terms  []Expr
	Rels   []string
	RelPos []source.Pos
}

// PartBinary is "X Op Y" with Op "cup" (union), "cap" (intersection) or
// "minus" (difference).
type PartBinary struct {
	source.Span
	Op    string
	OpPos source.Pos
	X, Y  PartSet
}

func (*PartName) partNode()   {}
func (*PartWhere) partNode()  {}
func (*PartBinary) partNode() {}

func (*PartStmt) stmtNode()       {}
func (*MeanStmt) stmtNode()       {}
func (*QuadratureStmt) stmtNode() {}
func (*ModelStmt) stmtNode()      {}
func (*DimensionStmt) stmtNode()  {}
func (*SidesStmt) stmtNode()      {}
func (*UseStmt) stmtNode()        {}
func (*UnknownStmt) stmtNode()    {}
func (*GivenStmt) stmtNode()      {}
func (*FormulaStmt) stmtNode()    {}
func (*EquationStmt) stmtNode()   {}
func (*BoundaryStmt) stmtNode()   {}
func (*StabiliseStmt) stmtNode()  {}
func (*TauStmt) stmtNode()        {}
func (*CaptureStmt) stmtNode()    {}

// Expr is an expression. The concrete types are *Number, *Ident, *Call,
// *Binary, *Unary, *Index and *List.
type Expr interface {
	Node
	exprNode()
}

// Number is a numeric literal. Text is the exact source text ("1e-3",
// "2.5E+3"), so the compiler can turn it into an exact rational. It never
// has a sign: "-1" is a Unary.
type Number struct {
	source.Span
	Text string
}

// Ident is a name used in an expression.
type Ident struct {
	source.Span
	Name string
}

// Call is "Func(Args...)". FuncPos is the position of the function name.
type Call struct {
	source.Span
	Func    string
	FuncPos source.Pos
	Args    []Expr
}

// Binary is "X Op Y" with Op one of "+", "-", "*", "/", "." (contraction,
// the dot product) and "^". OpPos is the position of the operator.
type Binary struct {
	source.Span
	Op    string
	OpPos source.Pos
	X, Y  Expr
}

// Unary is "Op X" with Op "-" or "+".
type Unary struct {
	source.Span
	Op string
	X  Expr
}

// Index is "X[Index]", a 1-based component (the checker validates the
// range). IndexPos is the position of the number.
type Index struct {
	source.Span
	X        Expr
	Index    int
	IndexPos source.Pos
}

// List is a vector or matrix literal "[e1, e2, ...]"; elements may be
// lists themselves ("[[1,0],[0,1]]").
type List struct {
	source.Span
	Elems []Expr
}

func (*Number) exprNode() {}
func (*Ident) exprNode()  {}
func (*Call) exprNode()   {}
func (*Binary) exprNode() {}
func (*Unary) exprNode()  {}
func (*Index) exprNode()  {}
func (*List) exprNode()   {}

// Inspect walks the tree rooted at n in depth-first order, calling f for
// each node (statements and expressions; Names are not nodes). If f returns
// false the children of that node are skipped. n may be a *File.
func Inspect(n any, f func(Node) bool) {
	switch n := n.(type) {
	case *File:
		for _, s := range n.Stmts {
			Inspect(s, f)
		}
		return
	case nil:
		return
	case Node:
		if !f(n) {
			return
		}
	}
	switch n := n.(type) {
	case *GivenStmt:
		Inspect(n.Value, f)
	case *FormulaStmt:
		Inspect(n.Body, f)
	case *EquationStmt:
		Inspect(n.LHS, f)
		Inspect(n.RHS, f)
	case *BoundaryStmt:
		Inspect(n.Value, f)
	case *TauStmt:
		Inspect(n.Value, f)
	case *CaptureStmt:
		Inspect(n.Value, f)
	case *MeanStmt:
		Inspect(n.Value, f)
	case *PartStmt:
		Inspect(n.Set, f)
	case *PartWhere:
		for _, t := range n.Terms {
			Inspect(t, f)
		}
	case *PartBinary:
		Inspect(n.X, f)
		Inspect(n.Y, f)
	case *Call:
		for _, a := range n.Args {
			Inspect(a, f)
		}
	case *Binary:
		Inspect(n.X, f)
		Inspect(n.Y, f)
	case *Unary:
		Inspect(n.X, f)
	case *Index:
		Inspect(n.X, f)
	case *List:
		for _, e := range n.Elems {
			Inspect(e, f)
		}
	}
}
