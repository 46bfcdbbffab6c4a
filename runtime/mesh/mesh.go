package mesh

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// FacetRef names a facet of a mesh: local facet Facet (cell.Type.Facets
// order) of cell Cell.
type FacetRef struct {
	Cell  int32
	Facet int32
}

// CompareFacetRef orders facets by cell, then by local facet: the order
// of the facet lists of Boundaries.
func CompareFacetRef(a, b FacetRef) int {
	if a.Cell != b.Cell {
		return int(a.Cell) - int(b.Cell)
	}
	return int(a.Facet) - int(b.Facet)
}

// Mesh is a conforming mesh of one cell type. It holds vertices only;
// higher-order nodes are made from edges and faces by a dof numbering.
type Mesh struct {
	// Dim is the space dimension, equal to Cell.Dim().
	Dim  int
	Cell cell.Type
	// Coords holds vertex coordinates, NumVertices*Dim, vertex-major.
	Coords []float64
	// Cells holds vertex indices, NumCells*Cell.NumVertices(), in the
	// reference vertex order of Cell; every cell is positively oriented
	// (its map from the reference cell has det J > 0).
	Cells []int32
	// Boundaries maps a name to its facets, sorted by (Cell, Facet) without
	// repeats. "all" is the whole boundary.
	Boundaries map[string][]FacetRef
	// Regions holds a region number (>= 0) per cell, as read from a mesh
	// file (see the package doc); nil when every cell is in region 0, as
	// for generated meshes. Refine gives children their parent's number.
	Regions []int32
}

// NumVertices is the number of vertices.
func (m *Mesh) NumVertices() int { return len(m.Coords) / m.Dim }

// NumCells is the number of cells.
func (m *Mesh) NumCells() int { return len(m.Cells) / m.Cell.NumVertices() }

// CellVertices returns the vertex indices of cell c (a sub-slice of Cells).
func (m *Mesh) CellVertices(c int) []int32 {
	nv := m.Cell.NumVertices()
	return m.Cells[c*nv : (c+1)*nv]
}

// Vertex returns the coordinates of vertex v (a sub-slice of Coords).
func (m *Mesh) Vertex(v int) []float64 { return m.Coords[v*m.Dim : (v+1)*m.Dim] }

// CellCoords gathers the vertex coordinates of cell c into dst (grown if
// needed) and returns it: NumVertices*Dim values, the layout
// runtime/element expects for a P1/Q1 geometry.
func (m *Mesh) CellCoords(c int, dst []float64) []float64 {
	d := m.Dim
	vs := m.CellVertices(c)
	dst = slices.Grow(dst[:0], len(vs)*d)[:len(vs)*d]
	for i, v := range vs {
		copy(dst[i*d:(i+1)*d], m.Coords[int(v)*d:(int(v)+1)*d])
	}
	return dst
}

// FacetVertices appends the vertex indices of facet f, in the oriented
// order of cell.Type.Facets, to dst and returns it.
func (m *Mesh) FacetVertices(f FacetRef, dst []int32) []int32 {
	cv := m.CellVertices(int(f.Cell))
	for _, lv := range m.Cell.Facets()[f.Facet] {
		dst = append(dst, cv[lv])
	}
	return dst
}

