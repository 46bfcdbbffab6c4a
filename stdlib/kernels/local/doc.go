// Package local holds the kernels that users generate for their own
// models with
//
//	formwright gen MODEL --builtin
//
// The formwright command imports this package, so once it is rebuilt
// (go run . does that by itself; an installed binary needs go install
// again) solve and verify use the compiled kernels of MODEL wherever its
// lowered form matches them exactly (by content hash), and the
// interpreted ones otherwise. The generated files are the user's: they
// are not part of the repository (see .gitignore here); delete one to
// drop its kernels.
package local
