package lang

import (
	"fmt"
	"io"
	"strconv"
	"strings"
)

// Operator precedence levels, lowest first, as in the grammar.
const (
	precSum     = 1 // + -
	precProduct = 2 // * / .
	precUnary   = 3 // unary - +
	precPower   = 4 // ^
	precPostfix = 5 // e[i], and every primary
)

func precOf(e Expr) int {
	switch e := e.(type) {
	case *Binary:
		switch e.Op {
		case "+", "-":
			return precSum
		case "*", "/", ".":
			return precProduct
		case "^":
			return precPower
		}
	case *Unary:
		return precUnary
	}
	return precPostfix
}

// ExprString formats an expression in the model language with the fewest
// parentheses that keep its tree shape, so that parsing the result gives
// the same tree back.
func ExprString(e Expr) string {
	var b strings.Builder
	writeExpr(&b, e)
	return b.String()
}

func writeExpr(b *strings.Builder, e Expr) {
	switch e := e.(type) {
	case *Number:
		b.WriteString(e.Text)
	case *Ident:
		b.WriteString(e.Name)
	case *Call:
		b.WriteString(e.Func)
		b.WriteByte('(')
		for i, a := range e.Args {
			if i > 0 {
				b.WriteString(", ")
			}
			writeExpr(b, a)
		}
		b.WriteByte(')')
	case *List:
		b.WriteByte('[')
		for i, a := range e.Elems {
			if i > 0 {
				b.WriteString(", ")
			}
			writeExpr(b, a)
		}
		b.WriteByte(']')
	case *Index:
		writeOperand(b, e.X, precOf(e.X) < precPostfix)
		b.WriteByte('[')
		b.WriteString(strconv.Itoa(e.Index))
		b.WriteByte(']')
	case *Unary:
		b.WriteString(e.Op)
		// The operand of a unary is itself a unary or a power.
		writeOperand(b, e.X, precOf(e.X) < precUnary)
	case *Binary:
		p := precOf(e)
		if e.Op == "^" {
			// Right-associative; the base is a postfix, the exponent a unary.
			writeOperand(b, e.X, precOf(e.X) < precPostfix)
			b.WriteByte('^')
			writeOperand(b, e.Y, precOf(e.Y) < precUnary)
			return
		}
		writeOperand(b, e.X, precOf(e.X) < p)
		switch e.Op {
		case "*", "/":
			b.WriteString(e.Op)
		default: // + - and the dot, which must not touch a number ("2.x")
			b.WriteString(" " + e.Op + " ")
		}
		writeOperand(b, e.Y, precOf(e.Y) <= p)
	case nil:
		b.WriteString("<nil>")
	default:
		panic(fmt.Sprintf("lang: ExprString: unexpected node %T", e))
	}
}

func writeOperand(b *strings.Builder, e Expr, paren bool) {
	if paren {
		b.WriteByte('(')
	}
	writeExpr(b, e)
	if paren {
		b.WriteByte(')')
	}
}

// StmtString formats one statement in the model language, on one line.
func StmtString(s Stmt) string {
	switch s := s.(type) {
	case *ModelStmt:
		return "model " + s.Name.Text
	case *DimensionStmt:
		return "dimension " + strconv.Itoa(s.Dim)
	case *SidesStmt:
		return "sides " + joinNames(s.Names)
	case *UseStmt:
		return "use " + joinNames(s.Names)
	case *UnknownStmt:
		return fmt.Sprintf("unknown %s: %s %s", s.Name.Text, s.Rank, s.Element.Text)
	case *GivenStmt:
		return fmt.Sprintf("given %s = %s", s.Name.Text, ExprString(s.Value))
	case *FormulaStmt:
		return fmt.Sprintf("formula %s(%s) = %s", s.Name.Text, joinNames(s.Params), ExprString(s.Body))
	case *EquationStmt:
		return fmt.Sprintf("equation for %s: %s = %s", s.For.Text, ExprString(s.LHS), ExprString(s.RHS))
	case *BoundaryStmt:
		target := s.Target.Text
		if s.Flux {
			target = "flux(" + target + ")"
		}
		return fmt.Sprintf("at %s: %s = %s", joinNames(s.Sides), target, ExprString(s.Value))
	case *StabiliseStmt:
		return "stabilise " + joinNames(s.Methods)
	case *TauStmt:
		return fmt.Sprintf("tau for %s = %s", s.For.Text, ExprString(s.Value))
	case *CaptureStmt:
		return fmt.Sprintf("capture for %s = %s", s.For.Text, ExprString(s.Value))
	case *MeanStmt:
		return fmt.Sprintf("mean %s = %s", s.Target.Text, ExprString(s.Value))
	case *QuadratureStmt:
		return "quadrature " + strconv.Itoa(s.Degree)
	case *PartStmt:
		return fmt.Sprintf("part %s = %s", s.Name.Text, PartString(s.Set))
	}
	panic(fmt.Sprintf("lang: StmtString: unexpected statement %T", s))
}

func joinNames(ns []Name) string {
	parts := make([]string, len(ns))
	for i, n := range ns {
		parts[i] = n.Text
	}
	return strings.Join(parts, ", ")
}

// Fprint writes the statements of f in the model language, one per line.
// Comments and layout are not preserved.
func Fprint(w io.Writer, f *File) error {
	for _, s := range f.Stmts {
		if _, err := fmt.Fprintln(w, StmtString(s)); err != nil {
			return err
		}
	}
	return nil
}

// PartString formats a part set in the model language. Set operations
// apply from left to right, so only a right operand that is itself an
// operation needs parentheses.
func PartString(p PartSet) string {
	switch p := p.(type) {
	case *PartName:
		return p.Name
	case *PartWhere:
		var b strings.Builder
		b.WriteByte('{')
		for i, t := range p.Terms {
			if i > 0 {
				b.WriteString(" " + p.Rels[i-1] + " ")
			}
			writeExpr(&b, t)
		}
		b.WriteByte('}')
		return b.String()
	case *PartBinary:
		y := PartString(p.Y)
		if _, ok := p.Y.(*PartBinary); ok {
			y = "(" + y + ")"
		}
		return PartString(p.X) + " " + p.Op + " " + y
	case nil:
		return "<nil>"
	}
	panic(fmt.Sprintf("lang: PartString: unexpected node %T", p))
}
