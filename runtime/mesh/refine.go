package mesh

import (
	"fmt"
	"slices"

	"github.com/formwright/formwright/runtime/cell"
)

// Refine returns the uniform refinement of m: every interval is halved,
// every triangle and quadrilateral cut into 4 and every tetrahedron and
// hexahedron into 8 (refineRules). The vertices of m keep their indices;
// the new vertices (edge midpoints, then for tensor cells face and cell
// centres, which are the images of the reference midpoints under the
// Q1 map) follow in order of first use. The children of cell c are cells
// c*k ... c*k+k-1 (k children per cell) and inherit its region. The
// children of a boundary facet inherit its boundary parts, so every part,
// "all" included, covers the same set as before. Children are positively
// oriented when their parent is.
func Refine(m *Mesh) *Mesh { return refine(m, &refineRules[m.Cell]) }

func refine(m *Mesh, rule *refineRule) *Mesh {
	nvc := m.Cell.NumVertices()
	nc := m.NumCells()
	d := m.Dim
	nk := len(rule.children)
	out := &Mesh{Dim: d, Cell: m.Cell, Coords: slices.Clone(m.Coords),
		Cells: make([]int32, 0, nc*nk*nvc), Boundaries: make(map[string][]FacetRef, len(m.Boundaries))}
	shared := make(map[facetKey]int32, nc*len(rule.nodes))
	local := make([]int32, nvc+len(rule.nodes))
	for c := 0; c < nc; c++ {
		cv := m.CellVertices(c)
		copy(local, cv)
		for i, sup := range rule.nodes {
			if len(sup) == nvc { // the cell's own centre: never shared
				local[nvc+i] = out.addAverage(cv, sup, d)
				continue
			}
			k := facetKey{-1, -1, -1, -1}
			for j, lv := range sup {
				k[j] = cv[lv]
			}
			slices.Sort(k[:len(sup)])
			v, ok := shared[k]
			if !ok {
				v = out.addAverage(k[:len(sup)], nil, d)
				shared[k] = v
			}
			local[nvc+i] = v
		}
		for _, ch := range rule.children {
			for _, ln := range ch {
				out.Cells = append(out.Cells, local[ln])
			}
		}
	}
	for name, refs := range m.Boundaries {
		var fs []FacetRef
		if refs != nil {
			fs = make([]FacetRef, 0, len(refs)*len(rule.facetChildren[0]))
		}
		for _, f := range refs {
			for _, cf := range rule.facetChildren[f.Facet] {
				fs = append(fs, FacetRef{f.Cell*int32(nk) + cf.Cell, cf.Facet})
			}
		}
		slices.SortFunc(fs, CompareFacetRef)
		out.Boundaries[name] = fs
	}
	if m.Regions != nil {
		out.Regions = make([]int32, nc*nk)
		for c, r := range m.Regions {
			for k := 0; k < nk; k++ {
				out.Regions[c*nk+k] = r
			}
		}
	}
	return out
}

// addAverage appends the vertex at the average of the vertices vs[i]
// (i in idx; all of vs when idx is nil), summed in the given order, and
// returns its index.
func (m *Mesh) addAverage(vs []int32, idx []int, d int) int32 {
	n := len(vs)
	if idx != nil {
		n = len(idx)
	}
	var s [3]float64
	for j := 0; j < n; j++ {
		v := vs[j]
		if idx != nil {
			v = vs[idx[j]]
		}
		for k := 0; k < d; k++ {
			s[k] += m.Coords[int(v)*d+k]
		}
	}
	for k := 0; k < d; k++ {
		m.Coords = append(m.Coords, s[k]/float64(n))
	}
	return int32(len(m.Coords)/d - 1)
}

// refineRule describes the uniform refinement of one cell type in local
// node numbers: the parent's vertices 0..nv-1, then nodes[i] as node
// nv+i, each the average of the parent vertices it lists (its support).
type refineRule struct {
	nodes    [][]int
	children [][]int
	// facetChildren[f] lists the (child, child facet) pairs that make up
	// parent facet f; derived from the supports in init.
	facetChildren [][]FacetRef
}

