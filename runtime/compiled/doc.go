// Package compiled is the registry of generated element kernels.
//
// Place in the flow lang -> compiler -> runtime: the Go back end
// (compiler/gogen) writes one Go file per model whose init functions call
// Register with the content hash of each lowered form (ir.FormHash); a
// program that imports such a package can ask Lookup for the kernels of a
// form and fall back to the interpreted kernels (runtime/interp) when none
// is registered, or when the hash differs because the model changed since
// the file was generated (a stale file never matches).
package compiled
