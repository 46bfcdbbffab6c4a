// Package dof numbers the degrees of freedom of one or several Lagrange
// fields on a mesh: scalar and vector fields, P1/P2 on simplices and Q1/Q2
// on quadrilaterals and hexahedra, several fields in one system (equal
// order or mixed, e.g. P2 velocity with P1 pressure).
//
// Place in the flow lang -> compiler -> runtime: the compiler's lowered
// form names the unknowns and their elements; runtime/problem turns them
// into FieldSpecs, this package numbers them, and runtime/assemble uses the
// cell-to-dof table for the sparsity pattern, the scatter positions and
// the gathering of previous iterates.
//
// # Nodes
//
// P2/Q2 nodes on mesh edges and faces are shared between neighbouring
// cells. The edge and face tables are built from the cells alone: each
// local edge/face is keyed by its sorted global vertex tuple, the keys are
// counting-sorted on their smallest vertex and the short buckets sorted on
// the rest, and equal keys get one number (no hash maps). Every node has
// coordinates (NodeCoords), so output and Dirichlet data can be evaluated
// there; P2 and P1 spaces on one mesh share the vertex node numbers.
//
// # Global dof order
//
// Field-major blocks: all dofs of field 0, then of field 1, and so on.
// Within a field, node-major with the components interleaved:
//
//	global = Field.Offset + node*Components + comp.
//
// # Local (element) dof order
//
// Field-major, then component, then element node (the node order of
// runtime/element):
//
//	local = Field.LocalOffset + comp*Element.NumNodes() + elementNode.
//
// Element kernels (runtime/assemble) use this local order for their rows
// (test functions) and columns (trial functions).
package dof