// refineRules, by cell type:
//
//   - interval: midpoint 2; children (0,2), (2,1).
//   - triangle: midpoint subdivision. Edge midpoints 3 = m12, 4 = m20,
//     5 = m01 (the edge order of runtime/cell); the three corner triangles
//     (0,m01,m20), (m01,1,m12), (m20,m12,2) are the parent scaled by 1/2
//     about a vertex, the middle one (m12,m20,m01) its point reflection
//     scaled by 1/2, so all four keep the parent's orientation and shape.
//   - tetrahedron: the regular ("red") refinement of J. Bey, Tetrahedral
//     grid refinement, Computing 55 (1995) 355–378, Algorithm
//     RedRefinement: with x_ij the midpoint of edge ij,
//     T1 = (x0,x01,x02,x03), T2 = (x01,x1,x12,x13), T3 = (x02,x12,x2,x23),
//     T4 = (x03,x13,x23,x3), and the octahedron cut along the diagonal
//     x02–x13 into T5 = (x01,x02,x03,x13), T6 = (x01,x02,x12,x13),
//     T7 = (x02,x03,x13,x23), T8 = (x02,x12,x13,x23). Bey orders the
//     vertices so that repeated refinement produces at most three
//     congruence classes of tetrahedra. Of these children T6 and T8 are
//     mirrored images of the parent's orientation; they are stored with
//     x0 and x2 swapped (tetFlip), which makes them positive and keeps
//     the vertex pairs {0,2} and {1,3} — and so the diagonal the next
//     refinement cuts along — unchanged. Swapping another pair, e.g. x0
//     and x1, lets the number of classes grow with each level (3, 7, 17,
//     37 in four levels of a generic tetrahedron); with tetFlip it stays
//     3 (TestRefineTetCongruence).
//   - quadrilateral and hexahedron: the 2^d children are the images of
//     the half-size reference cells at each corner, vertices in the
//     reference order, so each child's Q1 map is the restriction of the
//     parent's and orientation is kept. New nodes: edge midpoints in the
//     edge order of runtime/cell, then (hexahedron) face centres in facet
//     order, then the cell centre.
var refineRules [cell.Hexahedron + 1]refineRule

// tetFlip is the vertex order given to mirrored Bey children: child
// vertex i is Bey vertex tetFlip[i].
var tetFlip = [4]int{2, 1, 0, 3}

func init() {
	refineRules[cell.Segment] = refineRule{nodes: [][]int{{0, 1}}, children: [][]int{{0, 2}, {2, 1}}}
	refineRules[cell.Triangle] = refineRule{
		nodes:    edgeSupports(cell.Triangle),
		children: [][]int{{0, 5, 4}, {5, 1, 3}, {4, 3, 2}, {3, 4, 5}},
	}
	refineRules[cell.Tetrahedron] = beyRule(tetFlip)
	for _, c := range []cell.Type{cell.Quadrilateral, cell.Hexahedron} {
		nodes := edgeSupports(c)
		if c == cell.Hexahedron {
			nodes = append(nodes, c.Facets()...)
		}
		all := make([]int, c.NumVertices())
		for i := range all {
			all[i] = i
		}
		refineRules[c] = refineRule{nodes: append(nodes, all), children: tensorChildren(c, append(nodes, all))}
	}
	for _, c := range cell.All {
		if c != cell.Tetrahedron {
			finishRule(c, &refineRules[c])
		}
	}
}

// beyRule is Bey's regular refinement with mirrored children reordered by
// flip. Tetrahedron edges: 4=01 5=02 6=03 7=12 8=13 9=23.
func beyRule(flip [4]int) refineRule {
	r := refineRule{
		nodes: edgeSupports(cell.Tetrahedron),
		children: [][]int{
			{0, 4, 5, 6}, {4, 1, 7, 8}, {5, 7, 2, 9}, {6, 8, 9, 3},
			{4, 5, 6, 8}, {4, 5, 7, 8}, {5, 6, 8, 9}, {5, 7, 8, 9},
		},
	}
	pos := nodePositions(cell.Tetrahedron, r.nodes)
	for k, ch := range r.children {
		if childDet(cell.Tetrahedron, pos, ch) < 0 {
			fl := make([]int, 4)
			for i, j := range flip {
				fl[i] = ch[j]
			}
			r.children[k] = fl
		}
	}
	finishRule(cell.Tetrahedron, &r)
	return r
}

