package gogen

import (
	"bytes"
	"fmt"
	"go/format"
	"go/printer"
	"go/token"
	"os"
	"path/filepath"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
)

// Options control Generate.
type Options struct {
	// Package is the package name of the generated file (a Go identifier).
	Package string
	// ModelFile is the model file the forms were derived from; it appears
	// in the header.
	ModelFile string
	// CommandLine is the command that produced the file, without the
	// program name (e.g. "gen model.fw -o . --package kernels"); it is
	// recorded in the header as "// formwright <CommandLine>".
	CommandLine string
	// Methods, when not empty, selects the forms to generate by method
	// name; a method with no form is an error.
	Methods []string
	// Prefix is put in front of every exported identifier (and, lower-cased
	// in meaning, of the internal ones) so that the kernels of several
	// models can share one package. Empty or a Go identifier.
	Prefix string
	// Output is the path the caller will write the file to. When the
	// generated source does not parse or format, it is written beside it
	// as <name>_broken.go for inspection (nowhere when Output is empty).
	Output string

	// Derived, when set, gives the derived form of each method (by method
	// name) as the derivation prints it; the comment above each generated
	// block quotes the terms it implements from it.
	Derived map[string]Derived

	// loopAbove: elements with more nodes than this get generated loops
	// over their basis functions instead of unrolled code (0: 8, so P1,
	// P2 and Q1 unroll; Q2, P3 and larger loop). Tests lower it.
	loopAbove int
}

// Generate writes one Go source file with the element kernels of forms:
// for each form a cell-kernel type and one facet-kernel type per boundary
// side, and an init function that registers them with runtime/compiled
// under ir.FormHash of the form. The output is gofmt'ed and deterministic.
func Generate(forms []*ir.LoweredForm, opts Options) ([]byte, error) {
	if !token.IsIdentifier(opts.Package) || opts.Package == "_" {
		return nil, fmt.Errorf("gogen: package name %q is not a Go identifier", opts.Package)
	}
	if opts.Prefix != "" && !token.IsIdentifier(opts.Prefix) {
		return nil, fmt.Errorf("gogen: prefix %q is not a Go identifier", opts.Prefix)
	}
	kf, err := planFile(forms, plan{methods: opts.Methods, derived: opts.Derived, loopAbove: opts.loopAbove})
	if err != nil {
		return nil, err
	}
	w := &goWriter{names: goNames{prefix: opts.Prefix, internal: "fw" + opts.Prefix}}
	file, err := w.file(kf, opts)
	if err != nil {
		return nil, err
	}
	fset := token.NewFileSet()
	tf := fset.AddFile("kernels.go", -1, (w.line+2)*goLineWidth)
	lines := make([]int, w.line+2)
	for i := range lines {
		lines[i] = i * goLineWidth
	}
	tf.SetLines(lines)
	var buf bytes.Buffer
	cfg := printer.Config{Mode: printer.RawFormat | printer.UseSpaces | printer.TabIndent, Tabwidth: 8}
	if err := cfg.Fprint(&buf, fset, file); err != nil {
		return nil, &BrokenError{Err: err}
	}
	return formatSource(buf.Bytes(), opts.Output)
}

// BrokenError reports generated source that does not parse or format; it
// is a bug of the generator. Path is where the source was written ("" if
// it was not).
type BrokenError struct {
	Path string
	Err  error
}

func (e *BrokenError) Error() string {
	if e.Path == "" {
		return "gogen: generated code does not compile: " + e.Err.Error()
	}
	return fmt.Sprintf("gogen: generated code does not compile (written to %s): %v", e.Path, e.Err)
}

func (e *BrokenError) Unwrap() error { return e.Err }

// formatSource parses and formats generated source with go/format; source
// that fails is written to <output>_broken.go and reported.
func formatSource(src []byte, output string) ([]byte, error) {
	res, err := format.Source(src)
	if err == nil {
		return res, nil
	}
	be := &BrokenError{Err: err}
	if output != "" {
		p := strings.TrimSuffix(output, ".go") + "_broken.go"
		if werr := os.WriteFile(p, src, 0o644); werr == nil {
			be.Path = p
		}
	}
	return nil, be
}

func baseName(p string) string { return filepath.Base(filepath.ToSlash(p)) }
