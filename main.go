package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/lang/source"
	"github.com/formwright/formwright/stdlib"
)

// Exit statuses.
const (
	exitOK       = 0
	exitNumeric  = 1
	exitBadInput = 2
)

// usageError is bad usage or bad input: exit status 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

// inputError carries a model's error list: exit status 2.
type inputError struct {
	errs    source.ErrorList
	sources map[string][]byte
}

func (e *inputError) Error() string { return e.errs.Error() }

const usage = `formwright: stabilised weak forms from strong-form operators

usage:
  formwright demo         derive and solve the standard model adr (no files written)
  formwright derive MODEL [--method galerkin|supg|gls|vms|all] [--format text|latex|json] [-o FILE]
  formwright solve  MODEL [--method M] [--mesh SPEC] [--solver S] [--out FILE.vtu|FILE.csv] [--json] [--plot FILE.png] [--quiet]
                          transient models: --dt DT (--steps N | --until T)
  formwright verify MODEL [--exact EXPR] [--source EXPR] [--levels N] [--method M|all] [--tol T] [--plot FILE.png] [--sweep-pe COEF] [--json]
  formwright gen    MODEL [-o DIR] [--package NAME] [--method M,...] [--prefix NAME]
  formwright models       list the standard models and library modules

MODEL is a model file (.fw) or the name of a standard model.
Exit status: 0 ok, 1 numerical failure, 2 bad input or usage.
`

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run executes one command and returns the exit status; it never panics on
// user input (a panic is a bug and is reported as such).
func run(args []string, stdout, stderr io.Writer) (status int) {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return exitBadInput
	}
	var err error
	switch args[0] {
	case "derive":
		err = cmdDerive(args[1:], stdout, stderr)
	case "solve":
		err = cmdSolve(args[1:], stdout, stderr)
	case "verify":
		err = cmdVerify(args[1:], stdout, stderr)
	case "gen":
		err = cmdGen(args[1:], stdout, stderr)
	case "demo":
		err = cmdDemo(args[1:], stdout, stderr)
	case "models":
		fmt.Fprintf(stdout, "standard models: %s\nlibrary modules: %s\n", strings.Join(stdlib.Models(), ", "), strings.Join(stdlib.Modules(), ", "))
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
	default:
		err = &usageError{fmt.Sprintf("unknown command %q", args[0])}
	}
	return report(err, stderr)
}

func report(err error, stderr io.Writer) int {
	if err == nil {
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

// parseArgs parses flags that may come before or after the positional
// arguments.
func parseArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	fs.SetOutput(io.Discard)
	var pos []string
	for len(args) > 0 {
		if err := fs.Parse(args); err != nil {
			return nil, &usageError{err.Error()}
		}
		args = fs.Args()
		if len(args) > 0 {
			pos = append(pos, args[0])
			args = args[1:]
		}
	}
	return pos, nil
}

// loadModel reads and checks a model file or a standard model by name.
func loadModel(arg string) (*compiler.Model, error) {
	file, src, err := readModel(arg)
	if err != nil {
		return nil, err
	}
	f, errs := lang.Parse(file, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module, Partial: len(errs) > 0})
	errs = append(errs, cerrs...)
	if len(errs) > 0 {
		errs.Sort()
		return nil, &inputError{errs, m.Sources}
	}
	return m, nil
}

func readModel(arg string) (string, []byte, error) {
	if !strings.ContainsAny(arg, "/\\") && !strings.HasSuffix(arg, ".fw") {
		if file, src, err := stdlib.Model(arg); err == nil {
			return file, src, nil
		}
	}
	src, err := os.ReadFile(arg)
	if err != nil {
		return "", nil, &usageError{fmt.Sprintf("cannot read model: %v (standard models: %s)", err, strings.Join(stdlib.Models(), ", "))}
	}
	return arg, src, nil
}

// parseMethods reads a --method value: a list of names, or "all".
func parseMethods(s string) ([]compiler.Method, error) {
	if s == "" {
		return nil, nil
	}
	if s == "all" {
		return compiler.AllMethods, nil
	}
	var out []compiler.Method
	for _, n := range strings.Split(s, ",") {
		m, ok := compiler.MethodByName(strings.TrimSpace(n))
		if !ok {
			return nil, &usageError{fmt.Sprintf("unknown method %q (use galerkin, supg, gls, vms or all)", n)}
		}
		out = append(out, m)
	}
	return out, nil
}
