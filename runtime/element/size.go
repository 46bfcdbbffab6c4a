package element

import (
	"fmt"
	"math"

	"github.com/formwright/formwright/runtime/cell"
)

// SizeKind names a definition of the element size h.
type SizeKind uint8

const (
	// SizeLongestEdge is the longest edge; on simplices the cell diameter.
	SizeLongestEdge SizeKind = iota
	// SizeShortestEdge is the shortest edge.
	SizeShortestEdge
	// SizeEqualVolume is the diameter of the d-ball with the cell's measure.
	SizeEqualVolume
	// SizeStreamline is Tezduyar's directional length along dir.
	SizeStreamline
	// SizeMetric is the metric-tensor length along dir.
	SizeMetric
)

var sizeNames = [...]string{
	SizeLongestEdge:  "longest-edge",
	SizeShortestEdge: "shortest-edge",
	SizeEqualVolume:  "equal-volume",
	SizeStreamline:   "streamline",
	SizeMetric:       "metric",
}

func (k SizeKind) String() string {
	if int(k) < len(sizeNames) {
		return sizeNames[k]
	}
	return fmt.Sprintf("SizeKind(%d)", uint8(k))
}

// NeedsDirection reports whether the size depends on a direction.
func (k SizeKind) NeedsDirection() bool { return k == SizeStreamline || k == SizeMetric }

// ParseSizeKind returns the SizeKind whose String is name.
func ParseSizeKind(name string) (SizeKind, error) {
	for k, s := range sizeNames {
		if s == name {
			return SizeKind(k), nil
		}
	}
	return 0, fmt.Errorf("element: unknown element size %q (want longest-edge, shortest-edge, equal-volume, streamline or metric)", name)
}

var linear [cell.Hexahedron + 1]*Element

func init() {
	for _, c := range cell.All {
		linear[c] = MustLagrange(c, 1)
	}
}

// Size returns the element size of the given kind for the cell c with
// physical vertex coordinates vertexCoords (NumVertices*Dim, in cell vertex
// order). dir is used only by the directional kinds (len Dim); it may be nil
// otherwise. It does not allocate.
func Size(kind SizeKind, c cell.Type, vertexCoords, dir []float64) float64 {
	switch kind {
	case SizeLongestEdge:
		return LongestEdge(c, vertexCoords)
	case SizeShortestEdge:
		return ShortestEdge(c, vertexCoords)
	case SizeEqualVolume:
		return EqualVolumeDiameter(c, vertexCoords)
	case SizeStreamline:
		return StreamlineLength(c, vertexCoords, dir)
	case SizeMetric:
		return MetricLength(c, vertexCoords, dir)
	}
	panic(fmt.Sprintf("element: invalid SizeKind %d", uint8(kind)))
}

func edgeLengths(c cell.Type, v []float64) (lo, hi float64) {
	d := c.Dim()
	checkVerts(c, v)
	lo, hi = math.Inf(1), 0
	for _, e := range c.Edges() {
		s := 0.0
		for k := 0; k < d; k++ {
			t := v[e[0]*d+k] - v[e[1]*d+k]
			s += t * t
		}
		l := math.Sqrt(s)
		lo, hi = min(lo, l), max(hi, l)
	}
	return lo, hi
}

func checkVerts(c cell.Type, v []float64) {
	if len(v) < c.NumVertices()*c.Dim() {
		panic(fmt.Sprintf("element: %d vertex coordinates for a %v", len(v), c))
	}
}

// LongestEdge is the length of the longest edge: on simplices the diameter
// of the cell; on quadrilaterals and hexahedra not the diameter (a diagonal
// is longer). Common practice, no source.
func LongestEdge(c cell.Type, v []float64) float64 { _, hi := edgeLengths(c, v); return hi }

// ShortestEdge is the length of the shortest edge. Common practice, no source.
func ShortestEdge(c cell.Type, v []float64) float64 { lo, _ := edgeLengths(c, v); return lo }

// EqualVolumeDiameter is the diameter of the d-ball whose measure equals the
// cell's: |K| in 1D, 2√(|K|/π) in 2D, 2(3|K|/(4π))^{1/3} in 3D. Common
// practice, no source.
func EqualVolumeDiameter(c cell.Type, v []float64) float64 {
	m := math.Abs(Measure(c, v))
	switch c.Dim() {
	case 1:
		return m
	case 2:
		return 2 * math.Sqrt(m/math.Pi)
	}
	return 2 * math.Cbrt(3*m/(4*math.Pi))
}

var gauss2 = [2]float64{-1 / math.Sqrt(3), 1 / math.Sqrt(3)}

// Measure is the signed length, area or volume of the cell with vertex
// coordinates v under its P1/Q1 map: negative for inverted cells. For
// quadrilaterals and hexahedra it integrates det J with the 2^d-point Gauss
// rule, exact since det J of a bilinear (trilinear) map has degree <= 1
// (<= 2) in each variable.
func Measure(c cell.Type, v []float64) float64 {
	checkVerts(c, v)
	var xi [3]float64
	if c.IsSimplex() {
		det, _ := linearJacobian(c, v, xi[:c.Dim()], nil)
		return det * c.Measure()
	}
	d := c.Dim()
	sum := 0.0
	np := 1 << d
	for p := 0; p < np; p++ {
		for k := 0; k < d; k++ {
			xi[k] = gauss2[(p>>k)&1]
		}
		det, _ := linearJacobian(c, v, xi[:d], nil)
		sum += det // weights are 1
	}
	return sum
}

