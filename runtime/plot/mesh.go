package plot

import (
	"sort"

	"github.com/formwright/formwright/runtime/mesh"
)

// MeshTriangulation is the triangulation of a 2D mesh's vertices for
// ColourMap: its triangles, or its quadrilaterals split by SplitQuads. It
// panics for meshes of other dimensions (programmer misuse).
func MeshTriangulation(m *mesh.Mesh) Triangulation {
	if m.Dim != 2 {
		panic("plot: MeshTriangulation of a mesh that is not 2D")
	}
	nv := m.NumVertices()
	tri := Triangulation{X: make([]float64, nv), Y: make([]float64, nv)}
	for v := 0; v < nv; v++ {
		tri.X[v], tri.Y[v] = m.Coords[2*v], m.Coords[2*v+1]
	}
	if m.Cell.NumVertices() == 3 {
		for c := 0; c < m.NumCells(); c++ {
			cv := m.CellVertices(c)
			tri.Triangles = append(tri.Triangles, [3]int{int(cv[0]), int(cv[1]), int(cv[2])})
		}
		return tri
	}
	quads := make([][4]int, 0, m.NumCells())
	for c := 0; c < m.NumCells(); c++ {
		cv := m.CellVertices(c)
		quads = append(quads, [4]int{int(cv[0]), int(cv[1]), int(cv[2]), int(cv[3])})
	}
	tri.Triangles = SplitQuads(quads)
	return tri
}

// NodeSeries is a line series through 1D nodes given in any order:
// coords[i] and values[i] are sorted by coordinate.
func NodeSeries(name string, coords, values []float64) Series {
	idx := make([]int, len(coords))
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return coords[idx[a]] < coords[idx[b]] })
	s := Series{Name: name}
	for _, i := range idx {
		s.X = append(s.X, coords[i])
		s.Y = append(s.Y, values[i])
	}
	return s
}
