package plot

import (
	"fmt"
	"math"
)

// Triangulation is a 2D mesh of straight-sided triangles: node i is at
// (X[i], Y[i]) and each entry of Triangles holds three node indices. A
// quadrilateral mesh can be given through SplitQuads.
type Triangulation struct {
	X, Y      []float64
	Triangles [][3]int
}

// SplitQuads splits each quadrilateral, its four nodes given in order
// round the boundary, into the triangles (0,1,2) and (0,2,3). For a
// bilinear field this draws the piecewise-linear interpolant on that
// split, which agrees with the bilinear one at the nodes and along the
// edges.
func SplitQuads(quads [][4]int) [][3]int {
	t := make([][3]int, 0, 2*len(quads))
	for _, q := range quads {
		t = append(t, [3]int{q[0], q[1], q[2]}, [3]int{q[0], q[2], q[3]})
	}
	return t
}

// validate checks the triangulation and that values holds one finite
// value per node. fn names the caller in the error.
func (tr Triangulation) validate(fn string, values []float64) error {
	if len(tr.X) != len(tr.Y) {
		return &InputError{Func: fn, Item: "triangulation", Msg: fmt.Sprintf("len(X) = %d but len(Y) = %d", len(tr.X), len(tr.Y))}
	}
	if len(tr.Triangles) == 0 {
		return &InputError{Func: fn, Item: "triangulation", Msg: "no triangles"}
	}
	if err := checkFinite(fn, "triangulation", "X", tr.X); err != nil {
		return err
	}
	if err := checkFinite(fn, "triangulation", "Y", tr.Y); err != nil {
		return err
	}
	n := len(tr.X)
	for i, t := range tr.Triangles {
		for _, v := range t {
			if v < 0 || v >= n {
				return &InputError{Func: fn, Item: "triangulation", Msg: fmt.Sprintf("triangle %d has node %d, want 0 ≤ node < %d", i, v, n)}
			}
		}
	}
	if len(values) != n {
		return &InputError{Func: fn, Item: "values", Msg: fmt.Sprintf("%d values for %d nodes", len(values), n)}
	}
	return checkFinite(fn, "", "values", values)
}

// Segment is one straight piece of a contour line, from (X0, Y0) to
// (X1, Y1).
type Segment struct {
	X0, Y0, X1, Y1 float64
}

// ContourSegments returns the level set {u = level} of the continuous
// piecewise-linear field u that takes values[i] at node i, as one segment
// per triangle that it crosses ("marching triangles": the simplex case of
// the marching-cubes idea of Lorensen & Cline 1987, SIGGRAPH, Computer
// Graphics 21(4), where on a triangle the linear interpolant makes the
// level set exactly one straight segment and no ambiguous case arises).
//
// A node counts as above the level when its value is ≥ level. In each
// triangle with nodes on both sides, the two crossed edges are cut at
// the linearly interpolated point, computed from the end below the level
// so that shared edges give bit-identical points in both neighbours.
// Segments of zero length (the level passes through a single node) are
// dropped. An edge lying exactly on the level is returned by the
// triangle on its lower side (so once on an interior edge between a
// lower and a higher triangle). Degenerate triangles are handled like any
// other. For a field that is linear on the whole mesh the endpoints lie
// on the exact level set up to rounding.
func ContourSegments(tr Triangulation, values []float64, level float64) ([]Segment, error) {
	if err := tr.validate("ContourSegments", values); err != nil {
		return nil, err
	}
	if math.IsNaN(level) || math.IsInf(level, 0) {
		return nil, &InputError{Func: "ContourSegments", Item: "level", Msg: fmt.Sprint(level)}
	}
	return appendContour(nil, tr, values, level), nil
}

// appendContour appends the segments of one level to dst; inputs are
// valid.
func appendContour(dst []Segment, tr Triangulation, u []float64, level float64) []Segment {
	for _, t := range tr.Triangles {
		// Count the nodes below; 0 or 3 means no crossing.
		nb := 0
		for _, v := range t {
			if u[v] < level {
				nb++
			}
		}
		if nb == 0 || nb == 3 {
			continue
		}
		// The lone node is the one on the minority side; the segment cuts
		// its two edges.
		lone := -1
		for k, v := range t {
			if (u[v] < level) == (nb == 1) {
				lone = k
				break
			}
		}
		a := t[lone]
		b := t[(lone+1)%3]
		c := t[(lone+2)%3]
		x0, y0 := cut(tr, u, a, b, level)
		x1, y1 := cut(tr, u, a, c, level)
		if x0 == x1 && y0 == y1 {
			continue
		}
		dst = append(dst, Segment{x0, y0, x1, y1})
	}
	return dst
}

// cut returns the point where the level crosses edge (p, q), whose ends
// are on opposite sides; the interpolation runs from the lower end.
func cut(tr Triangulation, u []float64, p, q int, level float64) (float64, float64) {
	if u[p] > u[q] {
		p, q = q, p
	}
	s := (level - u[p]) / (u[q] - u[p])
	return tr.X[p] + s*(tr.X[q]-tr.X[p]), tr.Y[p] + s*(tr.Y[q]-tr.Y[p])
}

// EvenLevels returns n levels spaced evenly strictly inside (lo, hi):
// lo + i (hi − lo)/(n + 1) for i = 1 … n.
func EvenLevels(lo, hi float64, n int) []float64 {
	l := make([]float64, n)
	for i := range l {
		l[i] = lo + float64(i+1)*(hi-lo)/float64(n+1)
	}
	return l
}
