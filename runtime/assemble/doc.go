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
// # Parallel loop
//
// Cells are split into contiguous chunks that workers take in turn; a
// chunk adds straight into the rows only it and later chunks touch and
// logs its contributions to rows shared with earlier chunks, which are
// replayed in chunk order at the end (see chunkPlan). The per-worker
// buffers are padded so that no two workers write one cache line.
//
// # Allocation
//
// Per-worker buffers are made once per Assemble call and the chunk logs
// once per Assembler; the per-cell path (gather coordinates and previous
// values, kernel, scatter) does not allocate.
package assemble
