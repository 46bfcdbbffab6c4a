package cell

import (
	"fmt"
	"math"
)

// FacetPoint maps the point xf of the facet reference cell (c.FacetType();
// no coordinates for the point facets of an interval) onto local facet f
// of c, writing the cell reference coordinates into xi (len >= Dim). The
// facet reference vertices map onto the facet's vertex list in order
// (c.Facets()[f]); the map is affine. Triangle/tetrahedron/interval facet
// references are unit simplices; hexahedron faces use [-1,1]², vertex k of
// the reference quadrilateral going to facet vertex k.
func (c Type) FacetPoint(f int, xf, xi []float64) {
	d := c.Dim()
	fv := c.Facets()[f]
	v := c.Vertices()
	o := v[fv[0]*d : fv[0]*d+d]
	copy(xi[:d], o)
	switch {
	case d == 1:
	case c == Hexahedron:
		s, t := 0.5*(xf[0]+1), 0.5*(xf[1]+1)
		for k := 0; k < d; k++ {
			xi[k] += s*(v[fv[1]*d+k]-o[k]) + t*(v[fv[3]*d+k]-o[k])
		}
	default: // simplex facets, including the interval facets of quadrilaterals
		for j := 1; j < d; j++ {
			for k := 0; k < d; k++ {
				xi[k] += xf[j-1] * (v[fv[j]*d+k] - o[k])
			}
		}
	}
}

// FacetNormal returns the outward unit normal of reference facet f of c.
// Shared slice: do not modify.
func (c Type) FacetNormal(f int) []float64 {
	c.must()
	return facetGeom[c][f].normal
}

// FacetScale is the ratio of the measure of reference facet f of c to the
// measure of the facet reference cell: the constant Jacobian of
// FacetPoint (1 for points, e.g. √2 for the slanted triangle edge, 2 for a
// quadrilateral side, √3 for the slanted tetrahedron face).
func (c Type) FacetScale(f int) float64 {
	c.must()
	return facetGeom[c][f].scale
}

type facetInfo struct {
	normal []float64
	scale  float64
}

var facetGeom [Hexahedron + 1][]facetInfo

func init() {
	for _, c := range All {
		d := c.Dim()
		for f := range c.Facets() {
			// Tangents of the affine facet map: columns dξ/dxf_j.
			var tg [2][3]float64
			x0, x1 := make([]float64, d), make([]float64, d)
			zero := make([]float64, 2)
			if c == Hexahedron {
				zero = []float64{-1, -1}
			}
			c.FacetPoint(f, zero, x0)
			for j := 0; j < d-1; j++ {
				xf := append([]float64(nil), zero...)
				xf[j]++
				c.FacetPoint(f, xf, x1)
				for k := 0; k < d; k++ {
					tg[j][k] = x1[k] - x0[k]
				}
			}
			n := make([]float64, d)
			var scale float64
			switch d {
			case 1:
				n[0], scale = 1, 1
				if c.Facets()[f][0] == 0 {
					n[0] = -1
				}
			case 2:
				n[0], n[1] = tg[0][1], -tg[0][0]
				scale = math.Hypot(tg[0][0], tg[0][1])
			case 3:
				a, b := tg[0], tg[1]
				n[0], n[1], n[2] = a[1]*b[2]-a[2]*b[1], a[2]*b[0]-a[0]*b[2], a[0]*b[1]-a[1]*b[0]
				scale = math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2])
			}
			nn := 0.0
			for _, x := range n {
				nn += x * x
			}
			nn = math.Sqrt(nn)
			// Orient outwards: away from the reference centroid.
			cc := c.Centroid(make([]float64, 3))
			dot := 0.0
			for k := range n {
				n[k] /= nn
				dot += n[k] * (x0[k] - cc[k])
			}
			if dot < 0 {
				panic(fmt.Sprintf("cell: internal error: facet %d of %v is not oriented outwards", f, c))
			}
			facetGeom[c] = append(facetGeom[c], facetInfo{n, scale})
		}
	}
}
