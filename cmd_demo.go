package main

import (
	"fmt"
	"io"
)

// cmdDemo is the built-in default run for a newcomer: it derives the
// standard advection–diffusion–reaction model (all stages, all methods),
// then solves it with each method on the built-in mesh with the pure-Go
// solver. Nothing is written to disk.
func cmdDemo(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("demo", "", "Derive the standard advection–diffusion–reaction model adr with all methods,\nthen solve it with each on the built-in mesh. Writes no files.")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("demo takes no arguments")
	}
	fmt.Fprintln(stdout, "formwright demo: the standard model adr (steady advection–diffusion–reaction)")
	fmt.Fprintln(stdout, "\n== derive adr ==")
	if err := cmdDerive([]string{"adr", "--method", "all"}, stdout, stderr); err != nil {
		return err
	}
	fmt.Fprintln(stdout, "\n== solve adr --method all (built-in 64×64 triangle mesh) ==")
	if err := cmdSolve([]string{"adr", "--method", "all", "--quiet"}, stdout, stderr); err != nil {
		return err
	}
	fmt.Fprintln(stdout, "\nnext: go run . verify examples/estuary_mixing/model.fw --method all --levels 6   (convergence by manufactured solutions)")
	fmt.Fprintln(stdout, "      go run . gen adr -o DIR --package NAME   (Go element kernels, into a directory of your own outside this repository)")
	return nil
}
