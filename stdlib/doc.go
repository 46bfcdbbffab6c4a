// Package stdlib is formwright's standard library, written in the model
// language itself and embedded in the command with go:embed.
//
// Two kinds of file live here:
//
//   - library modules (tau.fw, sizes.fw) that define formulas and are pulled
//     into a model with "use NAME";
//   - standard models (adr.fw, heat.fw, stokes.fw, oseen.fw,
//     navier_stokes.fw) that the command accepts by name in place of a
//     file: "formwright derive stokes".
//
// In the flow lang → compiler → runtime, stdlib supplies source text to the
// front end; it depends on nothing.
package stdlib
