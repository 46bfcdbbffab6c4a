package assemble_test

import (
	"bytes"
	"encoding/binary"
	"math"
	"math/big"
	"math/rand/v2"
	"testing"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/assemble"
	"github.com/formwright/formwright/runtime/dof"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/interp"
	"github.com/formwright/formwright/runtime/kernel"
	"github.com/formwright/formwright/runtime/mesh"
	"github.com/formwright/formwright/runtime/sparse"
)

func num(a, b int64) ir.Expr { return &ir.Num{Val: big.NewRat(a, b)} }
func mul(f ...ir.Expr) ir.Expr {
	return &ir.Mul{Factors: f}
}
func add(t ...ir.Expr) ir.Expr { return &ir.Add{Terms: t} }

var (
	uF = &ir.Field{Name: "c", Index: 0, Role: ir.Trial}
	vF = &ir.Field{Name: "c", Index: 0, Role: ir.Test}
)

func fd(f *ir.Field, d ...uint8) *ir.FieldD {
	x := &ir.FieldD{Field: f}
	copy(x.D[:], d)
	return x
}

// supgForm is the lowered SUPG form of a·∇c − k Δc = f with a = (1, 1/2),
// k = 1/100, f = 1 + x·y, on P1 triangles:
//
//	∫ k ∇c·∇v + (a·∇c) v + τ (a·∇c)(a·∇v)  =  ∫ f v + τ f (a·∇v),
//
// τ = h/(2|a|)(coth α − 1/α), α = |a|h/(2k), h = diam(K) (Brooks &
// Hughes 1982, CMAME 32); the −kΔc part of the residual vanishes on P1.
func supgForm() *ir.LoweredForm {
	a := []ir.Expr{num(1, 1), num(1, 2)}
	k := num(1, 100)
	anorm := &ir.Pow{Base: add(mul(a[0], a[0]), mul(a[1], a[1])), Exp: num(1, 2)}
	h := &ir.CellQ{Q: ir.Diameter}
	alpha := mul(anorm, h, &ir.Pow{Base: mul(num(2, 1), k), Exp: num(-1, 1)})
	xi := add(&ir.Call{Fn: ir.Coth, Args: []ir.Expr{alpha}}, mul(num(-1, 1), &ir.Pow{Base: alpha, Exp: num(-1, 1)}))
	tau := mul(h, &ir.Pow{Base: mul(num(2, 1), anorm), Exp: num(-1, 1)}, xi)
	f := add(num(1, 1), mul(&ir.Coord{Axis: 0}, &ir.Coord{Axis: 1}))
	D := [][]uint8{{1, 0}, {0, 1}}
	var bil, lin []ir.Term
	for i := 0; i < 2; i++ {
		bil = append(bil, ir.Term{Coef: k, Trial: fd(uF, D[i]...), Test: fd(vF, D[i]...)})
		bil = append(bil, ir.Term{Coef: a[i], Trial: fd(uF, D[i]...), Test: fd(vF)})
		for j := 0; j < 2; j++ {
			bil = append(bil, ir.Term{Coef: mul(tau, a[i], a[j]), Trial: fd(uF, D[j]...), Test: fd(vF, D[i]...)})
		}
		lin = append(lin, ir.Term{Coef: mul(tau, f, a[i]), Test: fd(vF, D[i]...)})
	}
	lin = append(lin, ir.Term{Coef: f, Test: fd(vF)})
	return &ir.LoweredForm{
		Method: "supg", Dim: 2,
		Unknowns:  []ir.LoweredUnknown{{Name: "c", Element: ir.P1}},
		Integrals: []ir.Integral{{Bilinear: bil, Linear: lin}},
	}
}

type problem struct {
	m *mesh.Mesh
	a *assemble.Assembler
	k *interp.Kernel
}

