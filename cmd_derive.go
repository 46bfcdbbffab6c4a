package main

import (
	"bytes"
	"io"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/render"
	"github.com/formwright/formwright/runtime/output"
)

// cmdDerive prints the derivation of a model's forms.
func cmdDerive(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("derive", "MODEL [flags]", "Derive the adjoint, the split, the Galerkin form and the stabilised forms of\nMODEL and print each stage with the assumptions it used.")
	method := fs.String("method", "", "methods to derive: galerkin, supg, gls, vms, a comma list, or all (default: the model's)")
	format := fs.String("format", "text", "text, latex or json")
	out := fs.String("o", "", "write to this file instead of standard output")
	// Nonlinear models: the Jacobian's approximations (cmd_nonlinear.go).
	freeze := fs.String("freeze", "", "nonlinear models: derive Newton's Jacobian with tau, test or tau,test frozen at the iterate (default: exact)")
	pos, err := parseArgs(fs, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("derive takes one model")
	}
	var write func(io.Writer, *compiler.Derivation) error
	switch *format {
	case "text":
		write = render.WriteText
	case "latex":
		write = render.WriteLaTeX
	case "json":
		write = render.WriteJSON
	default:
		return usagef("unknown format %q (use text, latex or json)", *format)
	}
	if _, err := compiler.ParseMethods(*method); err != nil {
		return &usageError{err.Error()}
	}
	if err := checkOutputs([]string{pos[0]}, outputTarget{"-o", *out}); err != nil {
		return err
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	methods, err := methodsOf(m, *method)
	if err != nil {
		return err
	}
	if *method == "" && len(m.Methods) == 0 {
		methods = nil
	}
	jac, err := parseFreeze(*freeze) // cmd_nonlinear.go
	if err != nil {
		return err
	}
	d, err := compiler.DeriveWith(m, methods, compiler.DeriveOptions{Jacobian: jac})
	if err != nil {
		return &usageError{err.Error()}
	}
	var buf bytes.Buffer
	if err := write(&buf, d); err != nil {
		return err
	}
	if *out == "" {
		_, err := stdout.Write(buf.Bytes())
		return err
	}
	return ioError(output.WriteFileAtomic(*out, func(w io.Writer) error {
		_, err := w.Write(buf.Bytes())
		return err
	}))
}
