package quadrature

import (
	"fmt"
	"math"
	"slices"

	"github.com/formwright/formwright/runtime/cell"
	"gonum.org/v1/gonum/integrate/quad"
)

// Rule is a quadrature rule on a reference cell.
type Rule struct {
	Cell cell.Type
	// Degree: every polynomial of total degree <= Degree is integrated exactly.
	Degree int
	// Points holds NumPoints()*Dim reference coordinates, point-major.
	Points []float64
	// Weights sum to the reference-cell measure.
	Weights []float64
}

// NumPoints is the number of quadrature points.
func (r Rule) NumPoints() int { return len(r.Weights) }

// Point returns the reference coordinates of point q (a sub-slice of Points).
func (r Rule) Point(q int) []float64 {
	d := r.Cell.Dim()
	return r.Points[q*d : (q+1)*d]
}

// GaussLegendre returns the n-point Gauss–Legendre nodes (ascending) and
// weights on [-1,1], exact for polynomials of degree 2n-1. Nodes come from
// gonum's integrate/quad.Legendre. It panics if n < 1.
func GaussLegendre(n int) (x, w []float64) {
	if n < 1 {
		panic(fmt.Sprintf("quadrature: Gauss–Legendre rule with %d points", n))
	}
	x, w = make([]float64, n), make([]float64, n)
	quad.Legendre{}.FixedLocations(x, w, -1, 1)
	// Symmetrise: gonum's nodes are accurate to rounding; forcing exact
	// symmetry keeps odd moments exactly zero.
	for i := 0; i < n/2; i++ {
		j := n - 1 - i
		xm := 0.5 * (x[j] - x[i])
		wm := 0.5 * (w[i] + w[j])
		x[i], x[j] = -xm, xm
		w[i], w[j] = wm, wm
	}
	if n%2 == 1 {
		x[n/2] = 0
	}
	return x, w
}

// pointsFor returns the number of Gauss–Legendre points exact to degree d.
func pointsFor(d int) int { return max(1, (d+2)/2) }

// For returns the rule with the fewest points on cell c that is exact for
// all polynomials of total degree <= degree. It panics ("quadrature: ...")
// for a negative degree or an invalid cell.
func For(c cell.Type, degree int) Rule {
	if degree < 0 {
		panic(fmt.Sprintf("quadrature: negative degree %d requested on %v", degree, c))
	}
	switch c {
	case cell.Segment:
		return intervalRule(pointsFor(degree))
	case cell.Quadrilateral, cell.Hexahedron:
		return TensorGauss(c, pointsFor(degree))
	case cell.Triangle, cell.Tetrahedron:
		best := Collapsed(c, degree)
		table := DunavantTriangle
		if c == cell.Tetrahedron {
			table = KeastTetrahedron
		}
		for _, sr := range table {
			if sr.Degree >= degree {
				r := Symmetric(c, sr)
				if r.NumPoints() < best.NumPoints() {
					best = r
				}
				break // tables are sorted by degree and by size
			}
		}
		return best
	}
	panic(fmt.Sprintf("quadrature: no rules for cell %v", c))
}

func intervalRule(n int) Rule {
	x, w := GaussLegendre(n)
	for i := range x {
		x[i] = 0.5 * (x[i] + 1)
		w[i] *= 0.5
	}
	return Rule{Cell: cell.Segment, Degree: 2*n - 1, Points: x, Weights: w}
}

// TensorGauss returns the n^d-point tensor-product Gauss–Legendre rule on
// the interval ([0,1]), quadrilateral or hexahedron ([-1,1]^d), exact to
// degree 2n-1 in each variable. Points are ordered with the first
// coordinate varying fastest.
func TensorGauss(c cell.Type, n int) Rule {
	if c == cell.Segment {
		return intervalRule(n)
	}
	if c != cell.Quadrilateral && c != cell.Hexahedron {
		panic(fmt.Sprintf("quadrature: tensor rule requested on %v", c))
	}
	x, w := GaussLegendre(n)
	d := c.Dim()
	np := 1
	for range d {
		np *= n
	}
	r := Rule{Cell: c, Degree: 2*n - 1, Points: make([]float64, np*d), Weights: make([]float64, np)}
	for p := 0; p < np; p++ {
		wt, k := 1.0, p
		for j := 0; j < d; j++ {
			i := k % n
			k /= n
			r.Points[p*d+j] = x[i]
			wt *= w[i]
		}
		r.Weights[p] = wt
	}
	return r
}

