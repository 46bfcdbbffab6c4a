package dof

import (
	"fmt"
	"slices"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// FieldSpec describes one field to number: a Lagrange element on the
// mesh's cell type and its number of components (1 for a scalar, the
// space dimension for a vector).
type FieldSpec struct {
	Name       string
	Element    *element.Element
	Components int
}

// Field is a numbered field.
type Field struct {
	FieldSpec
	// NumNodes is the number of global nodes of the field's element space.
	NumNodes int
	// Offset is the first global dof of the field; its dofs are
	// Offset .. Offset+NumNodes*Components-1, node-major with the
	// components interleaved: dof = Offset + node*Components + comp.
	Offset int
	// LocalOffset is the first local (element) dof of the field; its
	// local dofs are LocalOffset + comp*Element.NumNodes() + elementNode.
	LocalOffset int
}

// NumDofs is the number of global dofs of the field.
func (f *Field) NumDofs() int { return f.NumNodes * f.Components }

// NumLocal is the number of local dofs of the field on one cell.
func (f *Field) NumLocal() int { return f.Element.NumNodes() * f.Components }

// Facet is a boundary facet: local facet Local of cell Cell.
type Facet struct {
	Cell, Local int
}

// space is the global node numbering of one element on the mesh.
type space struct {
	elem      *element.Element
	numNodes  int
	cellNodes []int32   // nCells*elem.NumNodes()
	coords    []float64 // numNodes*dim
}

// Numbering numbers the degrees of freedom of one or several fields on a mesh.
// It is immutable after New and safe for concurrent use.
type Numbering struct {
	Cell     cell.Type
	Dim      int
	NumCells int
	Fields   []Field
	// NumDofs is the total number of global dofs.
	NumDofs int
	// NumLocal is the number of local dofs per cell (the element matrix
	// size), the sum of the fields' NumLocal.
	NumLocal int

	spaces     []*space // one per distinct element
	fieldSpace []int    // field -> spaces index
	cellDofs   []int32  // NumCells*NumLocal
	numEdges   int
	numFaces   int
}

// New numbers the fields on the mesh given by its cell type, vertex
// coordinates (nVertices*dim, flat) and cells (nCells*NumVertices vertex
// indices, flat). Every field's element must live on cellType. It returns
// an error for an element on another cell, a component count < 1, or a
// vertex index out of range.
//
// Node numbering of an element space: degree 1, the mesh vertices; degree
// 2, the mesh vertices (same numbers), then one node per mesh edge, then
// (Q2 on hexahedra) one per mesh face, then one per cell interior (Q2
// quadrilateral/hexahedron centre, P2 interval midpoint). Edges and faces
// are numbered in the lexicographic order of their sorted vertex tuples,
// found by a counting sort on the smallest vertex, so the numbering does
// not depend on the cell order beyond the cell-interior nodes.
func New(cellType cell.Type, coords []float64, cells []int32, fields []FieldSpec) (*Numbering, error) {
	d := cellType.Dim()
	nv := cellType.NumVertices()
	if len(cells)%nv != 0 {
		return nil, fmt.Errorf("dof: %d cell vertex indices is not a multiple of %d (%v)", len(cells), nv, cellType)
	}
	if len(coords)%d != 0 {
		return nil, fmt.Errorf("dof: %d vertex coordinates is not a multiple of dimension %d", len(coords), d)
	}
	nVert := len(coords) / d
	for i, v := range cells {
		if v < 0 || int(v) >= nVert {
			return nil, fmt.Errorf("dof: cell %d refers to vertex %d, but there are %d vertices", i/nv, v, nVert)
		}
	}
	if len(fields) == 0 {
		return nil, fmt.Errorf("dof: no fields to number")
	}
	m := &Numbering{Cell: cellType, Dim: d, NumCells: len(cells) / nv}
	needEdges, needFaces := false, false
	for _, f := range fields {
		if f.Element == nil || f.Element.Cell != cellType {
			return nil, fmt.Errorf("dof: field %q: element is not on %v cells", f.Name, cellType)
		}
		if f.Components < 1 {
			return nil, fmt.Errorf("dof: field %q has %d components", f.Name, f.Components)
		}
		for i := 0; i < f.Element.NumNodes(); i++ {
			switch f.Element.NodeEntity(i).Kind {
			case element.Edge:
				needEdges = true
			case element.Face:
				needFaces = true
			}
		}
		si := -1
		for j, s := range m.spaces {
			if s.elem.Degree == f.Element.Degree {
				si = j
			}
		}
		if si < 0 {
			si = len(m.spaces)
			m.spaces = append(m.spaces, &space{elem: f.Element})
		}
		m.fieldSpace = append(m.fieldSpace, si)
	}
	var edgeOf, faceOf []int32
	if needEdges {
		edgeOf, m.numEdges = numberEntities(cells, nv, edgeTuples(cellType))
	}
	if needFaces {
		faceOf, m.numFaces = numberEntities(cells, nv, cellType.Facets())
	}
	for _, s := range m.spaces {
		m.buildSpace(s, coords, cells, nVert, edgeOf, faceOf)
	}
	off, loff := 0, 0
	for k, f := range fields {
		s := m.spaces[m.fieldSpace[k]]
		fl := Field{FieldSpec: f, NumNodes: s.numNodes, Offset: off, LocalOffset: loff}
		off += fl.NumDofs()
		loff += fl.NumLocal()
		m.Fields = append(m.Fields, fl)
	}
	m.NumDofs, m.NumLocal = off, loff
	m.cellDofs = make([]int32, m.NumCells*m.NumLocal)
	for c := 0; c < m.NumCells; c++ {
		dst := m.cellDofs[c*m.NumLocal : (c+1)*m.NumLocal]
		for k := range m.Fields {
			f := &m.Fields[k]
			s := m.spaces[m.fieldSpace[k]]
			ne := s.elem.NumNodes()
			nodes := s.cellNodes[c*ne : (c+1)*ne]
			for comp := 0; comp < f.Components; comp++ {
				for i, g := range nodes {
					dst[f.LocalOffset+comp*ne+i] = int32(f.Offset + int(g)*f.Components + comp)
				}
			}
		}
	}
	return m, nil
}

func edgeTuples(c cell.Type) [][]int {
	var t [][]int
	for _, e := range c.Edges() {
		t = append(t, []int{e[0], e[1]})
	}
	return t
}

// numberEntities numbers the entities (edges or faces) given per cell by
// local vertex tuples: two local entities are the same global entity when
// their sorted global vertex tuples agree. It returns, for every cell c and
// local entity l, the global number at [c*len(local)+l], and the count.
func numberEntities(cells []int32, nv int, local [][]int) ([]int32, int) {
	nl := len(local)
	nc := len(cells) / nv
	k := 0
	for _, t := range local {
		k = max(k, len(t))
	}
	n := nc * nl
	keys := make([]int32, n*k)
	var nVert int32
	for c := 0; c < nc; c++ {
		cv := cells[c*nv : (c+1)*nv]
		for l, t := range local {
			key := keys[(c*nl+l)*k : (c*nl+l+1)*k]
			for i := range key {
				key[i] = -1
			}
			for i, v := range t {
				key[i] = cv[v]
				nVert = max(nVert, cv[v]+1)
			}
			slices.Sort(key[:len(t)])
		}
	}
	// Counting sort on the smallest vertex, then insertion sort of the
	// short buckets on the rest of the tuple: O(n) for bounded vertex
	// degree, no maps.
	start := make([]int32, nVert+1)
	for i := 0; i < n; i++ {
		start[keys[i*k]+1]++
	}
	for v := int32(0); v < nVert; v++ {
		start[v+1] += start[v]
	}
	perm := make([]int32, n)
	next := slices.Clone(start[:nVert])
	for i := 0; i < n; i++ {
		v := keys[i*k]
		perm[next[v]] = int32(i)
		next[v]++
	}
	next = nil
	less := func(a, b int32) bool {
		ka, kb := keys[int(a)*k:int(a)*k+k], keys[int(b)*k:int(b)*k+k]
		for i := 1; i < k; i++ {
			if ka[i] != kb[i] {
				return ka[i] < kb[i]
			}
		}
		return a < b
	}
	equal := func(a, b int32) bool {
		return slices.Equal(keys[int(a)*k:int(a)*k+k], keys[int(b)*k:int(b)*k+k])
	}
	for v := int32(0); v < nVert; v++ {
		b := perm[start[v]:start[v+1]]
		for i := 1; i < len(b); i++ {
			for j := i; j > 0 && less(b[j], b[j-1]); j-- {
				b[j], b[j-1] = b[j-1], b[j]
			}
		}
	}
	out := make([]int32, n)
	id := int32(-1)
	for i, p := range perm {
		if i == 0 || !equal(p, perm[i-1]) {
			id++
		}
		out[p] = id
	}
	return out, int(id + 1)
}

func (m *Numbering) buildSpace(s *space, coords []float64, cells []int32, nVert int, edgeOf, faceOf []int32) {
	e := s.elem
	d, nv := m.Dim, m.Cell.NumVertices()
	ne := e.NumNodes()
	nEdgeCell, nFaceCell := m.Cell.NumEdges(), m.Cell.NumFacets()
	interior := 0
	for i := 0; i < ne; i++ {
		if e.NodeEntity(i).Kind == element.Interior {
			interior++
		}
	}
	hasEdges, hasFaces := false, false
	for i := 0; i < ne; i++ {
		switch e.NodeEntity(i).Kind {
		case element.Edge:
			hasEdges = true
		case element.Face:
			hasFaces = true
		}
	}
	edgeBase := nVert
	faceBase := edgeBase
	if hasEdges {
		faceBase += m.numEdges
	}
	cellBase := faceBase
	if hasFaces {
		cellBase += m.numFaces
	}
	s.numNodes = cellBase + interior*m.NumCells
	s.cellNodes = make([]int32, m.NumCells*ne)
	s.coords = make([]float64, s.numNodes*d)
	// Values of the linear geometry basis at every reference node.
	geom := element.MustLagrange(m.Cell, 1)
	ref := e.RefNodes()
	lin := make([]float64, ne*nv)
	for i := 0; i < ne; i++ {
		geom.Eval(ref[i*d:(i+1)*d], lin[i*nv:(i+1)*nv])
	}
	done := make([]bool, s.numNodes)
	for c := 0; c < m.NumCells; c++ {
		cv := cells[c*nv : (c+1)*nv]
		nodes := s.cellNodes[c*ne : (c+1)*ne]
		ic := 0
		for i := 0; i < ne; i++ {
			ent := e.NodeEntity(i)
			var g int
			switch ent.Kind {
			case element.Vertex:
				g = int(cv[ent.Index])
			case element.Edge:
				g = edgeBase + int(edgeOf[c*nEdgeCell+ent.Index])
			case element.Face:
				g = faceBase + int(faceOf[c*nFaceCell+ent.Index])
			case element.Interior:
				g = cellBase + c*interior + ic
				ic++
			}
			nodes[i] = int32(g)
			if done[g] {
				continue
			}
			done[g] = true
			x := s.coords[g*d : (g+1)*d]
			if ent.Kind == element.Vertex {
				copy(x, coords[g*d:(g+1)*d])
				continue
			}
			for k := range x {
				sum := 0.0
				for v := 0; v < nv; v++ {
					sum += lin[i*nv+v] * coords[int(cv[v])*d+k]
				}
				x[k] = sum
			}
		}
	}
}

// CellDofs returns the global dofs of cell c in local order (field-major,
// then component, then element node). Shared slice: do not modify.
func (m *Numbering) CellDofs(c int) []int32 { return m.cellDofs[c*m.NumLocal : (c+1)*m.NumLocal] }

// Local returns the local dof of (field, comp, element node).
func (m *Numbering) Local(field, comp, node int) int {
	f := &m.Fields[field]
	return f.LocalOffset + comp*f.Element.NumNodes() + node
}

// Global returns the global dof of (field, comp, global node).
func (m *Numbering) Global(field, comp, node int) int {
	f := &m.Fields[field]
	return f.Offset + node*f.Components + comp
}

// CellNodes returns the global nodes of field's element space on cell c,
// in element node order. Shared slice: do not modify.
func (m *Numbering) CellNodes(field, c int) []int32 {
	s := m.spaces[m.fieldSpace[field]]
	ne := s.elem.NumNodes()
	return s.cellNodes[c*ne : (c+1)*ne]
}

// NodeCoords returns the coordinates of the global nodes of the field's
// element space (NumNodes*Dim, node-major): vertices for vertex nodes, the
// image of the reference node under the cell's linear (P1/Q1) map for edge,
// face and interior nodes. Shared slice: do not modify.
func (m *Numbering) NodeCoords(field int) []float64 { return m.spaces[m.fieldSpace[field]].coords }

// Gather copies the entries of the global vector x at the dofs of cell c
// into dst (length NumLocal), in local order.
func (m *Numbering) Gather(c int, x, dst []float64) {
	for l, g := range m.CellDofs(c) {
		dst[l] = x[g]
	}
}

// BoundaryNodes returns the sorted global nodes of field's element space
// that lie on the given facets.
func (m *Numbering) BoundaryNodes(field int, facets []Facet) []int32 {
	s := m.spaces[m.fieldSpace[field]]
	ne := s.elem.NumNodes()
	mark := make([]bool, s.numNodes)
	var out []int32
	for _, f := range facets {
		if f.Cell < 0 || f.Cell >= m.NumCells || f.Local < 0 || f.Local >= m.Cell.NumFacets() {
			panic(fmt.Sprintf("dof: facet (%d, %d) out of range", f.Cell, f.Local))
		}
		for _, i := range s.elem.FacetNodes(f.Local) {
			g := s.cellNodes[f.Cell*ne+i]
			if !mark[g] {
				mark[g] = true
				out = append(out, g)
			}
		}
	}
	slices.Sort(out)
	return out
}

// BoundaryDofs returns the sorted global dofs of component comp of field
// that lie on the given facets.
func (m *Numbering) BoundaryDofs(field, comp int, facets []Facet) []int32 {
	nodes := m.BoundaryNodes(field, facets)
	out := make([]int32, len(nodes))
	for i, g := range nodes {
		out[i] = int32(m.Global(field, comp, int(g)))
	}
	return out
}

// NumEdges and NumFaces are the numbers of mesh edges and faces that
// carry nodes (0 when no field needs them).
func (m *Numbering) NumEdges() int { return m.numEdges }

// NumFaces: see NumEdges.
func (m *Numbering) NumFaces() int { return m.numFaces }
