package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

// errHelp is returned by parseArgs after printing a command's help: exit
// status 0.
var errHelp = errors.New("help requested")

// cmdFlags is the flag set of a command with its help text: synopsis is
// what follows "formwright NAME" in the usage line, about what the command
// does.
type cmdFlags struct {
	*flag.FlagSet
	synopsis, about string
}

func newFlags(name, synopsis, about string) *cmdFlags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return &cmdFlags{fs, synopsis, about}
}

// printHelp writes a command's usage line, what it does, and every flag
// with its meaning and default.
func printHelp(w io.Writer, fs *cmdFlags) {
	fmt.Fprintf(w, "usage: formwright %s %s\n\n%s\n", fs.Name(), fs.synopsis, fs.about)
	n := 0
	fs.VisitAll(func(*flag.Flag) { n++ })
	if n == 0 {
		return
	}
	fmt.Fprintln(w, "\nflags:")
	fs.VisitAll(func(f *flag.Flag) {
		name, usage := flag.UnquoteUsage(f)
		dashes := "--"
		if len(f.Name) == 1 {
			dashes = "-" // -o: a one-letter flag reads as the usual short option
		}
		fmt.Fprintf(w, "  %s%s", dashes, f.Name)
		if name != "" {
			fmt.Fprintf(w, " %s", name)
		}
		fmt.Fprintf(w, "\n      %s", usage)
		if f.DefValue != "" && f.DefValue != "0" && f.DefValue != "false" {
			fmt.Fprintf(w, " (default %s)", f.DefValue)
		}
		fmt.Fprintln(w)
	})
}

// parseArgs parses flags that may come before or after the positional
// arguments. --help prints the command's help to stdout and returns
// errHelp; an unknown flag is a usage error that lists the valid ones.
func parseArgs(fs *cmdFlags, args []string, stdout io.Writer) ([]string, error) {
	var pos []string
	for len(args) > 0 {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				printHelp(stdout, fs)
				return nil, errHelp
			}
			var names []string
			fs.VisitAll(func(f *flag.Flag) { names = append(names, "--"+f.Name) })
			sort.Strings(names)
			msg := strings.TrimPrefix(err.Error(), "flag provided but not defined: ")
			if msg != err.Error() {
				if len(names) == 0 {
					return nil, usagef("%s takes no flags (got %s)", fs.Name(), msg)
				}
				return nil, usagef("%s has no flag %s; its flags are %s", fs.Name(), msg, strings.Join(names, ", "))
			}
			return nil, usagef("%s: %v", fs.Name(), err)
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
	src, err := readLimited(arg, lang.MaxSize)
	if err != nil {
		return "", nil, usagef("cannot read model: %v (standard models: %s)", err, strings.Join(stdlib.Models(), ", "))
	}
	return arg, src, nil
}

// methodsOf resolves a --method value against a model: "" gives the
// model's own methods, and each method must be derivable (a stabilised
// one needs a τ for every unknown).
func methodsOf(m *compiler.Model, s string) ([]compiler.Method, error) {
	methods, err := compiler.ParseMethods(s)
	if err != nil {
		return nil, &usageError{err.Error()}
	}
	if methods == nil {
		methods = m.DefaultMethods()
	}
	for _, meth := range methods {
		if err := m.CheckMethod(meth); err != nil {
			return nil, &usageError{err.Error()}
		}
	}
	return methods, nil
}

// lowerModel derives and lowers one method of a model.
func lowerModel(m *compiler.Model, meth compiler.Method) (*ir.LoweredForm, error) {
	lf, _, err := deriveAndLower(m, meth)
	return lf, err
}

// deriveAndLower derives one method of a model and lowers it, returning
// the derivation too.
func deriveAndLower(m *compiler.Model, meth compiler.Method) (*ir.LoweredForm, *compiler.Derivation, error) {
	return deriveAndLowerWith(m, meth, compiler.DeriveOptions{})
}

// deriveAndLowerWith is deriveAndLower with derivation options.
func deriveAndLowerWith(m *compiler.Model, meth compiler.Method, opts compiler.DeriveOptions) (*ir.LoweredForm, *compiler.Derivation, error) {
	d, err := compiler.DeriveWith(m, []compiler.Method{meth}, opts)
	if err != nil {
		return nil, nil, &usageError{err.Error()}
	}
	lf, err := d.Lower(meth)
	if err != nil {
		return nil, nil, &usageError{err.Error()}
	}
	return lf, d, nil
}

// readLimited reads a file of at most limit bytes; a longer file (or an
// endless one, such as a device) is an error after limit+1 bytes.
func readLimited(path string, limit int) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if fi, err := f.Stat(); err == nil && fi.IsDir() {
		return nil, fmt.Errorf("%s is a directory", path)
	}
	src, err := io.ReadAll(io.LimitReader(f, int64(limit)+1))
	if err != nil {
		return nil, err
	}
	if len(src) > limit {
		return nil, fmt.Errorf("%s is longer than %d bytes, the limit for a model file", path, limit)
	}
	return src, nil
}

// joinInts writes the numbers separated by sep.
func joinInts(ns []int, sep string) string {
	parts := make([]string, len(ns))
	for i, n := range ns {
		parts[i] = strconv.Itoa(n)
	}
	return strings.Join(parts, sep)
}