// linearJacobian computes det J at xi for the P1/Q1 map of vertex coords v,
// and if jinv != nil (len >= Dim*Dim) the inverse Jacobian ∂ξ/∂x.
func linearJacobian(c cell.Type, v, xi, jinv []float64) (float64, []float64) {
	e := linear[c]
	d := e.dim
	var dphi [24]float64
	var J, Ji [9]float64
	e.EvalGrad(xi, dphi[:e.n*d])
	for n := 0; n < e.n; n++ {
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				J[i*d+j] += v[n*d+i] * dphi[n*d+j]
			}
		}
	}
	det := Invert(d, J[:d*d], Ji[:d*d])
	if jinv != nil {
		copy(jinv, Ji[:d*d])
	}
	return det, jinv
}

func norm(a []float64) float64 {
	s := 0.0
	for _, x := range a {
		s += x * x
	}
	return math.Sqrt(s)
}

func checkDir(c cell.Type, dir []float64) {
	if len(dir) < c.Dim() {
		panic(fmt.Sprintf("element: direction of length %d for a %v", len(dir), c))
	}
}

// StreamlineLength is the directional element length
//
//	h = 2|a| / Σ_i |a·∇N_i|
//
// over the P1/Q1 basis functions N_i of the cell, evaluated at the
// reference centroid (Tezduyar & Park 1986, CMAME 59, 307–325; Tezduyar
// 1992, Adv. Appl. Mech. 28). On a segment it is the length; on a right
// triangle with legs h and a along a leg it is h. If a = 0 it falls back to
// EqualVolumeDiameter (a documented choice: the length is then undefined).
func StreamlineLength(c cell.Type, v, dir []float64) float64 {
	checkVerts(c, v)
	checkDir(c, dir)
	d := c.Dim()
	an := norm(dir[:d])
	if an == 0 {
		return EqualVolumeDiameter(c, v)
	}
	e := linear[c]
	var xi [3]float64
	var Ji [9]float64
	c.Centroid(xi[:])
	linearJacobian(c, v, xi[:d], Ji[:])
	var dphi [24]float64
	e.EvalGrad(xi[:d], dphi[:e.n*d])
	s := 0.0
	for n := 0; n < e.n; n++ {
		dot := 0.0
		for i := 0; i < d; i++ {
			gi := 0.0 // ∂N/∂x_i = Σ_k ∂ξ_k/∂x_i ∂N/∂ξ_k
			for k := 0; k < d; k++ {
				gi += Ji[k*d+i] * dphi[n*d+k]
			}
			dot += dir[i] * gi
		}
		s += math.Abs(dot)
	}
	return 2 * an / s
}

// MetricLength is the element length along a from the metric tensor G of
// the P1/Q1 map at the reference centroid (Bazilevs et al. 2007, CMAME 197,
// where u·G u replaces (2|u|/h)²):
//
//	h = L_ref |a| / sqrt(a·G a),
//
// with L_ref the reference edge length: 2 on [-1,1]^d cells (so the
// formula is the 2|a|/sqrt(a·Ga) of the literature there), 1 on the unit
// simplex. With that scaling a square or cube of side h and a right
// simplex with legs h both give h along an axis. If a = 0 it falls back to
// EqualVolumeDiameter.
func MetricLength(c cell.Type, v, dir []float64) float64 {
	checkVerts(c, v)
	checkDir(c, dir)
	d := c.Dim()
	an := norm(dir[:d])
	if an == 0 {
		return EqualVolumeDiameter(c, v)
	}
	var xi [3]float64
	var Ji [9]float64
	c.Centroid(xi[:])
	linearJacobian(c, v, xi[:d], Ji[:])
	// a·G a = |J^{-1} a|²
	s := 0.0
	for k := 0; k < d; k++ {
		t := 0.0
		for i := 0; i < d; i++ {
			t += Ji[k*d+i] * dir[i]
		}
		s += t * t
	}
	lref := 1.0
	if !c.IsSimplex() {
		lref = 2
	}
	return lref * an / math.Sqrt(s)
}

// Diameter is the largest distance between two vertices of a cell of
// straight edges (v: NumVertices*Dim): on simplices the longest edge, on
// quadrilaterals and hexahedra a diagonal. No allocation.
func Diameter(c cell.Type, v []float64) float64 {
	d, nv := c.Dim(), c.NumVertices()
	if len(v) < d*nv {
		panic(fmt.Sprintf("element: %d vertex coordinates for a %v", len(v), c))
	}
	h2 := 0.0
	for a := 0; a < nv; a++ {
		for b := a + 1; b < nv; b++ {
			s := 0.0
			for k := 0; k < d; k++ {
				t := v[a*d+k] - v[b*d+k]
				s += t * t
			}
			h2 = math.Max(h2, s)
		}
	}
	return math.Sqrt(h2)
}
