// Package render prints a whole Derivation for people and tools: as text,
// as an amsmath document and as JSON (schema SchemaVersion, documented in
// the README). Expressions inside it are written by compiler/notation.
//
// In the flow lang → compiler → printers → back ends it is the compiler's
// output side, used by the derive command.
package render
