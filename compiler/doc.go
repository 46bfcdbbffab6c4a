// Package compiler is formwright's symbolic middle: it turns a parsed model
// (package lang) into a typed Model and derives, on the typed IR of
// compiler/ir, everything a residual-based stabilised method needs.
//
// In the flow lang → compiler → runtime it sits in the middle: Check reads
// lang's AST; Derive produces the Derivation that compiler/render prints;
// Derivation.Lower produces the ir.LoweredForm that runtime/interp
// evaluates and compiler/gogen turns into Go kernels.
//
// The passes, one per file, each a function from IR to IR:
//
//	check.go        names, ranks, formulas and coefficients: AST → Model
//	simplify.go     canonical form: flatten, order, collect, fold exact rationals
//	differentiate.go sum, product and chain rules for grad, div, lap, ∂, ∂t
//	terms.go        additive terms, linearity in the unknown, derivative order
//	adjoint.go      the formal adjoint L* by integration by parts (Hughes 1995)
//	split.go        advective / diffusive / reactive / temporal parts
//	weakform.go     the Galerkin form and the SUPG, GLS, VMS terms
//	gateaux.go      the Gateaux derivative d/dε e(u + εw)|ε=0 on the typed IR
//	linearise.go    L′(u)δu of a nonlinear operator, its split, adjoint and advective velocity
//	finescale.go    VMS by expanding L(u_h + u′) in the fine scales (Bazilevs et al. 2007)
//	newton.go       nonlinear models: stabilised residual forms, the Jacobian, LowerNonlinear
//	picard.go       the Picard linearisation of a nonlinear model
//	derive.go       the stages and the notes on the assumptions each uses
//	lower.go        components, coefficient substitution, bilinear terms
//	timestep.go     backward Euler, for linear, Picard and Newton forms
//	manufacture.go  manufactured solutions for verify (Roache 2002)
//
// A model whose operator is nonlinear in its unknowns (or whose τ reads
// them) is derived as a residual form F(u; v) = 0 with its exact Jacobian
// J(u; δu, v) = d/dε F(u + εδu; v)|ε=0 (Dennis & Schnabel 1983); the
// stabilised methods read the linearisation where the linear theory reads
// the operator (SUPG L′_A, GLS L′, VMS L′*). Derivation.Lower then gives
// the Newton step J δu = −F as one lowered form (ir.NonlinearForm.Step).
//
// The derivations follow Brooks & Hughes (1982, CMAME 32) for SUPG, Hughes,
// Franca & Hulbert (1989, CMAME 73) for GLS, and Hughes (1995, CMAME 127)
// and Hughes, Feijóo, Mazzei & Quincy (1998, CMAME 166) for the
// variational multiscale form with u′ ≈ −τ R(u_h); for systems τ is
// block-diagonal and the forms are derived row by row of the block operator
// (Hughes, Franca & Balestra 1986, CMAME 59; Codina 2002, CMAME 191).
package compiler