func newProblem(tb testing.TB, nodes int, pattern mesh.Pattern) *problem {
	m := mesh.Span2(0, 1, 0, 1, nodes-1, nodes-1, pattern)
	form := supgForm()
	lay, err := kernel.LayoutFor(form, m.Cell)
	if err != nil {
		tb.Fatal(err)
	}
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "c", Element: lay.Fields[0].Element, Components: 1}})
	if err != nil {
		tb.Fatal(err)
	}
	k, err := interp.NewKernel(form, m.Cell, interp.Options{})
	if err != nil {
		tb.Fatal(err)
	}
	return &problem{m: m, a: assemble.New(m, dm), k: k}
}

// plainLoop is the bar for the assembler: a serial loop calling the kernel
// and adding each element matrix with sparse.CSR.ScatterIndex /
// AddScatter computed on the fly.
func plainLoop(p *problem, A *sparse.CSR, b []float64) {
	clear(A.Val)
	clear(b)
	n := p.k.Layout().N()
	Ae, be := make([]float64, n*n), make([]float64, n)
	in := &kernel.CellInput{}
	var pos []int
	for c := 0; c < p.m.NumCells(); c++ {
		in.Index = c
		in.Coords = p.m.CellCoords(c, in.Coords[:0])
		p.k.Cell(in, Ae, be)
		dofs := p.a.Dofs.CellDofs(c)
		pos = A.ScatterIndex(dofs, pos)
		A.AddScatter(pos, Ae)
		for i, g := range dofs {
			b[g] += be[i]
		}
	}
}

func bits(v []float64) []byte {
	var buf bytes.Buffer
	binary.Write(&buf, binary.LittleEndian, v)
	return buf.Bytes()
}

// Worker-count determinism: the assembled values are byte-identical with
// 1, 2 and 3 workers, and identical to the plain serial loop (the
// assembler adds every entry's contributions in cell order; see
// Assembler.Assemble). Crossed pattern: vertices of degree 4 and 8.
func TestAssembleBitIdenticalAcrossWorkers(t *testing.T) {
	for _, pat := range []mesh.Pattern{mesh.DiagonalUp, mesh.Quartered} {
		p := newProblem(t, 61, pat)
		Aref, bref := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
		plainLoop(p, Aref, bref)
		for _, w := range []int{1, 2, 3} {
			p.a.Workers = w
			A, b := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
			if err := p.a.Assemble(p.k, nil, A, b, assemble.Input{}); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(bits(A.Val), bits(Aref.Val)) || !bytes.Equal(bits(b), bits(bref)) {
				t.Errorf("%v, %d workers: assembled values differ from the serial loop", pat, w)
			}
		}
	}
}