// BoundaryNames returns the boundary names in sorted order.
func (m *Mesh) BoundaryNames() []string {
	names := make([]string, 0, len(m.Boundaries))
	for n := range m.Boundaries {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// CellMeasure is the signed length/area/volume of cell c under its P1/Q1 map.
func (m *Mesh) CellMeasure(c int) float64 {
	var buf [24]float64
	return element.Measure(m.Cell, m.CellCoords(c, buf[:0]))
}

// Measure is the sum of the cell measures.
func (m *Mesh) Measure() float64 {
	s := 0.0
	for c := 0; c < m.NumCells(); c++ {
		s += m.CellMeasure(c)
	}
	return s
}

// facetKey is the sorted vertex set of a facet (unused slots -1).
type facetKey [4]int32

func (m *Mesh) facetKey(c, f int) facetKey {
	k := facetKey{-1, -1, -1, -1}
	cv := m.CellVertices(c)
	for i, lv := range m.Cell.Facets()[f] {
		k[i] = cv[lv]
	}
	n := len(m.Cell.Facets()[f])
	slices.Sort(k[:n])
	return k
}

// facetEntry is one local facet of a cell with its sorted vertex set.
type facetEntry struct {
	key facetKey
	ref FacetRef
}

func compareFacetEntry(a, b facetEntry) int {
	if c := slices.Compare(a.key[:], b.key[:]); c != 0 {
		return c
	}
	return CompareFacetRef(a.ref, b.ref)
}

// facetTable lists every local facet of every cell, sorted by vertex set
// (then by cell and facet): the facets with one vertex set are adjacent.
// A counting sort on the smallest vertex, then a sort of each (usually
// small) bucket: about linear in the number of facets.
func (m *Mesh) facetTable() []facetEntry {
	nf := m.Cell.NumFacets()
	n := m.NumCells() * nf
	start := make([]int32, m.NumVertices()+1)
	for c := 0; c < m.NumCells(); c++ {
		for f := 0; f < nf; f++ {
			start[m.facetKey(c, f)[0]+1]++
		}
	}
	for v := 1; v < len(start); v++ {
		start[v] += start[v-1]
	}
	t := make([]facetEntry, n)
	next := slices.Clone(start[:len(start)-1])
	for c := 0; c < m.NumCells(); c++ {
		for f := 0; f < nf; f++ {
			k := m.facetKey(c, f)
			t[next[k[0]]] = facetEntry{k, FacetRef{int32(c), int32(f)}}
			next[k[0]]++
		}
	}
	for v := 0; v+1 < len(start); v++ {
		b := t[start[v]:start[v+1]]
		if len(b) > 32 { // a vertex in many cells
			slices.SortFunc(b, compareFacetEntry)
			continue
		}
		for i := 1; i < len(b); i++ {
			for j := i; j > 0 && compareFacetEntry(b[j-1], b[j]) > 0; j-- {
				b[j-1], b[j] = b[j], b[j-1]
			}
		}
	}
	return t
}

// facetsWithKey returns the entries of a sorted facet table with vertex
// set k.
func facetsWithKey(t []facetEntry, k facetKey) []facetEntry {
	i, _ := slices.BinarySearchFunc(t, k, func(e facetEntry, k facetKey) int { return slices.Compare(e.key[:], k[:]) })
	j := i
	for j < len(t) && t[j].key == k {
		j++
	}
	return t[i:j]
}

// boundaryOf returns the facets of a sorted facet table that belong to
// exactly one cell, sorted by (cell, facet).
func boundaryOf(t []facetEntry) []FacetRef {
	var out []FacetRef
	for i := 0; i < len(t); {
		j := i + 1
		for j < len(t) && t[j].key == t[i].key {
			j++
		}
		if j == i+1 {
			out = append(out, t[i].ref)
		}
		i = j
	}
	slices.SortFunc(out, CompareFacetRef)
	return out
}

// TopologicalBoundary returns the facets that belong to exactly one cell,
// sorted. It sorts all facets: use it for checks and file input, not in
// hot paths.
func (m *Mesh) TopologicalBoundary() []FacetRef { return boundaryOf(m.facetTable()) }

// OrientationError reports an inverted or degenerate cell.
type OrientationError struct {
	Cell int
	Det  float64 // smallest corner Jacobian determinant (scaled), or signed measure
}

func (e *OrientationError) Error() string {
	return fmt.Sprintf("mesh: cell %d is inverted or degenerate (Jacobian determinant %g)", e.Cell, e.Det)
}

// CheckOrientation returns an *OrientationError for the first cell that is
// not positively oriented: for simplices a non-positive signed measure; for
// quadrilaterals and hexahedra a non-positive Jacobian determinant of the
// Q1 map at some vertex (the corner test: necessary for a valid cell and
// sufficient for quadrilaterals; common practice, no source).
func (m *Mesh) CheckOrientation() error {
	var buf [24]float64
	for c := 0; c < m.NumCells(); c++ {
		if det := orientation(m.Cell, m.CellCoords(c, buf[:0])); !(det > 0) {
			return &OrientationError{Cell: c, Det: det}
		}
	}
	return nil
}

// orientation returns the signed measure (simplices) or the smallest
// corner Jacobian determinant (tensor cells) of a cell.
func orientation(c cell.Type, v []float64) float64 {
	if c.IsSimplex() {
		return element.Measure(c, v)
	}
	d := c.Dim()
	ref := c.Vertices()
	nb := &cornerNeighbours[c]
	lo := math.Inf(1)
	for a := 0; a < c.NumVertices(); a++ {
		var e [3][3]float64
		for k := 0; k < d; k++ {
			b := nb[a][k]
			s := -ref[a*d+k] // direction of +ξ_k from a
			for j := 0; j < d; j++ {
				e[k][j] = s * (v[b*d+j] - v[a*d+j])
			}
		}
		var det float64
		if d == 2 {
			det = e[0][0]*e[1][1] - e[0][1]*e[1][0]
		} else {
			det = e[0][0]*(e[1][1]*e[2][2]-e[1][2]*e[2][1]) -
				e[0][1]*(e[1][0]*e[2][2]-e[1][2]*e[2][0]) +
				e[0][2]*(e[1][0]*e[2][1]-e[1][1]*e[2][0])
		}
		lo = min(lo, det)
	}
	return lo
}

// cornerNeighbours[c][a][k] is the vertex of tensor cell c joined to vertex
// a by the edge along reference axis k.
var cornerNeighbours [cell.Hexahedron + 1][8][3]int

func init() {
	for _, c := range []cell.Type{cell.Quadrilateral, cell.Hexahedron} {
		d, ref := c.Dim(), c.Vertices()
		for a := 0; a < c.NumVertices(); a++ {
			for k := 0; k < d; k++ {
				for b := 0; b < c.NumVertices(); b++ {
					differ := 0
					for j := 0; j < d; j++ {
						if ref[a*d+j] != ref[b*d+j] {
							differ |= 1 << j
						}
					}
					if differ == 1<<k {
						cornerNeighbours[c][a][k] = b
					}
				}
			}
		}
	}
}
