package distributed

import (
	"math"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/gogen"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/stdlib"
)

// needEngine skips a test where MPI or PETSc is missing, saying what to
// install.
func needEngine(t testing.TB) {
	t.Helper()
	if err := Available(); err != nil {
		t.Skip(err)
	}
}

// model checks a model given by its standard name or its source text.
func model(t testing.TB, nameOrSrc string) *compiler.Model {
	t.Helper()
	file, src := "test.fw", []byte(nameOrSrc)
	if f, s, err := stdlib.Model(nameOrSrc); err == nil {
		file, src = f, s
	}
	f, errs := lang.Parse(file, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module, Partial: len(errs) > 0})
	if errs = append(errs, cerrs...); len(errs) > 0 {
		t.Fatal(errs)
	}
	return m
}

// lower derives and lowers one method of m and generates its C kernels.
func lower(t testing.TB, m *compiler.Model, method string) (*ir.LoweredForm, Kernels) {
	t.Helper()
	meth, ok := compiler.MethodByName(method)
	if !ok {
		t.Fatalf("no method %s", method)
	}
	d, err := compiler.Derive(m, []compiler.Method{meth})
	if err != nil {
		t.Fatal(err)
	}
	lf, err := d.Lower(meth)
	if err != nil {
		t.Fatal(err)
	}
	h, c, err := gogen.GenerateC([]*ir.LoweredForm{lf}, gogen.COptions{Name: "kernels", Prefix: "fwk", ModelFile: m.File})
	if err != nil {
		t.Fatal(err)
	}
	return lf, Kernels{Name: "kernels", Header: h, Source: c}
}

func mustMesh(t testing.TB, spec string) *mesh.Mesh {
	t.Helper()
	m, err := mesh.Load(spec)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// relDiff is ‖x − y‖∞ / ‖y‖∞.
func relDiff(x, y []float64) float64 {
	d, n := 0.0, 0.0
	for i := range y {
		d = math.Max(d, math.Abs(x[i]-y[i]))
		n = math.Max(n, math.Abs(y[i]))
	}
	return d / n
}