// ∫_top v summed over all dofs is the length of the top side (1), and
// ∫_top n_y v is +1 (outward normal +y): facet assembly against the
// geometry of the unit square.
func TestAssembleFacets(t *testing.T) {
	m := mesh.Span2(0, 1, 0, 1, 5, 7, mesh.Quads)
	form := &ir.LoweredForm{
		Dim: 2, Unknowns: []ir.LoweredUnknown{{Name: "c", Element: ir.Q1}},
		Integrals: []ir.Integral{
			{Domain: ir.Domain{Side: mesh.Top}, Linear: []ir.Term{{Coef: &ir.CellQ{Q: ir.Normal, I: 1}, Test: fd(vF)}}},
			{Domain: ir.Domain{Side: mesh.Left}, Linear: []ir.Term{{Coef: num(3, 1), Test: fd(vF)}}},
		},
	}
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "c", Element: element.MustLagrange(m.Cell, 1), Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	a := assemble.New(m, dm)
	k, err := interp.NewKernel(form, m.Cell, interp.Options{})
	if err != nil {
		t.Fatal(err)
	}
	fks, err := interp.NewFacetKernels(form, m.Cell, interp.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var fk []kernel.FacetKernel
	for _, f := range fks {
		fk = append(fk, f)
	}
	A, b := a.NewMatrix(), make([]float64, dm.NumDofs)
	if err := a.Assemble(k, fk, A, b, assemble.Input{}); err != nil {
		t.Fatal(err)
	}
	top, left := 0.0, 0.0
	for v := 0; v < m.NumVertices(); v++ {
		x := m.Vertex(v)
		switch {
		case x[0] == 0 && x[1] != 1:
			left += b[v]
		case x[1] == 1 && x[0] != 0:
			top += b[v]
		case x[0] == 0 && x[1] == 1:
			// corner: top gives ½·(1/5), left gives 3·½·(1/7)
			if math.Abs(b[v]-(0.5/5+1.5/7)) > 1e-14 {
				t.Errorf("corner %v", b[v])
			}
			continue
		default:
			if b[v] != 0 {
				t.Errorf("vertex %v off the sides gets %v", x, b[v])
			}
		}
	}
	if math.Abs(top+0.5/5-1) > 1e-14 || math.Abs(left+1.5/7-3) > 1e-14 {
		t.Errorf("top %v, left %v", top+0.5/5, left+1.5/7)
	}
	bad := &ir.LoweredForm{Dim: 2, Unknowns: form.Unknowns, Integrals: []ir.Integral{{Domain: ir.Domain{Side: "nowhere"}, Linear: form.Integrals[0].Linear}}}
	fks, _ = interp.NewFacetKernels(bad, m.Cell, interp.Options{})
	if err := a.Assemble(k, []kernel.FacetKernel{fks[0]}, A, b, assemble.Input{}); err == nil {
		t.Error("unknown side accepted")
	}
}

// The element loop does not allocate: a whole Assemble call makes the same
// number of allocations (per-call buffers) on 200 and on 45000 cells.
func TestAssembleAllocationsIndependentOfCells(t *testing.T) {
	count := func(nodes int) float64 {
		p := newProblem(t, nodes, mesh.DiagonalUp)
		p.a.Workers = 1
		A, b := p.a.NewMatrix(), make([]float64, p.a.Dofs.NumDofs)
		return testing.AllocsPerRun(3, func() {
			if err := p.a.Assemble(p.k, nil, A, b, assemble.Input{}); err != nil {
				t.Fatal(err)
			}
		})
	}
	small, large := count(11), count(151) // 200 cells; 45000 cells in three batches
	if small != large {
		t.Errorf("Assemble allocates %v times on 200 cells and %v on 45000", small, large)
	}
}

// Cells in random order: nearly every row is shared by several chunks, so
// most contributions go through the chunk logs (chunkPlan), and the result
// must still equal the plain serial loop bit for bit with 1, 2 and 3
// workers.
func TestAssembleShuffledCellsBitIdentical(t *testing.T) {
	base := mesh.Span2(0, 1, 0, 1, 70, 70, mesh.DiagonalUp)
	nc, nv := base.NumCells(), base.Cell.NumVertices()
	perm := rand.New(rand.NewPCG(1, 2)).Perm(nc)
	m := &mesh.Mesh{Dim: base.Dim, Cell: base.Cell, Coords: base.Coords, Cells: make([]int32, len(base.Cells))}
	for c, p := range perm {
		copy(m.Cells[c*nv:(c+1)*nv], base.Cells[p*nv:(p+1)*nv])
	}
	k, err := interp.NewKernel(supgForm(), m.Cell, interp.Options{})
	if err != nil {
		t.Fatal(err)
	}
	dm, err := dof.New(m.Cell, m.Coords, m.Cells, []dof.FieldSpec{{Name: "c", Element: k.Layout().Fields[0].Element, Components: 1}})
	if err != nil {
		t.Fatal(err)
	}
	p := &problem{m: m, a: assemble.New(m, dm), k: k}
	Aref, bref := p.a.NewMatrix(), make([]float64, dm.NumDofs)
	plainLoop(p, Aref, bref)
	for _, w := range []int{1, 2, 3} {
		p.a.Workers = w
		A, b := p.a.NewMatrix(), make([]float64, dm.NumDofs)
		if err := p.a.Assemble(p.k, nil, A, b, assemble.Input{}); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(bits(A.Val), bits(Aref.Val)) || !bytes.Equal(bits(b), bits(bref)) {
			t.Errorf("%d workers: assembled values differ from the serial loop", w)
		}
	}
}
