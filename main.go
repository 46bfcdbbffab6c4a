// The formwright command: it parses flags, calls the library and prints.
// The work is done by the packages under lang/, compiler/ and runtime/
// (see DEVELOPERS.md for the map).
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/runtime/distributed"
	"github.com/formwright/formwright/runtime/output"
	"github.com/formwright/formwright/stdlib"
)

// Exit statuses (README, "Commands").
const (
	exitOK       = 0
	exitNumeric  = 1 // a numerical failure: no convergence, breakdown, non-finite values, a failed check
	exitBadInput = 2 // bad input or usage
	exitInternal = 3 // a bug: an internal error reached the top level
	// exitInterrupted is the shell's status for a process ended by
	// SIGINT (128 + 2).
	exitInterrupted = 130
)

// usageError is bad usage or bad input: exit status 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return &usageError{fmt.Sprintf(format, args...)} }

// inputError carries a model's error list: exit status 2.
type inputError struct {
	errs    source.ErrorList
	sources map[string][]byte
}

func (e *inputError) Error() string { return e.errs.Error() }

// commands lists the subcommands in the order of the usage text.
var commands = []struct {
	name, synopsis string
	run            func(args []string, stdout, stderr io.Writer) error
}{
	{"demo", "derive and solve the standard model adr (writes no files)", cmdDemo},
	{"derive", "print the derivation of a model's weak and stabilised forms", cmdDerive},
	{"solve", "assemble and solve a model on a mesh", cmdSolve},
	{"verify", "measure convergence orders with a manufactured solution", cmdVerify},
	{"gen", "generate Go element kernels for a model", cmdGen},
	{"jacobian", "check a nonlinear model's Jacobian against its residual (Taylor test)", cmdJacobian},   // cmd_nonlinear.go
	{"mesh", "write a mesh (built-in or read, refined) as a .vtu file with its boundary parts", cmdMesh}, // cmd_mesh.go
	{"models", "list the standard models and library modules", cmdModels},
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "formwright: stabilised weak forms from strong-form operators")
	fmt.Fprintln(w, "\nusage: formwright COMMAND [MODEL] [flags]")
	fmt.Fprintln(w, "\ncommands:")
	for _, c := range commands {
		fmt.Fprintf(w, "  %-8s %s\n", c.name, c.synopsis)
	}
	fmt.Fprintln(w, "\nMODEL is a model file (.fw) or the name of a standard model.")
	fmt.Fprintln(w, "formwright COMMAND --help lists the command's flags.")
	fmt.Fprintln(w, "Exit status: 0 ok, 1 numerical failure, 2 bad input or usage, 3 internal error.")
}

func main() {
	// An interrupted command removes the temporary file of a write in
	// progress, so it leaves nothing half-written (README, "Commands").
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, os.Interrupt, syscall.SIGTERM)
	go func() {
		s := <-sig
		output.RemovePending()
		distributed.RemovePending()
		fmt.Fprintf(os.Stderr, "formwright: %v: stopped, nothing written\n", s)
		os.Exit(exitInterrupted)
	}()
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run executes one command and returns the exit status. A panic is a bug:
// it is reported in one line as an internal error, never as a stack trace.
func run(args []string, stdout, stderr io.Writer) (status int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "formwright: internal error: %s (please report it with the command that caused it)\n", oneLine(fmt.Sprint(r)))
			status = exitInternal
		}
	}()
	if len(args) == 0 {
		usage(stderr)
		return exitBadInput
	}
	switch args[0] {
	case "help", "-h", "--help", "-help":
		usage(stdout)
		return exitOK
	}
	for _, c := range commands {
		if c.name == args[0] {
			return report(c.run(args[1:], stdout, stderr), stderr)
		}
	}
	return report(usagef("unknown command %q", args[0]), stderr)
}

// report prints err and returns its exit status.
func report(err error, stderr io.Writer) int {
	if err == nil || errors.Is(err, errHelp) {
		return exitOK
	}
	var ue *usageError
	var ie *inputError
	switch {
	case errors.As(err, &ie):
		ie.errs.Format(stderr, ie.sources)
		return exitBadInput
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "formwright: %s\n(run \"formwright help\" for usage)\n", ue.msg)
		return exitBadInput
	}
	fmt.Fprintf(stderr, "formwright: %v\n", err)
	return exitNumeric
}

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

func cmdModels(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("models", "", "list the standard models and library modules")
	if _, err := parseArgs(fs, args, stdout); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "standard models: %s\nlibrary modules: %s\n", strings.Join(stdlib.Models(), ", "), strings.Join(stdlib.Modules(), ", "))
	return nil
}
