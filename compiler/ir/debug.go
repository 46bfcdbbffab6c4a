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
	head := ""
	switch e := e.(type) {
	case *Num:
		b.WriteString(e.Val.RatString())
		return
	case *Const:
		b.WriteString(e.Name)
		return
	case *Coord:
		b.WriteString(AxisName(e.Axis))
		return
	case *Time:
		b.WriteString("t")
		return
	case *Sym:
		b.WriteString(e.Name)
		return
	case *Field:
		fmt.Fprintf(b, "%s:%s", e.Role, e.Name)
		return
	case *FieldD:
		fmt.Fprintf(b, "%s:%s[%d]d%v", e.Field.Role, e.Field.Name, e.Comp, e.D)
		return
	case *CellQ:
		fmt.Fprintf(b, "%s[%d,%d]", e.Q, e.I, e.J)
		return
	case *Named:
		head = "named " + e.Name()
	case *Call:
		head = e.Fn.String()
	case *Comp:
		head = fmt.Sprintf("comp%d", e.I)
	case *Partial:
		head = "d" + AxisName(e.Axis)
	default:
		head = strings.ToLower(fmt.Sprintf("%T", e)[4:])
	}
	b.WriteString("(" + head)
	for _, k := range Children(e) {
		b.WriteString(" ")
		debug(b, k)
	}
	b.WriteString(")")
}
