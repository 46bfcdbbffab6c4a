package element

import (
	"fmt"

	"github.com/formwright/formwright/runtime/cell"
)

// EntityKind is the kind of topological entity a node belongs to.
type EntityKind uint8

const (
	Vertex EntityKind = iota
	Edge
	Face     // a 2D face of a 3D cell
	Interior // the cell itself
)

func (k EntityKind) String() string {
	switch k {
	case Vertex:
		return "vertex"
	case Edge:
		return "edge"
	case Face:
		return "face"
	case Interior:
		return "interior"
	}
	return fmt.Sprintf("EntityKind(%d)", uint8(k))
}

// Entity is a local topological entity: Index is the local vertex, edge
// (cell.Type.Edges) or face (cell.Type.Facets of a 3D cell) number; it is 0
// for Interior.
type Entity struct {
	Kind  EntityKind
	Index int
}

// Element is a Lagrange element on a reference cell. It is immutable after
// construction and safe for concurrent use.
type Element struct {
	Cell   cell.Type
	Degree int

	dim, n     int
	nodes      []float64
	entities   []Entity
	nodeVerts  [][]int // cell vertices of each node's entity
	facetNodes [][]int
	edgeNodes  [][]int

	// simplices: barycentric indices (a,b) of each node, a==b for vertices
	bary [][2]int
	// tensor cells: 1D node index per node and direction (0: -1, 1: +1, 2: 0)
	tidx []int8
}

// Lagrange returns the degree-1 or degree-2 Lagrange element on c: P_k on
// simplices, Q_k on quadrilaterals and hexahedra.
func Lagrange(c cell.Type, degree int) (*Element, error) {
	valid := false
	for _, k := range cell.All {
		valid = valid || k == c
	}
	if !valid {
		return nil, fmt.Errorf("element: invalid cell type %d", uint8(c))
	}
	if degree != 1 && degree != 2 {
		return nil, fmt.Errorf("element: no Lagrange element of degree %d on %v (degrees 1 and 2 are implemented)", degree, c)
	}
	d := c.Dim()
	e := &Element{Cell: c, Degree: degree, dim: d}
	verts := c.Vertices()
	nv := c.NumVertices()
	add := func(x []float64, ent Entity, vs []int) {
		e.nodes = append(e.nodes, x...)
		e.entities = append(e.entities, ent)
		e.nodeVerts = append(e.nodeVerts, vs)
	}
	centroid := func(vs []int) []float64 {
		x := make([]float64, d)
		for _, v := range vs {
			for k := range x {
				x[k] += verts[v*d+k] / float64(len(vs))
			}
		}
		return x
	}
	for v := range nv {
		add(verts[v*d:(v+1)*d], Entity{Vertex, v}, []int{v})
	}
	if degree == 2 {
		for i, ed := range c.Edges() {
			ent := Entity{Edge, i}
			if d == 1 {
				ent = Entity{Interior, 0}
			}
			add(centroid(ed[:]), ent, ed[:])
		}
		if !c.IsSimplex() {
			if d == 3 {
				for i, f := range c.Facets() {
					add(centroid(f), Entity{Face, i}, f)
				}
			}
			if d >= 2 {
				all := make([]int, nv)
				for i := range all {
					all[i] = i
				}
				add(make([]float64, d), Entity{Interior, 0}, all)
			}
		}
	}
	e.n = len(e.entities)
	if c.IsSimplex() {
		for i := range e.n {
			vs := e.nodeVerts[i]
			if len(vs) == 1 {
				e.bary = append(e.bary, [2]int{vs[0], vs[0]})
			} else {
				e.bary = append(e.bary, [2]int{vs[0], vs[1]})
			}
		}
	} else {
		e.tidx = make([]int8, e.n*d)
		for i := range e.n {
			for k := range d {
				switch x := e.nodes[i*d+k]; x {
				case -1:
					e.tidx[i*d+k] = 0
				case 1:
					e.tidx[i*d+k] = 1
				case 0:
					e.tidx[i*d+k] = 2
				default:
					panic(fmt.Sprintf("element: internal error: node coordinate %v", x))
				}
			}
		}
	}
	subset := func(a, b []int) bool {
		for _, x := range a {
			found := false
			for _, y := range b {
				found = found || x == y
			}
			if !found {
				return false
			}
		}
		return true
	}
	for _, f := range c.Facets() {
		var ns []int
		for i := range e.n {
			if subset(e.nodeVerts[i], f) {
				ns = append(ns, i)
			}
		}
		e.facetNodes = append(e.facetNodes, ns)
	}
	for _, ed := range c.Edges() {
		var ns []int
		for i := range e.n {
			if subset(e.nodeVerts[i], ed[:]) {
				ns = append(ns, i)
			}
		}
		e.edgeNodes = append(e.edgeNodes, ns)
	}
	return e, nil
}

