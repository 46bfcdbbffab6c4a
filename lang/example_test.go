package lang_test

import (
	"fmt"
	"os"

	"github.com/formwright/formwright/lang"
)

func ExampleParse() {
	src := []byte(`model drift
dimension 1
unknown u: scalar P1
given a = 2
equation for u: a*grad(u)[1] - lap(u) = 0
at left: u = 0
given k = 1 + * 2
`)
	f, errs := lang.Parse("drift.fw", src)
	errs.Format(os.Stdout, map[string][]byte{"drift.fw": src})

	// The good statements are all in the tree.
	for _, s := range f.Stmts {
		if eq, ok := s.(*lang.EquationStmt); ok {
			fmt.Printf("%v: equation for %s: %s = %s\n", eq.Pos(), eq.For.Text, lang.ExprString(eq.LHS), lang.ExprString(eq.RHS))
			lhs := eq.LHS.(*lang.Binary)
			fmt.Printf("top operator %q at %v\n", lhs.Op, lhs.OpPos)
		}
	}
	fmt.Println(len(f.Stmts), "statements")
	// Output:
	// drift.fw:7:15: expected an expression after "+"
	//     given k = 1 + * 2
	//                   ^
	// drift.fw:5:1: equation for u: a*grad(u)[1] - lap(u) = 0
	// top operator "-" at drift.fw:5:30
	// 6 statements
}
