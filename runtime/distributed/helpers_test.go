package distributed

import (
	"fmt"
	"math"
	"os"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/gogen"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/stdlib"
)

// testCache keeps the drivers built by this package's tests (one build
// per form for all of them), removed at the end.
var testCache string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "formwright-driver-cache-")
	if err != nil {
		panic(err)
	}
	testCache = dir
	if spec := os.Getenv(benchChildEnv); spec != "" {
		// A benchmark's child process (bench_test.go).
		code := benchChild(spec)
		os.RemoveAll(dir)
		os.Exit(code)
	}
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

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
	m, err := checkModel(nameOrSrc)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func checkModel(nameOrSrc string) (*compiler.Model, error) {
	file, src := "test.fw", []byte(nameOrSrc)
	if f, s, err := stdlib.Model(nameOrSrc); err == nil {
		file, src = f, s
	}
	f, errs := lang.Parse(file, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module, Partial: len(errs) > 0})
	if errs = append(errs, cerrs...); len(errs) > 0 {
		return nil, errs
	}
	return m, nil
}

// lower derives and lowers one method of m and generates its C kernels.
func lower(t testing.TB, m *compiler.Model, method string) (*ir.LoweredForm, Kernels) {
	t.Helper()
	lf, k, err := lowerC(m, method)
	if err != nil {
		t.Fatal(err)
	}
	return lf, k
}

func lowerC(m *compiler.Model, method string) (*ir.LoweredForm, Kernels, error) {
	meth, ok := compiler.MethodByName(method)
	if !ok {
		return nil, Kernels{}, fmt.Errorf("no method %s", method)
	}
	// The engine has no gradient recovery (its driver passes no recovered
	// gradient): derive with the recovery off, as the command does for
	// --engine petsc.
	d, err := compiler.DeriveWith(m, []compiler.Method{meth}, compiler.DeriveOptions{Recovery: compiler.RecoverOff})
	if err != nil {
		return nil, Kernels{}, err
	}
	lf, err := d.Lower(meth)
	if err != nil {
		return nil, Kernels{}, err
	}
	h, c, err := gogen.GenerateC([]*ir.LoweredForm{lf}, gogen.COptions{Name: "kernels", Prefix: "fwk", ModelFile: m.File})
	if err != nil {
		return nil, Kernels{}, err
	}
	return lf, Kernels{Name: "kernels", Header: h, Source: c}, nil
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

// manufactured is m with the source and boundary data of its default
// manufactured solution (compiler.Manufacture, as verify does), and that
// solution lowered.
func manufactured(t testing.TB, m *compiler.Model) (*compiler.Model, [][]ir.Expr) {
	t.Helper()
	var exact []ir.Expr
	for _, s := range compiler.DefaultExact(m) {
		e, errs := m.ParseExpr("exact", s)
		if len(errs) > 0 {
			t.Fatal(errs)
		}
		exact = append(exact, e)
	}
	mf, err := compiler.Manufacture(m, exact, nil)
	if err != nil {
		t.Fatal(err)
	}
	var lowered [][]ir.Expr
	for _, e := range exact {
		lowered = append(lowered, compiler.LowerExpr(m, e))
	}
	return mf.Model, lowered
}
