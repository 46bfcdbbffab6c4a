// Package lang is the front end of formwright: the model language, its
// parser, its syntax tree and its error list.
//
// The flow is lang -> compiler -> runtime. lang turns a model file (.fw)
// into a *File whose statements and expressions carry exact source
// positions; the compiler checks that tree (names, ranks, elements,
// methods), derives the weak and stabilised forms and generates kernels;
// the runtime assembles and solves them. Syntax errors from lang and
// semantic errors from the compiler's checker share one source.ErrorList
// type (package lang/source, which depends on nothing), so a tool prints
// both the same way (file:line:col, the source line, a caret,
// a hint).
//
// # The model language
//
// A model file is a sequence of statements. "#" starts a comment that runs
// to the end of the line. Newlines are ordinary white space: every
// statement begins with a reserved keyword and ends where the next one
// begins, so no terminator is needed.
//
//	model NAME                                 exactly one (the checker enforces it)
//	dimension INT
//	sides NAME {, NAME}                        optional; defaults exist per dimension
//	use MODULE {, MODULE}                      standard library modules
//	unknown NAME : (scalar|vector) ELEMENT     ELEMENT such as P1, P2, Q1, Q2
//	given NAME = EXPR
//	formula NAME ( [PARAM {, PARAM}] ) = EXPR
//	equation for NAME : EXPR = EXPR
//	at NAME {, NAME} : NAME = EXPR             value condition
//	at NAME {, NAME} : flux ( NAME ) = EXPR    flux or Robin condition
//	stabilise METHOD {, METHOD}
//	tau for NAME = EXPR
//	mean NAME = EXPR                           the mean of an unknown over the domain
//	quadrature INT                             the degree of every quadrature rule
//	part NAME = SET                            a boundary part, named in conditions like a side
//	capture for NAME = EXPR                    discontinuity-capturing diffusivity
//
// The reserved words are model dimension sides use unknown scalar vector
// given formula equation for at flux stabilise tau mean quadrature part capture. They cannot be used as
// names, except that a module name after "use" may be "tau" (the standard
// library module of stabilisation parameters). Every other word, including
// grad, div, lap, partial, dot, diam, sin and exp, is an ordinary identifier; the
// checker resolves it.
//
// Expressions, from lowest to highest precedence:
//
//	level 1   a + b   a - b     binary, left-associative
//	level 2   a * b   a / b     binary, left-associative;
//	          a . b             "." is the contraction (dot product)
//	level 3   -a   +a           unary
//	level 4   a ^ b             binary, right-associative; the exponent is
//	                            a unary, so -x^2 is -(x^2), 2^3^2 is
//	                            2^(3^2) and 2^-1 is allowed
//	level 5   e[INT]            component, 1-based
//	level 6   primaries         numbers, names, calls f(a, b) and f(),
//	                            (EXPR), vector and matrix literals
//	                            [a, b] and [[1, 0], [0, 1]]
//
// # Boundary parts
//
// A part statement names a set of boundary facets, read like set-builder
// notation: "part inlet = bottom cap {x <= 0}" is Γ_in = Γ_bottom ∩
// {x ≤ 0}. In EBNF:
//
//	PartDecl    = "part" NAME "=" PartSet .
//	PartSet     = PartOperand { ("cup" | "cap" | "minus") PartOperand } .
//	PartOperand = "{" EXPR Relation EXPR { Relation EXPR } "}"
//	            | "(" PartSet ")"
//	            | NAME .
//	Relation    = "<=" | "<" | ">=" | ">" | "=" .
//
// cup is the union, cap the intersection and minus the difference; they
// have one precedence and apply from left to right, so "a cup b cap c" is
// (a ∪ b) ∩ c, and parentheses group. A NAME is a side of the mesh
// (declared by "sides", or the default sides of the built-in meshes), all
// (the whole boundary), or another part. A condition in braces is the set
// of boundary facets whose midpoint satisfies every comparison of the
// chain: {-1 <= x < 0} holds where −1 ≤ x and x < 0. Its expressions are
// scalars of x, y, z, numbers and constant coefficients. The words cup,
// cap and minus are not reserved: they are read as operators only between
// sets. The checker resolves names; the runtime decides ties
// (runtime/problem: a midpoint on the threshold belongs to a non-strict
// comparison, not to a strict one).
//
// A number starts with a digit and may have a fraction and an exponent:
// 12, 1.5, 1e-6, 2.5E+3. Its exact text is kept so the compiler can turn it
// into an exact rational. Since a number must start with a digit, a.b is
// always a dot product.
//
// # Positions
//
// A source.Pos holds a file name, a 0-based byte Offset and a 1-based Line and Col;
// Col counts runes, as the participle lexer does. Every node has Pos() (its
// first character) and End() (just after its last character).
//
// # Errors
//
// Parse returns the partial tree and every syntax error: the token stream
// is cut before each statement keyword and each statement is parsed on its
// own, so the errors of several statements are all reported. The list is
// sorted, keeps the first error of each line and stops at source.MaxErrors
// with a "too many errors" entry. ErrorList.Format prints the source line under
// each error with a caret and tildes under the offending text.
//
// # Implementation
//
// The grammar (grammar.go) is a set of participle/v2 structs, one per
// production, built with lookahead 0: every choice is settled by the next
// token, so an error is reported at the first token that cannot fit. A
// small lowering step (lower.go) turns those structs into the AST of ast.go,
// folding operator chains into binary nodes and keeping participle's
// positions. The grammar's EBNF is pinned by testdata/grammar.ebnf.
package lang
