package mesh

import (
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/formwright/formwright/runtime/cell"
)

// build checks the decoded arrays and makes the mesh (package doc, "Mesh
// files"). Cell and point indices in errors are those of the file.
func (r *vtuReader) build() (*Mesh, error) {
	for _, ro := range []role{rolePoints, roleConnectivity, roleOffsets, roleTypes} {
		if r.arrays[ro] == nil {
			return nil, r.errAt(0, "no %s array", roleNames[ro])
		}
	}
	if r.nc == 0 {
		return nil, r.errAt(0, "the file has no cells")
	}
	np := r.np
	pts := r.arrays[rolePoints].floats
	conn := r.arrays[roleConnectivity].ints
	offs := r.arrays[roleOffsets].ints
	types := r.arrays[roleTypes].ints
	var part []int64
	if a := r.arrays[rolePart]; a != nil {
		part = a.ints
	}

	// Cell types, node counts and node indices; the top dimension.
	kinds := make([]*vtkCell, r.nc)
	dim := 0
	prev := int64(0)
	for c := range kinds {
		vc := vtkCells[int(types[c])]
		if types[c] > math.MaxInt32 || vc == nil {
			return nil, r.cellErr(c, "VTK cell type %d is not supported (want a vertex, line, triangle, quadrilateral, tetrahedron or hexahedron, linear or quadratic)", types[c])
		}
		end := offs[c]
		if end < prev || end > int64(len(conn)) {
			return nil, r.cellErr(c, "offset %d is out of order or beyond the %d connectivity entries", end, len(conn))
		}
		if end-prev != int64(vc.nodes) {
			return nil, r.cellErr(c, "a %s has %d nodes, the offsets give it %d", vc.name, vc.nodes, end-prev)
		}
		for _, v := range conn[prev:end] {
			if v < 0 || v >= int64(np) {
				return nil, r.cellErr(c, "point index %d out of range [0,%d)", v, np)
			}
		}
		kinds[c] = vc
		dim = max(dim, vc.dim)
		prev = end
	}
	if prev != int64(len(conn)) {
		return nil, r.errAt(r.arrays[roleConnectivity].line, "connectivity has %d entries, the offsets use %d", len(conn), prev)
	}
	if dim == 0 {
		return nil, r.errAt(0, "the file has vertex cells only: a mesh needs cells of dimension 1, 2 or 3")
	}
	first := -1
	var shape cell.Type
	ntop := 0
	for c, vc := range kinds {
		if vc.dim != dim {
			continue
		}
		if first < 0 {
			first, shape = c, vc.shape
		} else if vc.shape != shape {
			return nil, r.cellErr(c, "a %s among %v cells (cell %d is a %s): a mesh has one cell type", vc.name, shape, first, kinds[first].name)
		}
		ntop++
	}
	start := func(c int) int64 {
		if c == 0 {
			return 0
		}
		return offs[c-1]
	}
	nvc := shape.NumVertices()

	// Points that are vertices of top-dimension cells, in file order;
	// others (mid-edge nodes of quadratic cells, unused points) are dropped.
	newIdx := make([]int32, np)
	for i := range newIdx {
		newIdx[i] = -1
	}
	for c, vc := range kinds {
		if vc.dim == dim {
			s := start(c)
			for i := 0; i < nvc; i++ {
				newIdx[conn[s+int64(vc.vertex(i))]] = 0
			}
		}
	}
	nv := int32(0)
	for p, k := range newIdx {
		if k == 0 {
			newIdx[p] = nv
			nv++
		}
	}
	axes := "xyz"
	for p := 0; p < np; p++ {
		for k := 0; k < 3; k++ {
			if x := pts[3*p+k]; math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, r.pointErr(p, "coordinate %c = %v is not finite", axes[k], x)
			}
		}
	}
	coords := make([]float64, int(nv)*dim)
	for p, q := range newIdx {
		if q < 0 {
			continue
		}
		copy(coords[int(q)*dim:], pts[3*p:3*p+dim])
		for k := dim; k < 3; k++ {
			if pts[3*p+k] != 0 {
				return nil, r.pointErr(p, "%c = %v, but a %d-dimensional mesh must have %s = 0", axes[k], pts[3*p+k], dim, strings.Join(strings.Split(axes[dim:], ""), " = "))
			}
		}
	}

	// Cells, mirrored ones repaired.
	m := &Mesh{Dim: dim, Cell: shape, Coords: coords, Cells: make([]int32, 0, ntop*nvc)}
	topFile := make([]int32, 0, ntop) // mesh cell -> file cell
	var vs, tmp [8]int32
	var buf [24]float64
	for c, vc := range kinds {
		if vc.dim != dim {
			continue
		}
		s := start(c)
		for i := 0; i < nvc; i++ {
			vs[i] = newIdx[conn[s+int64(vc.vertex(i))]]
		}
		x := gatherCoords(coords, dim, vs[:nvc], buf[:0])
		switch v, det := inspectCell(shape, x); v {
		case cellMirrored:
			for i, j := range flipOrder[shape] {
				tmp[i] = vs[j]
			}
			vs = tmp
		case cellDegenerate:
			return nil, r.cellErr(c, "degenerate %v (Jacobian determinant %.3g at a corner, zero within rounding)", shape, det)
		case cellTangled:
			return nil, r.cellErr(c, "tangled %v: its corner Jacobian determinants differ in sign (smallest %.3g); its vertices are not in cyclic order or it is not convex", shape, det)
		}
		m.Cells = append(m.Cells, vs[:nvc]...)
		topFile = append(topFile, int32(c))
	}

	// Regions.
	if part != nil {
		for k, c := range topFile {
			id := part[c]
			if id < 0 || id > math.MaxInt32 {
				return nil, r.cellErr(int(c), "region number %d in %s: want 0 to %d", id, PartArray, math.MaxInt32)
			}
			if id != 0 && m.Regions == nil {
				m.Regions = make([]int32, ntop)
			}
			if m.Regions != nil {
				m.Regions[k] = int32(id)
			}
		}
	}

	// Facet cells.
	table := m.facetTable()
	type tagged struct {
		ref  FacetRef
		file int
	}
	byPart := map[int64][]tagged{}
	for c, vc := range kinds {
		if vc.dim != dim-1 {
			continue
		}
		if dim > 1 && vc.shape != shape.FacetType() {
			return nil, r.cellErr(c, "a %s cannot be a facet of a %v, whose facets are %ss", vc.name, shape, shape.FacetType())
		}
		k := facetKey{-1, -1, -1, -1}
		n := vc.numVertices()
		s := start(c)
		for i := 0; i < n; i++ {
			p := conn[s+int64(vc.vertex(i))]
			if k[i] = newIdx[p]; k[i] < 0 {
				return nil, r.cellErr(c, "facet cell not on the boundary: its point %d is no vertex of a %v", p, shape)
			}
		}
		slices.Sort(k[:n])
		refs := facetsWithKey(table, k)
		switch len(refs) {
		case 0:
			return nil, r.cellErr(c, "facet cell not on the boundary: it is no facet of a %v", shape)
		case 1:
		default:
			return nil, r.cellErr(c, "facet cell not on the boundary: it is the facet between cells %d and %d", topFile[refs[0].ref.Cell], topFile[refs[1].ref.Cell])
		}
		id := int64(0)
		if part != nil {
			id = part[c]
		}
		if id < 0 {
			return nil, r.cellErr(c, "boundary part number %d in %s: want 0 (none) or more", id, PartArray)
		}
		if id > 0 {
			byPart[id] = append(byPart[id], tagged{refs[0].ref, c})
		}
	}

	// Part names.
	names := map[int64]string{}
	ids, ns := r.arrays[rolePartIDs], r.arrays[rolePartNames]
	if (ids == nil) != (ns == nil) {
		have, miss := PartIDsArray, PartNamesArray
		if ids == nil {
			have, miss = miss, have
		}
		return nil, r.errAt(0, "field data has %s but not %s", have, miss)
	}
	if ids != nil {
		if len(ids.ints) != len(ns.strs) {
			return nil, r.errAt(ids.line, "%s has %d entries, %s %d", PartIDsArray, len(ids.ints), PartNamesArray, len(ns.strs))
		}
		byName := map[string]int64{}
		for i, id := range ids.ints {
			name := ns.strs[i]
			switch {
			case id < 1:
				return nil, r.errAt(ids.line, "%s: part number %d: want 1 or more", PartIDsArray, id)
			case names[id] != "":
				return nil, r.errAt(ids.line, "%s: part number %d named twice", PartIDsArray, id)
			case !validName(name):
				return nil, r.errAt(ns.line, "%s: bad part name %q: want a letter followed by letters, digits, '_' or '-', at most %d bytes", PartNamesArray, name, maxNameLen)
			case name == All:
				return nil, r.errAt(ns.line, "%s: the part name %q is reserved for the whole boundary", PartNamesArray, All)
			case byName[name] != 0:
				return nil, r.errAt(ns.line, "%s: the name %q is given to parts %d and %d", PartNamesArray, name, byName[name], id)
			}
			names[id], byName[name] = name, id
		}
		for id := range byPart {
			if names[id] == "" {
				name := "part" + strconv.FormatInt(id, 10)
				if other, ok := byName[name]; ok {
					return nil, r.errAt(ids.line, "part %d has no name and its default name %q is taken by part %d", id, name, other)
				}
				names[id] = name
			}
		}
	} else {
		for id := range byPart {
			names[id] = "part" + strconv.FormatInt(id, 10)
		}
	}
	m.Boundaries = make(map[string][]FacetRef, len(names)+1)
	for id, name := range names {
		ts := byPart[id]
		slices.SortFunc(ts, func(a, b tagged) int { return CompareFacetRef(a.ref, b.ref) })
		refs := make([]FacetRef, len(ts))
		for i, t := range ts {
			if i > 0 && t.ref == ts[i-1].ref {
				return nil, r.cellErr(max(t.file, ts[i-1].file), "facet cell repeats cell %d in boundary part %q", min(t.file, ts[i-1].file), name)
			}
			refs[i] = t.ref
		}
		m.Boundaries[name] = refs
	}
	m.Boundaries[All] = boundaryOf(table)
	return m, nil
}

