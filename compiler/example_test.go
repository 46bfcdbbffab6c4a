package compiler_test

import (
	"fmt"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/notation"
	"github.com/formwright/formwright/lang"
)

// Derive the formal adjoint and the VMS test operator of an advection–
// diffusion operator whose velocity has a divergence: the adjoint gains
// the −(∇·a) v term.
func ExampleDerive() {
	src := `model example
dimension 2
unknown u: scalar P1
given a = [x, 0]
given k = 1/10
equation for u: a . grad(u) - div(k*grad(u)) = 1
stabilise vms
tau for u = 1
`
	f, _ := lang.Parse("example.fw", []byte(src))
	m, errs := compiler.Check(f, compiler.CheckOptions{})
	if len(errs) > 0 {
		fmt.Println(errs)
		return
	}
	d, err := compiler.Derive(m, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	names := notation.Names{Test: map[int]string{0: "v"}}
	fmt.Println("L* v =", notation.Expr(d.Adjoint[0], notation.Text, names))
	fmt.Println("with a substituted:", notation.Expr(compiler.Simplify(ir.Expand(compiler.LowerExpr(m, d.Adjoint[0])[0]), 2), notation.Syntax, names))
	// Output:
	// L* v = −k Δv − (∇·a) v − a·∇v
	// with a substituted: -x*partial(test(u), x) - test(u) - (1/10)*partial(test(u), x, x) - (1/10)*partial(test(u), y, y)
}
