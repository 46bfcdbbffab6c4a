// Package kernels holds the generated Go element kernels of the standard
// models, compiled into the formwright command: solve finds them by the
// content hash of the derived form and uses them instead of the
// interpreted path (its summary says "kernels compiled"). The transient
// heat model is not here: its time-stepped form depends on the step, so
// solve runs it on the interpreted path.
//
// Regenerate with "go generate ./stdlib/kernels" after a change to the
// models or the generator; the root package's tests fail when these files
// are stale.
package kernels

//go:generate go run ../.. gen adr -o . --package kernels --prefix Adr --method all
//go:generate go run ../.. gen stokes -o . --package kernels --prefix Stokes --method all
//go:generate go run ../.. gen oseen -o . --package kernels --prefix Oseen --method all
//go:generate go run ../.. gen navier_stokes -o . --package kernels --prefix NavierStokes --method all
