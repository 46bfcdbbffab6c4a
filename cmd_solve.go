package main

import "io"

// cmdSolve assembles and solves a model's discrete problem.
func cmdSolve(args []string, stdout, stderr io.Writer) error {
	return &usageError{"solve is not available in this build yet"}
}
