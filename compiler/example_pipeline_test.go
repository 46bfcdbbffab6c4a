package compiler_test

import (
	"fmt"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// Example_pipeline walks a model from source text to the assembled matrix
// through the library, the path the command takes: parse (lang), check,
// derive and lower (compiler), then number, assemble and constrain
// (runtime/problem). The model is −u″ = 1 on (0, 1) with u = 0 at both
// ends, Galerkin on four P1 cells (h = 1/4): the stiffness rows of the
// interior nodes are (−1, 2, −1)/h and the load h, the textbook system
// (e.g. Hughes, The Finite Element Method, 1987, §1.10).
func Example_pipeline() {
	src := `model rod
dimension 1
unknown u: scalar P1
equation for u: -lap(u) = 1
at all: u = 0
`
	file, errs := lang.Parse("rod.fw", []byte(src))
	m, cerrs := compiler.Check(file, compiler.CheckOptions{})
	if len(errs)+len(cerrs) > 0 {
		fmt.Println(errs, cerrs)
		return
	}
	d, err := compiler.Derive(m, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	form, err := d.Lower(compiler.Galerkin)
	if err != nil {
		fmt.Println(err)
		return
	}
	a, err := problem.Assemble(form, mesh.Span1(0, 1, 4, 1), problem.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("kernels:", a.Kernels)
	for i, x := range a.Dofs.NodeCoords(0) {
		row := make([]float64, a.Dofs.NumDofs)
		for k := a.Matrix.RowPtr[i]; k < a.Matrix.RowPtr[i+1]; k++ {
			row[a.Matrix.Col[k]] = a.Matrix.Val[k]
		}
		fmt.Printf("x = %.2f  fixed %-5v  A row %v  b %.3g\n", x, a.Fixed[i], row, a.RHS[i])
	}
	// Unordered output:
	// kernels: interpreted
	// x = 0.00  fixed true   A row [4 -4 0 0 0]  b 0.125
	// x = 0.25  fixed false  A row [-4 8 -4 0 0]  b 0.25
	// x = 0.50  fixed false  A row [0 -4 8 -4 0]  b 0.25
	// x = 0.75  fixed false  A row [0 0 -4 8 -4]  b 0.25
	// x = 1.00  fixed true   A row [0 0 0 -4 4]  b 0.125
}
