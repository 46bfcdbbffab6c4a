// Package study runs convergence studies by manufactured solutions: it
// solves a form on a sequence of refined meshes, measures the L² and H¹
// errors against an exact solution, computes the observed orders between
// successive meshes and checks them against the expected ones; and it
// sweeps the element Péclet number on one mesh.
//
// The method of manufactured solutions (Roache, Verification and
// Validation in Computational Science and Engineering, Hermosa 1998;
// Salari & Knupp, Sandia report SAND2000-1444, 2000): pick a smooth
// exact solution, derive the source and boundary data that make it exact
// (the compiler does this symbolically, compiler.Manufacture), solve, and
// compare. The observed order between meshes of sizes h₁ > h₂ is
// log(e₁/e₂)/log(h₁/h₂).
//
// Place in the flow lang → compiler → runtime: the command derives and
// lowers the manufactured problem (compiler) and hands the lowered forms,
// the exact solution and the expected orders to Run, which solves with
// runtime/problem and returns a Report; the command prints it.
package study
