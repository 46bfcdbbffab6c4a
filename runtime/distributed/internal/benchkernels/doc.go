// Package benchkernels holds the generated Go kernels of the 3D model of
// runtime/distributed's benchmark (kiln_block.fw), so that the pure-Go
// runtime it is compared with assembles with compiled kernels, as the
// PETSc engine does with the generated C ones. Regenerate with "go
// generate"; the root package's tests fail when the file is stale.
package benchkernels

//go:generate go run ../../../.. gen kiln_block.fw -o . --package benchkernels --method galerkin
