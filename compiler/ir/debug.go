package ir

import (
	"fmt"
	"strings"
)

// Debug writes e as an S-expression, for test failures and debugging; the
// renderers in compiler/render produce the readable notations.
func Debug(e Expr) string {
	var b strings.Builder
	debug(&b, e)
	return b.String()
}

func debug(b *strings.Builder, e Expr) {
	head, leaf := nodeHead(e)
	if leaf {
		b.WriteString(head)
		return
	}
	b.WriteString("(" + head)
	for _, k := range Children(e) {
		b.WriteString(" ")
		debug(b, k)
	}
	b.WriteString(")")
}

// nodeHead is the text of a node without its children: the whole text of
// a leaf, the operator of an inner node.
func nodeHead(e Expr) (head string, leaf bool) {
	switch e := e.(type) {
	case *Num:
		return e.Val.RatString(), true
	case *Const:
		return e.Name, true
	case *Coord:
		return AxisName(e.Axis), true
	case *Time:
		return "t", true
	case *Sym:
		return e.Name, true
	case *Field:
		return fmt.Sprintf("%s:%s", e.Role, e.Name), true
	case *FieldD:
		return fmt.Sprintf("%s:%s[%d]d%v", e.Field.Role, e.Field.Name, e.Comp, e.D), true
	case *CellQ:
		return fmt.Sprintf("%s[%d,%d]", e.Q, e.I, e.J), true
	case *Named:
		return "named " + e.Name(), false
	case *Call:
		return e.Fn.String(), false
	case *Comp:
		return fmt.Sprintf("comp%d", e.I), false
	case *Partial:
		return "d" + AxisName(e.Axis), false
	}
	return strings.ToLower(fmt.Sprintf("%T", e)[4:]), false
}