// MustLagrange is Lagrange for arguments known to be valid; it panics on error.
func MustLagrange(c cell.Type, degree int) *Element {
	e, err := Lagrange(c, degree)
	if err != nil {
		panic(err.Error())
	}
	return e
}

// NumNodes is the number of nodes (= basis functions).
func (e *Element) NumNodes() int { return e.n }

// Dim is the reference dimension.
func (e *Element) Dim() int { return e.dim }

// RefNodes returns a copy of the reference node coordinates, flat
// (NumNodes*Dim), in the documented node order.
func (e *Element) RefNodes() []float64 { return append([]float64(nil), e.nodes...) }

// NodeEntity returns the entity node i belongs to.
func (e *Element) NodeEntity(i int) Entity { return e.entities[i] }

// FacetNodes returns the local nodes lying on local facet f, in increasing
// order. Shared slice: do not modify.
func (e *Element) FacetNodes(f int) []int { return e.facetNodes[f] }

// EdgeNodes returns the local nodes lying on local edge ed (its two vertex
// nodes and, for degree 2, its midpoint node), in increasing order. Shared
// slice: do not modify.
func (e *Element) EdgeNodes(ed int) []int { return e.edgeNodes[ed] }

func (e *Element) checkLen(name string, got, want int) {
	if got < want {
		panic(fmt.Sprintf("element: %s buffer has length %d, need %d for %v degree %d", name, got, want, e.Cell, e.Degree))
	}
}

// lagrange1D returns value, first and second derivative of the 1D Lagrange
// polynomial with node index i (0: -1, 1: +1, 2: 0) of the given degree.
func lagrange1D(degree int, i int8, x float64) (v, d, dd float64) {
	if degree == 1 {
		if i == 0 {
			return 0.5 * (1 - x), -0.5, 0
		}
		return 0.5 * (1 + x), 0.5, 0
	}
	switch i {
	case 0:
		return 0.5 * x * (x - 1), x - 0.5, 1
	case 1:
		return 0.5 * x * (x + 1), x + 0.5, 1
	}
	return 1 - x*x, -2 * x, -2
}

// barycentric fills lambda[0..dim] at xi.
func (e *Element) barycentric(xi []float64, lam *[4]float64) {
	s := 1.0
	for k := 0; k < e.dim; k++ {
		lam[k+1] = xi[k]
		s -= xi[k]
	}
	lam[0] = s
}

// gradLambda returns ∂λ_a/∂ξ_k.
func gradLambda(a, k int) float64 {
	if a == 0 {
		return -1
	}
	if a == k+1 {
		return 1
	}
	return 0
}

