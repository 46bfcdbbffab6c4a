// Package ir is the typed expression IR of formwright's compiler.
//
// Expressions are a closed family of nodes (Expr, sealed by an unexported
// method), each with a rank (0 scalar, 1 vector, 2 matrix) and the model
// position it was made from, which rewrites keep. Tensor-level nodes (Grad,
// Div, Lap, Dot, ...) are what derivations print; lowering writes them as
// scalar components over FieldD and CellQ leaves, the form the runtime
// evaluates. lowered.go defines that contract (LoweredForm), eval.go a
// slow reference evaluator for tests, hash.go the content hash under which
// compiled kernels register.
//
// In the flow lang → compiler → runtime, ir is shared by the compiler (which
// builds it) and the runtime (which evaluates lowered forms).
package ir
