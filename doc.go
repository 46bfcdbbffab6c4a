// Command formwright derives stabilised finite-element forms from a PDE
// operator in strong form, prints the derivation (text, LaTeX, JSON),
// solves the discrete problem, verifies convergence by manufactured
// solutions and generates Go element kernels.
//
//	formwright demo
//	formwright derive MODEL [--method M] [--format text|latex|json] [-o FILE]
//	formwright solve  MODEL [--method M] [--mesh SPEC] [--out FILE] [--json] [--plot FILE.png]
//	formwright verify MODEL [--exact EXPR] [--levels N] [--method all] [--plot FILE.png]
//	formwright gen    MODEL [-o DIR] [--package NAME] [--method M,...]
//
// MODEL is a model file (.fw) or the name of a standard model (adr, heat,
// stokes, oseen, navier_stokes). Exit status: 0 success, 1 numerical
// failure, 2 bad input or usage. The README is the full manual.
package main
