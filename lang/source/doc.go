// Package source holds what every stage of formwright says about a model
// file: positions (Pos, Span) and the error list (Error, ErrorList) with
// its caret formatting and spelling hints (Suggest).
//
// It depends on nothing of formwright, so the IR, the compiler and the
// runtime can carry model positions without linking the parser. Place in
// the flow: it is the root of the import graph (lang, compiler/ir and
// everything above them import it).
package source
