// Package sparse holds the compressed sparse row (CSR) matrix used by the
// formwright runtime.
//
// Place in the flow lang -> compiler -> runtime: the compiler emits element
// kernels; the runtime builds the global sparsity pattern from the mesh
// connectivity with PatternFromElements, precomputes for every element the
// positions of its local entries with ScatterIndex, lets the kernels add
// their element matrices into Val without searching, applies Dirichlet
// conditions with EliminateRows, and hands the matrix to package
// runtime/linsolve.
//
// Storage follows the classical CSR layout (Saad, Iterative Methods for
// Sparse Linear Systems, 2nd ed., SIAM 2003, §3.4): row i occupies
// Col[RowPtr[i]:RowPtr[i+1]] and Val[RowPtr[i]:RowPtr[i+1]], with columns
// strictly increasing within a row. Column indices are int32 (so the
// number of columns is limited to 2^31-1), row pointers are int.
//
// No function changes RowPtr or Col of an existing matrix (EliminateRows
// and the assembly helpers write Val only), so several matrices may share
// one pattern.
//
// Misuse (mismatched lengths, out-of-range indices) panics with a message
// prefixed "sparse: ". No method returns an error: every operation here is
// total on well-formed input.
package sparse
