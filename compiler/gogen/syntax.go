package gogen

import (
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// The kernel description: everything the generator decides, in a form
// that does not depend on the target language. The scalar DAG, its
// schedule, the tabulated reference data, the pre-integrated blocks and
// the symmetric and loop decisions all end here; a printer (goprint.go for
// Go, cprint.go for C) only spells the description in its language.

// kernelFile is the kernels of one model: one formPlan per lowered form.
type kernelFile struct {
	forms []*formPlan
	// usesSign, usesMin and usesMax say whether some body calls the
	// sign, min or max helper.
	usesSign, usesMin, usesMax bool
}

// formPlan is the cell kernel and the facet kernels of one lowered form.
type formPlan struct {
	lf     *ir.LoweredForm
	method string // the form's method: galerkin, supg, gls, vms
	ident  string // the method as an identifier part: Galerkin, SUPG ...
	suffix string // distinguishes a second form of one method in a file
	cell   cell.Type
	degree int // quadrature degree
	fields []fieldInfo
	n      int // local dofs
	geom   *element.Element
	hash   string // ir.FormHash
	cellK  *bodyPlan
	sides  []*sidePlan
	prev   bool // some body reads the previous iterate
}

// sidePlan is the facet kernel of one boundary side: one body per local
// facet of the cell.
type sidePlan struct {
	name   string
	facets []*bodyPlan
}

// bodyPlan is one element computation: the cell integral, or the integral
// over one local facet.
type bodyPlan struct {
	facet  int // local facet, −1 for the cell
	points int // quadrature points
	sym    bool
	stmts  []stmt
	tables []*table
	prev   bool // reads the previous iterate
	rec    bool // reads the recovered gradient of the previous iterate
	// usesSign, usesMin and usesMax record the helpers the body calls.
	usesSign, usesMin, usesMax bool
}

// table is tabulated reference data: rows[q] at quadrature point q, or a
// single row vec (the quadrature weights). Its name is unique in its
// form; a printer adds the form's prefix.
type table struct {
	name string // e.g. CellBasis2Grad
	rows [][]float64
	vec  []float64
}

// Expressions.

type expr interface{ exprNode() }

// numLit is a float64 constant (printed as literalOf says).
type numLit struct{ v float64 }

// intLit is an integer (an index).
type intLit struct{ v int }

// varRef is a local variable: a scheduled DAG node or a loop variable.
type varRef struct{ name string }

// inputRef reads the kernel input: a geometry node coordinate or a
// previous-iterate dof (index set), the time or the time step.
type inputRef struct {
	kind  leafKind // leafCoord, leafPrev, leafRec, leafTime, leafStep
	index expr
}

// tableRef is tab[point][index], or tab[point] when index is nil.
type tableRef struct {
	tab          *table
	point, index expr
}

// arrayRef is an element of a local array (acc, rhs, basisK, row) or of an
// output (A, b).
type arrayRef struct {
	array string
	index expr
}

// binary is x op y with op one of + − * /, evaluated left to right.
type binary struct {
	op   byte
	x, y expr
}

// negate is −x.
type negate struct{ x expr }

// call applies an elementary function (op opFn, fn), min, max or pow.
type call struct {
	op   opKind
	fn   ir.Func
	args []expr
}

func (numLit) exprNode()   {}
func (intLit) exprNode()   {}
func (varRef) exprNode()   {}
func (inputRef) exprNode() {}
func (tableRef) exprNode() {}
func (arrayRef) exprNode() {}
func (binary) exprNode()   {}
func (negate) exprNode()   {}
func (call) exprNode()     {}

// Statements.

type stmt interface{ stmtNode() }

// commentStmt is a comment above the statements that follow; each line is
// already in its final form (see comments.go).
type commentStmt struct{ lines []string }

// defStmt defines a scalar that is assigned once.
type defStmt struct {
	name string
	x    expr
}

// setStmt is lhs = x, or lhs += x when add.
type setStmt struct {
	lhs arrayRef
	add bool
	x   expr
}

// arrayStmt declares a local array of n zeros.
type arrayStmt struct {
	name string
	n    int
}

// forStmt runs body for v = from, from+1, ..., n−1.
type forStmt struct {
	v    string
	from expr
	n    int
	body []stmt
}

// rowStmt is the inner loop of an accumulation over basis-function pairs:
// array[base+j] += x for j = from, ..., n−1 (x reads the loop variable j).
type rowStmt struct {
	array string
	base  expr
	from  expr
	n     int
	j     string
	x     expr
}

// guardStmt fills the outputs with NaN and returns when det is not
// positive (a degenerate or inverted cell).
type guardStmt struct{ det expr }

// zeroStmt sets the n entries of array to zero.
type zeroStmt struct {
	array string
	n     int
}

// copyStmt copies the n entries of src into dst.
type copyStmt struct {
	dst, src string
	n        int
}

// previousStmt makes pv the previous iterate's n local dofs, zeros when
// the input has none.
type previousStmt struct{ n int }

// recoveredStmt makes rv the n values of the recovered gradient at the
// local dofs (kernel.CellInput.Recovered), zeros when the input has none.
type recoveredStmt struct{ n int }

func (commentStmt) stmtNode()   {}
func (defStmt) stmtNode()       {}
func (setStmt) stmtNode()       {}
func (arrayStmt) stmtNode()     {}
func (forStmt) stmtNode()       {}
func (rowStmt) stmtNode()       {}
func (guardStmt) stmtNode()     {}
func (zeroStmt) stmtNode()      {}
func (copyStmt) stmtNode()      {}
func (previousStmt) stmtNode()  {}
func (recoveredStmt) stmtNode() {}

// Index arithmetic that folds constants, so that printed indices read
// (i*9 + j) rather than ((0+i)*9 + 0 + j).

func idxAdd(a, b expr) expr {
	ai, aok := a.(intLit)
	bi, bok := b.(intLit)
	switch {
	case aok && bok:
		return intLit{ai.v + bi.v}
	case aok && ai.v == 0:
		return b
	case bok && bi.v == 0:
		return a
	}
	return binary{'+', a, b}
}

func idxMul(a expr, k int) expr {
	if ai, ok := a.(intLit); ok {
		return intLit{ai.v * k}
	}
	switch k {
	case 0:
		return intLit{0}
	case 1:
		return a
	}
	return binary{'*', a, intLit{k}}
}
