package main

import (
	"bytes"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/render"
	"github.com/formwright/formwright/runtime/output"
)

// cmdDerive prints the derivation of a model's forms.
func cmdDerive(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("derive", flag.ContinueOnError)
	method := fs.String("method", "", "methods to derive: galerkin, supg, gls, vms, a comma list, or all (default: the model's)")
	format := fs.String("format", "text", "text, latex or json")
	out := fs.String("o", "", "write to this file instead of standard output")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return &usageError{"derive takes one model"}
	}
	methods, err := parseMethods(*method)
	if err != nil {
		return err
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
		return &usageError{fmt.Sprintf("unknown format %q (use text, latex or json)", *format)}
	}
	m, err := loadModel(pos[0])
	if err != nil {
		return err
	}
	if methods == nil && len(m.Methods) > 0 {
		methods = m.Methods
	}
	for _, meth := range methods {
		if _, err := pickMethod(m, meth.String()); err != nil {
			return err
		}
	}
	d, err := compiler.Derive(m, methods)
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
	if abs, _ := filepath.Abs(*out); abs == mustAbs(pos[0]) {
		return &usageError{"refusing to overwrite the model file with its derivation"}
	}
	return output.WriteFileAtomic(*out, func(w io.Writer) error {
		_, err := w.Write(buf.Bytes())
		return err
	})
}

func mustAbs(p string) string {
	a, err := filepath.Abs(p)
	if err != nil {
		return p
	}
	if _, err := os.Stat(a); err != nil {
		return ""
	}
	return a
}
