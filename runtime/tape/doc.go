// Package tape compiles lowered coefficient expressions (compiler/ir) to
// small stack-machine programs over float64 and runs them, plainly (Eval)
// or in forward-mode automatic differentiation along x, y and z
// (EvalGrad; Griewank & Walther, Evaluating Derivatives, 2nd ed., SIAM
// 2008).
//
// Compilation turns exact rationals into float64, folds constant
// subexpressions, shares repeated subexpressions through temporaries,
// writes integer powers as repeated multiplication, and reads every input
// from a slot of an environment: x, y, z, t, the cell quantities, the
// metric tensor G, the outward normal and one slot per previous-iterate
// value or derivative (Slots). Evaluation does not allocate.
//
// Place in the flow lang → compiler → runtime: the interpreted kernels
// (runtime/interp) evaluate their coefficients with it, and runtime/problem
// evaluates boundary data, exact solutions and initial values with it.
// It reads compiler/ir only.
package tape
