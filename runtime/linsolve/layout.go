package linsolve

import "fmt"

// FieldBlock is one field of an assembled system in runtime/dof's
// numbering: its dofs are Offset … Offset+Nodes·Components−1, node-major
// with the components interleaved (dof = Offset + node·Components + comp).
type FieldBlock struct {
	Name       string
	Offset     int
	Nodes      int
	Components int
	// Coords, if not nil, holds the coordinates of the field's nodes
	// (Nodes·Dim values, node-major). For a field with Components = Dim
	// (a displacement or velocity in 2 or 3 dimensions) AMG then takes
	// the rigid-body modes as near-null-space vectors instead of the
	// constants per component.
	Coords []float64
	Dim    int
	// Constraint marks a field whose equation constrains the others, the
	// pressure of a mixed formulation: its diagonal block is zero or a
	// small stabilisation term. The block preconditioner (PrecondAMGBlock)
	// takes the constraint fields as its Schur-complement block.
	Constraint bool
}

// Layout tells the solvers which dofs belong to which field, component
// and node. A nil *Layout means one scalar field, one dof per node.
type Layout struct {
	Fields []FieldBlock
}

// Scalar returns the layout of n dofs of one scalar field.
func Scalar(n int) *Layout {
	return &Layout{Fields: []FieldBlock{{Name: "u", Nodes: n, Components: 1}}}
}

// NumDofs is the number of dofs the layout covers.
func (l *Layout) NumDofs() int {
	n := 0
	for _, f := range l.Fields {
		n += f.Nodes * f.Components
	}
	return n
}

// check verifies that the fields tile 0..n−1 without overlap.
func (l *Layout) check(n int) error {
	covered := make([]bool, n)
	for _, f := range l.Fields {
		if f.Nodes < 0 || f.Components < 1 || f.Offset < 0 || f.Offset+f.Nodes*f.Components > n {
			return fmt.Errorf("linsolve: field %q (offset %d, %d nodes × %d components) does not fit %d dofs", f.Name, f.Offset, f.Nodes, f.Components, n)
		}
		if f.Coords != nil && (f.Dim < 1 || len(f.Coords) != f.Nodes*f.Dim) {
			return fmt.Errorf("linsolve: field %q: %d coordinates for %d nodes in %d dimensions", f.Name, len(f.Coords), f.Nodes, f.Dim)
		}
		for i := f.Offset; i < f.Offset+f.Nodes*f.Components; i++ {
			if covered[i] {
				return fmt.Errorf("linsolve: dof %d belongs to two fields", i)
			}
			covered[i] = true
		}
	}
	for i, c := range covered {
		if !c {
			return fmt.Errorf("linsolve: dof %d belongs to no field", i)
		}
	}
	return nil
}

// nodesAndNullSpace returns the node of every dof (dofs of one field at
// one node share it) and the near-null-space vectors of the layout, one
// per column of the n×k row-major matrix B: for every field, a constant
// per component, or the rigid-body modes (2D: 3, 3D: 6) when the field
// has coordinates and Components = Dim ∈ {2, 3} (Vaněk, Mandel & Brezina
// 1996, Computing 56, §5, for the rigid-body modes of elasticity).
func (l *Layout) nodesAndNullSpace(n int) (node []int32, B []float64, k int) {
	node = make([]int32, n)
	var cols []int // first null-space column of each field
	for _, f := range l.Fields {
		cols = append(cols, k)
		k += fieldModes(f)
	}
	B = make([]float64, n*k)
	nextNode := int32(0)
	for fi, f := range l.Fields {
		c0 := cols[fi]
		rigid := fieldModes(f) > f.Components
		for v := 0; v < f.Nodes; v++ {
			for c := 0; c < f.Components; c++ {
				i := f.Offset + v*f.Components + c
				node[i] = nextNode
				row := B[i*k : (i+1)*k]
				row[c0+c] = 1
				if !rigid {
					continue
				}
				x := f.Coords[v*f.Dim : (v+1)*f.Dim]
				if f.Dim == 2 {
					// rotation (−y, x)
					row[c0+2] = [2]float64{-x[1], x[0]}[c]
					continue
				}
				// rotations about z, x, y: (−y, x, 0), (0, −z, y), (z, 0, −x)
				row[c0+3] = [3]float64{-x[1], x[0], 0}[c]
				row[c0+4] = [3]float64{0, -x[2], x[1]}[c]
				row[c0+5] = [3]float64{x[2], 0, -x[0]}[c]
			}
			nextNode++
		}
	}
	return node, B, k
}

// fieldModes is the number of near-null-space vectors of a field.
func fieldModes(f FieldBlock) int {
	if f.Coords != nil && f.Components == f.Dim {
		switch f.Dim {
		case 2:
			return 3
		case 3:
			return 6
		}
	}
	return f.Components
}