// Eval writes the basis values at reference point xi into phi (len >= NumNodes).
func (e *Element) Eval(xi, phi []float64) {
	e.checkLen("phi", len(phi), e.n)
	e.checkLen("xi", len(xi), e.dim)
	if e.bary != nil {
		var lam [4]float64
		e.barycentric(xi, &lam)
		for i, ab := range e.bary {
			switch {
			case e.Degree == 1:
				phi[i] = lam[ab[0]]
			case ab[0] == ab[1]:
				phi[i] = lam[ab[0]] * (2*lam[ab[0]] - 1)
			default:
				phi[i] = 4 * lam[ab[0]] * lam[ab[1]]
			}
		}
		return
	}
	var v [3][3]float64
	for k := 0; k < e.dim; k++ {
		for j := int8(0); j < int8(e.Degree+1); j++ {
			v[k][j], _, _ = lagrange1D(e.Degree, j, xi[k])
		}
	}
	for i := 0; i < e.n; i++ {
		p := 1.0
		for k := 0; k < e.dim; k++ {
			p *= v[k][e.tidx[i*e.dim+k]]
		}
		phi[i] = p
	}
}

// EvalGrad writes the reference gradients at xi into dphi, node-major:
// dphi[i*Dim+k] = ∂φ_i/∂ξ_k.
func (e *Element) EvalGrad(xi, dphi []float64) {
	d := e.dim
	e.checkLen("dphi", len(dphi), e.n*d)
	e.checkLen("xi", len(xi), d)
	if e.bary != nil {
		var lam [4]float64
		e.barycentric(xi, &lam)
		for i, ab := range e.bary {
			a, b := ab[0], ab[1]
			for k := 0; k < d; k++ {
				var g float64
				switch {
				case e.Degree == 1:
					g = gradLambda(a, k)
				case a == b:
					g = (4*lam[a] - 1) * gradLambda(a, k)
				default:
					g = 4 * (lam[a]*gradLambda(b, k) + lam[b]*gradLambda(a, k))
				}
				dphi[i*d+k] = g
			}
		}
		return
	}
	var v, dv [3][3]float64
	for k := 0; k < d; k++ {
		for j := int8(0); j < int8(e.Degree+1); j++ {
			v[k][j], dv[k][j], _ = lagrange1D(e.Degree, j, xi[k])
		}
	}
	for i := 0; i < e.n; i++ {
		t := e.tidx[i*d : (i+1)*d]
		for k := 0; k < d; k++ {
			p := 1.0
			for m := 0; m < d; m++ {
				if m == k {
					p *= dv[m][t[m]]
				} else {
					p *= v[m][t[m]]
				}
			}
			dphi[i*d+k] = p
		}
	}
}

// EvalHess writes the reference second derivatives at xi into d2:
// d2[(i*Dim+k)*Dim+l] = ∂²φ_i/∂ξ_k∂ξ_l.
func (e *Element) EvalHess(xi, d2 []float64) {
	d := e.dim
	e.checkLen("d2", len(d2), e.n*d*d)
	e.checkLen("xi", len(xi), d)
	if e.bary != nil {
		for i, ab := range e.bary {
			a, b := ab[0], ab[1]
			for k := 0; k < d; k++ {
				for l := 0; l < d; l++ {
					var h float64
					switch {
					case e.Degree == 1:
					case a == b:
						h = 4 * gradLambda(a, k) * gradLambda(a, l)
					default:
						h = 4 * (gradLambda(a, k)*gradLambda(b, l) + gradLambda(b, k)*gradLambda(a, l))
					}
					d2[(i*d+k)*d+l] = h
				}
			}
		}
		return
	}
	var v, dv, ddv [3][3]float64
	for k := 0; k < d; k++ {
		for j := int8(0); j < int8(e.Degree+1); j++ {
			v[k][j], dv[k][j], ddv[k][j] = lagrange1D(e.Degree, j, xi[k])
		}
	}
	for i := 0; i < e.n; i++ {
		t := e.tidx[i*d : (i+1)*d]
		for k := 0; k < d; k++ {
			for l := 0; l < d; l++ {
				p := 1.0
				for m := 0; m < d; m++ {
					switch {
					case m == k && m == l:
						p *= ddv[m][t[m]]
					case m == k || m == l:
						p *= dv[m][t[m]]
					default:
						p *= v[m][t[m]]
					}
				}
				d2[(i*d+k)*d+l] = p
			}
		}
	}
}