// finishRule checks that every child is positively oriented and derives
// the facet children.
func finishRule(c cell.Type, r *refineRule) {
	pos := nodePositions(c, r.nodes)
	for k, ch := range r.children {
		if det := childDet(c, pos, ch); !(det > 0) {
			panic(fmt.Sprintf("mesh: internal error: child %d of the %v refinement has det %v", k, c, det))
		}
	}
	r.facetChildren = deriveFacetChildren(c, r)
}

// edgeSupports lists the edges of c as supports.
func edgeSupports(c cell.Type) [][]int {
	var s [][]int
	for _, e := range c.Edges() {
		s = append(s, []int{e[0], e[1]})
	}
	return s
}

// nodePositions returns the reference coordinates of all local nodes
// (vertices, then the averages of the supports).
func nodePositions(c cell.Type, nodes [][]int) [][3]float64 {
	d, ref := c.Dim(), c.Vertices()
	pos := make([][3]float64, c.NumVertices(), c.NumVertices()+len(nodes))
	for i := range pos {
		copy(pos[i][:d], ref[i*d:i*d+d])
	}
	for _, sup := range nodes {
		var p [3]float64
		for _, v := range sup {
			for k := 0; k < d; k++ {
				p[k] += ref[v*d+k] / float64(len(sup))
			}
		}
		pos = append(pos, p)
	}
	return pos
}

// tensorChildren builds the 2^d corner children of a quadrilateral or
// hexahedron: child a has vertex j at the reference point (v_a + v_j)/2.
func tensorChildren(c cell.Type, nodes [][]int) [][]int {
	d, ref := c.Dim(), c.Vertices()
	pos := nodePositions(c, nodes)
	nv := c.NumVertices()
	children := make([][]int, nv)
	for a := 0; a < nv; a++ {
		for j := 0; j < nv; j++ {
			var p [3]float64
			for k := 0; k < d; k++ {
				p[k] = (ref[a*d+k] + ref[j*d+k]) / 2
			}
			n := slices.Index(pos, p)
			if n < 0 {
				panic(fmt.Sprintf("mesh: internal error: no %v node at %v", c, p))
			}
			children[a] = append(children[a], n)
		}
	}
	return children
}

// childDet is the sign-deciding determinant of a child (cornerDets at its
// first corner, which for the affine or half-size tensor children decides
// the orientation).
func childDet(c cell.Type, pos [][3]float64, ch []int) float64 {
	d := c.Dim()
	x := make([]float64, 0, len(ch)*d)
	for _, n := range ch {
		x = append(x, pos[n][:d]...)
	}
	var dets [8]float64
	n := cornerDets(c, x, dets[:])
	return slices.Min(dets[:n])
}

// deriveFacetChildren finds, for each parent facet, the child facets
// lying on it: those whose nodes all have supports inside the parent
// facet's vertex set.
func deriveFacetChildren(c cell.Type, r *refineRule) [][]FacetRef {
	nv := c.NumVertices()
	support := func(n int) []int {
		if n < nv {
			return []int{n}
		}
		return r.nodes[n-nv]
	}
	out := make([][]FacetRef, c.NumFacets())
	for f, fv := range c.Facets() {
		for k, ch := range r.children {
			for g, gv := range c.Facets() {
				on := true
				for _, lv := range gv {
					for _, v := range support(ch[lv]) {
						on = on && slices.Contains(fv, v)
					}
				}
				if on {
					out[f] = append(out[f], FacetRef{int32(k), int32(g)})
				}
			}
		}
		if len(out[f]) != 1<<(c.Dim()-1) {
			panic(fmt.Sprintf("mesh: internal error: facet %d of %v has %d children", f, c, len(out[f])))
		}
	}
	return out
}
