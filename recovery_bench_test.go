package main

import (
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/compiled"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/problem"
)

// BenchmarkRecoveryVsAssembly measures what the recovery of the P1 second
// derivatives adds to one Newton iteration of the lid-driven cavity
// (navier_stokes_nonlinear, SUPG, P1/P1, 128² "tri" cells, 49 923 dofs):
// "recovery" recovers the gradient of an iterate (problem.GradientRecovery:
// one pass over the cells and the boundary fits), "assembly" assembles
// the Newton step's matrix and right-hand side with the generated kernels
// reading it, and "assembly-plain" the same step derived without the
// recovery (generated kernels where registered, the interpreted ones
// otherwise: the sub-benchmark says which). Speed claims are ratios measured in one run (DEVELOPERS.md):
//
//	go test . -run '^$' -bench RecoveryVsAssembly -benchtime 20x
func BenchmarkRecoveryVsAssembly(b *testing.B) {
	m, err := loadModel("navier_stokes_nonlinear")
	if err != nil {
		b.Fatal(err)
	}
	msh, err := mesh.Load("span:0,1,0,1:128x128:tri")
	if err != nil {
		b.Fatal(err)
	}
	setup := func(opts compiler.DeriveOptions) (*assemble.Assembler, kernel.Kernel, *dof.Numbering) {
		lf, _, err := deriveAndLowerWith(m, compiler.SUPG, opts)
		if err != nil {
			b.Fatal(err)
		}
		var ck kernel.Kernel
		if k, ok := compiled.Lookup(ir.FormHash(lf)); ok {
			ck = k.NewCell()
		} else if ck, err = interp.NewKernel(lf, msh.Cell, interp.Options{}); err != nil {
			b.Fatal(err)
		}
		lay, err := kernel.LayoutFor(lf, msh.Cell)
		if err != nil {
			b.Fatal(err)
		}
		var specs []dof.FieldSpec
		for i, f := range lay.Fields {
			specs = append(specs, dof.FieldSpec{Name: lf.Unknowns[i].Name, Element: f.Element, Components: f.Components})
		}
		dm, err := dof.New(msh.Cell, msh.Coords, msh.Cells, specs)
		if err != nil {
			b.Fatal(err)
		}
		return assemble.New(msh, dm), ck, dm
	}
	asm, k, dm := setup(compiler.DeriveOptions{})
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, dm.NumDofs)
	for i := range x {
		x[i] = rng.Float64()*2 - 1
	}
	rec, err := problem.NewGradientRecovery(msh, dm)
	if err != nil {
		b.Fatal(err)
	}
	g := make([]float64, dm.NumDofs*dm.Dim)
	A, rhs := asm.NewMatrix(), make([]float64, dm.NumDofs)
	b.Run("recovery", func(b *testing.B) {
		for range b.N {
			if err := rec.Recover(x, g); err != nil {
				b.Fatal(err)
			}
		}
	})
	path := func(k kernel.Kernel) string {
		if _, ok := k.(*interp.Kernel); ok {
			return "interpreted"
		}
		return "generated"
	}
	b.Run("assembly-"+path(k), func(b *testing.B) {
		for range b.N {
			if err := asm.Assemble(k, nil, A, rhs, assemble.Input{Previous: x, Recovered: g}); err != nil {
				b.Fatal(err)
			}
		}
	})
	pasm, pk, _ := setup(compiler.DeriveOptions{Recovery: compiler.RecoverOff})
	if _, ok := pk.(*interp.Kernel); ok {
		b.Run("assembly-interpreted", func(b *testing.B) {
			lf, _, _ := deriveAndLowerWith(m, compiler.SUPG, compiler.DeriveOptions{})
			kk, err := interp.NewKernel(lf, msh.Cell, interp.Options{})
			if err != nil {
				b.Fatal(err)
			}
			for range b.N {
				if err := asm.Assemble(kk, nil, A, rhs, assemble.Input{Previous: x, Recovered: g}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
	b.Run("assembly-plain-"+path(pk), func(b *testing.B) {
		for range b.N {
			if err := pasm.Assemble(pk, nil, A, rhs, assemble.Input{Previous: x}); err != nil {
				b.Fatal(err)
			}
		}
	})
}
