// Package interp is the interpreted reference path of formwright's
// runtime: it evaluates the lowered forms of compiler/ir directly, without
// generated code.
//
// Place in the flow lang -> compiler -> runtime: the compiler lowers a
// model to an ir.LoweredForm; this package turns it into element kernels
// (kernel.Kernel, kernel.FacetKernel) that runtime/assemble loops over
// and runtime/problem solves with. The generated Go kernels of the back
// end implement the same interfaces and are tested against these.
//
// # Coefficient tapes
//
// Each lowered coefficient is compiled once into a tape (runtime/tape):
// exact rationals become float64 at compile time, constant subexpressions
// are folded and the inputs are slots of an environment that the kernel
// fills per cell and per quadrature point.
//
// # Kernels
//
// NewKernel and NewFacetKernels build the kernels of a form's cell and
// boundary integrals. Terms are grouped by (test field, component,
// derivative β) and (trial field, component, derivative α) and their
// coefficients summed; coefficients constant in a cell (depending only on
// t, diam(K), meas(K)) are evaluated once per cell, the others
// at every quadrature point. At each point the kernel maps the geometry
// (element.Table.Map: physical gradients and Hessians, including the
// curvature term of non-affine maps), gathers the needed basis-derivative
// vectors, evaluates the tapes and performs, per block and test
// derivative β, the update
//
//	A[i][j] += w · D^β φ_i · Σ_α c_βα D^α φ_j,    b[i] += w · Σ_β c_β D^β φ_i,
//
// so the inner loop is a plain axpy over the trial nodes. diam(K) is
// kernel.CellDiameter (the largest vertex distance) and meas(K)
// kernel.CellVolume.
package interp
