package compiled

import (
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/kernel"
)

type fakeKernel struct{ id int }

func (fakeKernel) Layout() kernel.Layout                     { return kernel.Layout{Cell: cell.Triangle} }
func (fakeKernel) Cell(in *kernel.CellInput, A, b []float64) {}

// The first registration of a hash wins; unknown hashes are not found;
// Hashes is sorted. (Registry behaviour; no external source applies.)
func TestRegisterLookup(t *testing.T) {
	Register("b-hash", Kernels{Method: "supg", NewCell: func() kernel.Kernel { return fakeKernel{1} }})
	Register("b-hash", Kernels{Method: "gls", NewCell: func() kernel.Kernel { return fakeKernel{2} }})
	Register("a-hash", Kernels{Method: "galerkin", NewCell: func() kernel.Kernel { return fakeKernel{3} }})
	k, ok := Lookup("b-hash")
	if !ok || k.Method != "supg" || k.NewCell().(fakeKernel).id != 1 {
		t.Fatalf("Lookup(b-hash) = %+v, %v; want the first registration", k, ok)
	}
	if _, ok := Lookup("nope"); ok {
		t.Fatal("Lookup of an unregistered hash succeeded")
	}
	h := Hashes()
	if len(h) < 2 || h[0] != "a-hash" || h[1] != "b-hash" {
		t.Fatalf("Hashes() = %v, want [a-hash b-hash ...]", h)
	}
	defer func() {
		if recover() == nil {
			t.Fatal("Register with nil NewCell did not panic")
		}
	}()
	Register("c", Kernels{})
}
