// Package notation writes IR expressions in the three notations formwright
// prints: the model language's own syntax (which compiler.Model.ParseExpr
// reads back to the same IR), Unicode mathematics, and LaTeX.
//
// It depends only on compiler/ir, so the derivation printers
// (compiler/render) and the back ends (compiler/gogen), which set each
// derived term above the code that implements it, share one printer
// without depending on each other.
package notation