func gatherCoords(coords []float64, d int, vs []int32, dst []float64) []float64 {
	for _, v := range vs {
		dst = append(dst, coords[int(v)*d:int(v)*d+d]...)
	}
	return dst
}

// validName reports whether s is a boundary-part name: a letter followed
// by letters, digits, '_' or '-', at most maxNameLen bytes.
func validName(s string) bool {
	if s == "" || len(s) > maxNameLen {
		return false
	}
	for i, r := range s {
		letter := r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z'
		if !letter && (i == 0 || !(r >= '0' && r <= '9' || r == '_' || r == '-')) {
			return false
		}
	}
	return true
}

// cellVerdict classifies a cell by the signs of its Jacobian determinants.
type cellVerdict uint8

const (
	cellValid      cellVerdict = iota
	cellMirrored               // all negative: flipOrder repairs it
	cellDegenerate             // some determinant zero within rounding
	cellTangled                // determinants of both signs
)

// degenerateTol: a determinant of edge vectors is zero within rounding if
// it is at most this times h^d, h the longest edge of the cell (the
// rounding error of such a determinant is a few machine epsilons times
// h^d; common practice, no source).
const degenerateTol = 1e-12

// inspectCell classifies a cell with vertex coordinates x (formwright
// order) by the determinants of its P1 map (simplices) or of its Q1 map
// at every corner (quadrilaterals, hexahedra: the corner test, necessary
// for a valid cell and sufficient for a quadrilateral; common practice,
// no source). It returns the verdict and the determinant of smallest
// magnitude (valid, degenerate) or the smallest (tangled, mirrored).
func inspectCell(c cell.Type, x []float64) (cellVerdict, float64) {
	d := c.Dim()
	h := 0.0
	for _, e := range c.Edges() {
		s := 0.0
		for k := 0; k < d; k++ {
			t := x[e[1]*d+k] - x[e[0]*d+k]
			s += t * t
		}
		h = max(h, s)
	}
	tol := degenerateTol * math.Pow(h, float64(d)/2)
	var dets [8]float64
	n := cornerDets(c, x, dets[:])
	lo, hi, small := math.Inf(1), math.Inf(-1), math.Inf(1)
	for _, v := range dets[:n] {
		lo, hi = min(lo, v), max(hi, v)
		if math.Abs(v) < math.Abs(small) {
			small = v
		}
	}
	switch {
	case !(math.Abs(small) > tol):
		return cellDegenerate, small
	case lo > 0:
		return cellValid, small
	case hi < 0:
		return cellMirrored, lo
	}
	return cellTangled, lo
}

