// Package assemble builds global sparse systems from element kernels: the
// kernel interfaces shared by the interpreted kernels (runtime/interp) and
// the generated Go kernels of the back end, and a parallel, deterministic
// assembler over a mesh and a dof map.
//
// Place in the flow lang -> compiler -> runtime: kernels implement the
// lowered form of a model; the Assembler loops over the mesh's cells and
// boundary facets, scatters element matrices into a CSR matrix (pattern
// from sparse.PatternFromElements, positions precomputed with
// sparse.CSR.ScatterIndex), and runtime/problem imposes Dirichlet values
// (sparse.CSR.EliminateRows) and solves with runtime/linsolve.
//
// # Determinism
//
// Assemble gives bit-identical matrices and vectors for every worker
// count: each matrix and vector entry receives its cell contributions in
// increasing cell order (see Assembler.Assemble for how), then its facet
// contributions in facet order.
//
// # Allocation
//
// Per-worker buffers are made once per Assemble call; the per-cell path
// (gather coordinates and previous values, kernel, scatter) does not
// allocate.
package assemble
