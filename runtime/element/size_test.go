package element

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/quadrature"
)

// Hand-derived closed forms:
//   - square of side h (Q1): edges h; equal-volume diameter 2h/√π;
//     streamline along x: ∇N at the centre is (±1/(2h), ±1/(2h)), so
//     Σ|a·∇N| = 2/h and h_s = h; along the diagonal two nodes give
//     1/(√2 h) and two give 0, so h_s = √2 h (the diagonal, as
//     Tezduyar & Park 1986 intend: the length of the cell along a);
//     metric: G = (4/h²)I on [-1,1]², so 2|a|/sqrt(a·Ga) = h in any direction.
//   - right triangle with legs hx (along x), hy: edges hx, hy, √(hx²+hy²);
//     streamline along x: ∇λ = (-1/hx,-1/hy), (1/hx,0), (0,1/hy) ⇒ h_s = hx;
//     metric along x: G = diag(1/hx², 1/hy²) on the unit simplex ⇒ hx.
//   - segment of length L: all sizes L.
//   - cube of side h (Q1) and the Kuhn tetrahedron: volume h³, h³/6.
func TestSizes(t *testing.T) {
	h := 0.2
	sq := []float64{0, 0, h, 0, h, h, 0, h}
	x := []float64{1, 0}
	diag := []float64{1, 1}
	hx, hy := 0.3, 0.1
	tri := []float64{1, 1, 1 + hx, 1, 1, 1 + hy}
	seg := []float64{0.25, 0.75}
	cube := []float64{0, 0, 0, h, 0, 0, h, h, 0, 0, h, 0, 0, 0, h, h, 0, h, h, h, h, 0, h, h}
	for _, tc := range []struct {
		name string
		kind SizeKind
		c    cell.Type
		v    []float64
		dir  []float64
		want float64
	}{
		{"square longest", SizeLongestEdge, cell.Quadrilateral, sq, nil, h},
		{"square shortest", SizeShortestEdge, cell.Quadrilateral, sq, nil, h},
		{"square ball", SizeEqualVolume, cell.Quadrilateral, sq, nil, 2 * h / math.Sqrt(math.Pi)},
		{"square streamline x", SizeStreamline, cell.Quadrilateral, sq, x, h},
		{"square streamline diagonal", SizeStreamline, cell.Quadrilateral, sq, diag, math.Sqrt2 * h},
		{"square metric diagonal", SizeMetric, cell.Quadrilateral, sq, diag, h},
		{"triangle longest", SizeLongestEdge, cell.Triangle, tri, nil, math.Hypot(hx, hy)},
		{"triangle shortest", SizeShortestEdge, cell.Triangle, tri, nil, hy},
		{"triangle ball", SizeEqualVolume, cell.Triangle, tri, nil, 2 * math.Sqrt(hx*hy/2/math.Pi)},
		{"triangle streamline x", SizeStreamline, cell.Triangle, tri, x, hx},
		{"triangle metric x", SizeMetric, cell.Triangle, tri, x, hx},
		{"triangle metric y", SizeMetric, cell.Triangle, tri, []float64{0, -2}, hy},
		{"segment streamline", SizeStreamline, cell.Segment, seg, []float64{-3}, 0.5},
		{"segment metric", SizeMetric, cell.Segment, seg, []float64{2}, 0.5},
		{"segment ball", SizeEqualVolume, cell.Segment, seg, nil, 0.5},
		{"cube ball", SizeEqualVolume, cell.Hexahedron, cube, nil, 2 * math.Cbrt(3*h*h*h/(4*math.Pi))},
		{"cube streamline x", SizeStreamline, cell.Hexahedron, cube, []float64{0, 0, 5}, h},
		{"cube metric", SizeMetric, cell.Hexahedron, cube, []float64{1, 2, 3}, h},
		{"zero direction falls back", SizeStreamline, cell.Quadrilateral, sq, []float64{0, 0}, 2 * h / math.Sqrt(math.Pi)},
	} {
		if got := Size(tc.kind, tc.c, tc.v, tc.dir); math.Abs(got-tc.want) > 1e-14 {
			t.Errorf("%s: %v = %.16g, want %.16g", tc.name, tc.kind, got, tc.want)
		}
	}
	for k := SizeLongestEdge; k <= SizeMetric; k++ {
		got, err := ParseSizeKind(k.String())
		if err != nil || got != k {
			t.Errorf("ParseSizeKind(%q) = %v, %v", k.String(), got, err)
		}
	}
	if _, err := ParseSizeKind("diameter"); err == nil {
		t.Error("ParseSizeKind(diameter): no error")
	}
	dir := []float64{0.3, 0.4, 0.5}
	if a := testing.AllocsPerRun(50, func() {
		sizeSink = Size(SizeStreamline, cell.Hexahedron, cube, dir) + Size(SizeEqualVolume, cell.Hexahedron, cube, nil)
	}); a != 0 {
		t.Errorf("Size: %v allocations", a)
	}
}

// Measure of a tetrahedron equals |det|/6 and changes sign when inverted.
func TestMeasureSign(t *testing.T) {
	v := []float64{0, 0, 0, 2, 0, 0, 0, 3, 0, 0, 0, 4}
	if m := Measure(cell.Tetrahedron, v); math.Abs(m-4) > 1e-14 {
		t.Errorf("tet volume %v want 4", m)
	}
	inv := []float64{0, 0, 0, 0, 3, 0, 2, 0, 0, 0, 0, 4}
	if m := Measure(cell.Tetrahedron, inv); math.Abs(m+4) > 1e-14 {
		t.Errorf("inverted tet volume %v want -4", m)
	}
}

var sizeSink float64

func benchmarkMap(b *testing.B, c cell.Type, degree int) {
	e := MustLagrange(c, degree)
	tab := e.Sample(quadrature.For(c, 2*degree))
	pg := tab.NewPointGeometry()
	coords := e.RefNodes()
	for i := range coords {
		coords[i] *= 1.5 // a scaled cell keeps det J > 0 on every reference
	}
	b.ResetTimer()
	for b.Loop() {
		for q := 0; q < tab.NumPoints(); q++ {
			if err := tab.Map(coords, q, pg); err != nil {
				b.Fatal(err)
			}
		}
		sizeSink += pg.Weight
	}
}

func BenchmarkMapTriangleP1(b *testing.B)    { benchmarkMap(b, cell.Triangle, 1) }
func BenchmarkMapTriangleP2(b *testing.B)    { benchmarkMap(b, cell.Triangle, 2) }
func BenchmarkMapTetrahedronP2(b *testing.B) { benchmarkMap(b, cell.Tetrahedron, 2) }
func BenchmarkMapHexahedronQ2(b *testing.B)  { benchmarkMap(b, cell.Hexahedron, 2) }
