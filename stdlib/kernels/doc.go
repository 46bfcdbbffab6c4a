// Package kernels holds the generated Go element kernels of the standard
// models, compiled into the formwright command: solve finds them by the
// content hash of the derived form and uses them instead of the
// interpreted path (its summary says "kernels compiled"). For the
// transient heat model they implement one backward Euler step, with the
// step Δt read from the kernel input, so they serve every --dt.
//
// Regenerate with "go generate ./stdlib/kernels" after a change to the
// models or the generator; the root package's tests fail when these files
// are stale.
package kernels

//go:generate go run ../.. gen adr -o . --package kernels --prefix Adr --method all
//go:generate go run ../.. gen stokes -o . --package kernels --prefix Stokes --method all
//go:generate go run ../.. gen oseen -o . --package kernels --prefix Oseen --method all
//go:generate go run ../.. gen navier_stokes -o . --package kernels --prefix NavierStokes --method all
//go:generate go run ../.. gen heat -o . --package kernels --prefix Heat --method all
//go:generate go run ../.. gen bratu -o . --package kernels --prefix Bratu --method all
//go:generate go run ../.. gen burgers -o . --package kernels --prefix Burgers --method all
//go:generate go run ../.. gen nonlinear_diffusion -o . --package kernels --prefix NonlinearDiffusion --method all
//go:generate go run ../.. gen navier_stokes_nonlinear -o . --package kernels --prefix NavierStokesNonlinear --method all