// Symmetric expands a fully symmetric barycentric rule (DunavantTriangle,
// KeastTetrahedron) onto the reference triangle or tetrahedron: the
// Cartesian coordinates of barycentric (l0, l1, ..., ld) are (l1, ..., ld),
// and weights are multiplied by the reference measure.
func Symmetric(c cell.Type, sr SymmetricRule) Rule {
	d := c.Dim()
	if !c.IsSimplex() || d < 2 {
		panic(fmt.Sprintf("quadrature: symmetric simplex rule requested on %v", c))
	}
	meas := c.Measure()
	r := Rule{Cell: c, Degree: sr.Degree}
	for _, o := range sr.Orbits {
		if len(o.Bary) != d+1 {
			panic(fmt.Sprintf("quadrature: orbit with %d barycentric coordinates on %v", len(o.Bary), c))
		}
		for _, p := range distinctPermutations(o.Bary) {
			r.Points = append(r.Points, p[1:]...)
			r.Weights = append(r.Weights, o.Weight*meas)
		}
	}
	return r
}

// distinctPermutations lists the distinct permutations of b (exact float
// equality), in lexicographic order of index permutations.
func distinctPermutations(b []float64) [][]float64 {
	var out [][]float64
	idx := make([]int, len(b))
	used := make([]bool, len(b))
	cur := make([]float64, len(b))
	var rec func(k int)
	rec = func(k int) {
		if k == len(b) {
			for _, o := range out {
				if slices.Equal(o, cur) {
					return
				}
			}
			out = append(out, slices.Clone(cur))
			return
		}
		for i := range b {
			if !used[i] {
				used[i], idx[k], cur[k] = true, i, b[i]
				rec(k + 1)
				used[i] = false
			}
		}
	}
	rec(0)
	return out
}

// Collapsed returns a collapsed-coordinate product rule on the triangle or
// tetrahedron exact to the given degree (Duffy 1982; conical products after
// Stroud 1971), with Gauss–Legendre points in every direction and all
// weights positive. Triangle: x = u, y = v(1-u), Jacobian (1-u).
// Tetrahedron: x = u, y = v(1-u), z = w(1-u)(1-v), Jacobian (1-u)^2(1-v);
// u, v, w in [0,1]. A monomial of total degree <= degree becomes a
// polynomial of degree <= degree+dim-1 in u, degree+dim-2 in v, degree in
// w, so ceil((degree+dim)/2), ceil((degree+dim-1)/2) and
// ceil((degree+1)/2) points are used.
func Collapsed(c cell.Type, degree int) Rule {
	d := c.Dim()
	if !c.IsSimplex() || d < 2 {
		panic(fmt.Sprintf("quadrature: collapsed rule requested on %v", c))
	}
	if degree < 0 {
		panic(fmt.Sprintf("quadrature: negative degree %d", degree))
	}
	n := make([]int, d)
	exact := math.MaxInt
	for j := range d { // direction j carries degree + (d-1-j) in the collapsed map
		n[j] = pointsFor(degree + d - 1 - j)
		exact = min(exact, 2*n[j]-1-(d-1-j))
	}
	xs, ws := make([][]float64, d), make([][]float64, d)
	for j := range d {
		xs[j], ws[j] = GaussLegendre(n[j])
		for i := range xs[j] {
			xs[j][i] = 0.5 * (xs[j][i] + 1)
			ws[j][i] *= 0.5
		}
	}
	r := Rule{Cell: c, Degree: exact}
	if d == 2 {
		for a, u := range xs[0] {
			for b, v := range xs[1] {
				r.Points = append(r.Points, u, v*(1-u))
				r.Weights = append(r.Weights, ws[0][a]*ws[1][b]*(1-u))
			}
		}
		return r
	}
	for a, u := range xs[0] {
		for b, v := range xs[1] {
			for e, w := range xs[2] {
				r.Points = append(r.Points, u, v*(1-u), w*(1-u)*(1-v))
				r.Weights = append(r.Weights, ws[0][a]*ws[1][b]*ws[2][e]*(1-u)*(1-u)*(1-v))
			}
		}
	}
	return r
}