// cornerDets writes the Jacobian determinants that decide a cell's
// orientation into dst and returns their number: for a simplex the one
// determinant of the edge vectors from vertex 0; for a tensor cell the
// determinant of the edge vectors along the reference axes at each
// corner, signed as the reference axes (cornerNeighbours).
func cornerDets(c cell.Type, x []float64, dst []float64) int {
	d := c.Dim()
	if c.IsSimplex() {
		var e [3][3]float64
		for k := 0; k < d; k++ {
			for j := 0; j < d; j++ {
				e[k][j] = x[(k+1)*d+j] - x[j]
			}
		}
		dst[0] = det3(e, d)
		return 1
	}
	ref := c.Vertices()
	nb := &cornerNeighbours[c]
	for a := 0; a < c.NumVertices(); a++ {
		var e [3][3]float64
		for k := 0; k < d; k++ {
			b := nb[a][k]
			s := -ref[a*d+k]
			for j := 0; j < d; j++ {
				e[k][j] = s * (x[b*d+j] - x[a*d+j])
			}
		}
		dst[a] = det3(e, d)
	}
	return c.NumVertices()
}

// det3 is the determinant of the leading d×d block of e.
func det3(e [3][3]float64, d int) float64 {
	switch d {
	case 1:
		return e[0][0]
	case 2:
		return e[0][0]*e[1][1] - e[0][1]*e[1][0]
	}
	return e[0][0]*(e[1][1]*e[2][2]-e[1][2]*e[2][1]) -
		e[0][1]*(e[1][0]*e[2][2]-e[1][2]*e[2][0]) +
		e[0][2]*(e[1][0]*e[2][1]-e[1][1]*e[2][0])
}
