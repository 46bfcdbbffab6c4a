// Package kernel is the contract between element kernels and the code
// that assembles them: what a kernel reads for one cell or boundary facet
// (CellInput, FacetInput), what it writes (an element matrix and vector),
// the layout of its local dofs (Layout), and the choice of that layout for
// a lowered form on a cell type (LayoutFor).
//
// Place in the flow lang → compiler → runtime: the interpreted kernels
// (runtime/interp) and the Go kernels that the back end generates both
// implement Kernel; runtime/assemble calls them cell by cell. Neither
// kind of kernel depends on the other, only on this package, the
// reference cells (runtime/cell) and elements (runtime/element), and, for
// LayoutFor, the lowered-form contract of compiler/ir.
package kernel
