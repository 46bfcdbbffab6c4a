// Package render prints compiler IR and derivations for people and tools:
// expressions in the model language's own syntax (which Model.ParseExpr
// reads back to the same IR), in Unicode mathematics and in LaTeX; and a
// whole Derivation as text, as an amsmath document and as JSON (schema
// SchemaVersion, documented in the README).
//
// In the flow lang → compiler → runtime it is the compiler's output side,
// used by the derive command.
package render
