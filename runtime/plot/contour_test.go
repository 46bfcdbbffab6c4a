package plot

import (
	"errors"
	"math"
	"testing"
)

func segLength(segs []Segment) float64 {
	s := 0.0
	for _, g := range segs {
		s += math.Hypot(g.X1-g.X0, g.Y1-g.Y0)
	}
	return s
}

// TestContourLinearField: for u = x + 2y + 0.1 (linear, so the P1 field
// is exact) every endpoint lies on the level line up to rounding, and the
// pieces add up to the length of the line x + 2y = L − 0.1 clipped to the
// unit square, computed by hand: it runs from (L', 0) to (0, L'/2) for
// L' ≤ 1 (length L'√5/2) and from (1, (L'−1)/2) to (0, L'/2) for
// 1 ≤ L' ≤ 2 (length √5/2). Tolerance 1e-12: rounding only.
func TestContourLinearField(t *testing.T) {
	tr := squareMesh(9, 7, 0, 1, 0, 1, 0.22)
	f := func(x, y float64) float64 { return x + 2*y + 0.1 }
	u := nodal(tr, f)
	for _, lv := range []float64{0.35, 0.6, 1.1, 1.6, 2.05} {
		segs, err := ContourSegments(tr, u, lv)
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range segs {
			for _, p := range [][2]float64{{s.X0, s.Y0}, {s.X1, s.Y1}} {
				if d := math.Abs(f(p[0], p[1]) - lv); d > 1e-14*4 {
					t.Errorf("level %g: endpoint (%g, %g) has u − level = %g", lv, p[0], p[1], d)
				}
			}
		}
		lp := lv - 0.1
		want := math.Sqrt(5) / 2
		if lp < 1 {
			want = lp * math.Sqrt(5) / 2
		}
		if lp > 2 {
			want = (3 - lp) * math.Sqrt(5) / 2 // from (1, (L'−1)/2) to (L'−2, 1)
		}
		if got := segLength(segs); math.Abs(got-want) > 1e-12 {
			t.Errorf("level %g: length %.15g, want %.15g", lv, got, want)
		}
	}
}

// TestContourEdgeOnLevel: u = x on an unjittered 6×6 mesh has nodes on
// x = 0.5, so the level runs along mesh edges. Each such edge must come
// out exactly once: total length 1 (the line x = 0.5 across the unit
// square), every point with x = 0.5 exactly.
func TestContourEdgeOnLevel(t *testing.T) {
	tr := squareMesh(6, 6, 0, 1, 0, 1, 0)
	u := nodal(tr, func(x, _ float64) float64 { return x })
	segs, err := ContourSegments(tr, u, 0.5)
	if err != nil {
		t.Fatal(err)
	}
	if got := segLength(segs); math.Abs(got-1) > 1e-12 {
		t.Errorf("length %.15g, want 1 (edges on the level counted once)", got)
	}
	for _, s := range segs {
		if s.X0 != 0.5 || s.X1 != 0.5 {
			t.Errorf("segment %+v off x = 0.5", s)
		}
	}
	// A level through a single corner node only (u = x + y at level 0,
	// node (0,0)) gives no segment of zero length.
	v := nodal(tr, func(x, y float64) float64 { return x + y })
	segs, _ = ContourSegments(tr, v, 0)
	if len(segs) != 0 {
		t.Errorf("level through one node: %d segments, want 0", len(segs))
	}
}

// TestContourCircle: u = x² + y², level 0.25 is the quarter circle of
// radius ½ in the unit square, length π/4. The P1 interpolant is within
// h²/4 of u (interpolation bound |u − Iu| ≤ h²/8 · max|D²u| with
// |D²u| = 2; Ciarlet 1978), and |∇u| = 1 on the circle, so endpoints are
// within h²/4 of it; with chord shortening the length error is O(h²) too,
// and it must drop by ~4 when h halves (we require > 3). The endpoints of
// neighbouring triangles are bit-identical, so the polyline is connected:
// exactly two endpoints (on the axes) occur once, all others twice.
func TestContourCircle(t *testing.T) {
	f := func(x, y float64) float64 { return x*x + y*y }
	var errs []float64
	for _, n := range []int{20, 40} {
		tr := squareMesh(n, n, 0, 1, 0, 1, 0.2)
		segs, err := ContourSegments(tr, nodal(tr, f), 0.25)
		if err != nil {
			t.Fatal(err)
		}
		h := math.Sqrt2 * 1.4 / float64(n) // longest edge of a jittered cell, bounded
		count := map[[2]float64]int{}
		for _, s := range segs {
			count[[2]float64{s.X0, s.Y0}]++
			count[[2]float64{s.X1, s.Y1}]++
			for _, p := range [][2]float64{{s.X0, s.Y0}, {s.X1, s.Y1}} {
				if d := math.Abs(math.Hypot(p[0], p[1]) - 0.5); d > h*h/4 {
					t.Errorf("n = %d: endpoint (%g, %g) is %g off the circle, bound %g", n, p[0], p[1], d, h*h/4)
				}
			}
		}
		ends := 0
		for p, c := range count {
			switch c {
			case 1:
				ends++
				if p[0] != 0 && p[1] != 0 {
					t.Errorf("n = %d: loose end at %v, not on an axis", n, p)
				}
			case 2:
			default:
				t.Errorf("n = %d: point %v used %d times", n, p, c)
			}
		}
		if ends != 2 {
			t.Errorf("n = %d: %d loose ends, want 2", n, ends)
		}
		errs = append(errs, math.Abs(segLength(segs)-math.Pi/4))
	}
	if errs[0] > 2e-3 || errs[0]/errs[1] < 3 {
		t.Errorf("length errors %g (n=20), %g (n=40): want < 2e-3 and ratio > 3 (O(h²))", errs[0], errs[1])
	}
}

func TestContourRejects(t *testing.T) {
	tr := squareMesh(2, 2, 0, 1, 0, 1, 0)
	u := nodal(tr, func(x, y float64) float64 { return x })
	var ie *InputError
	if _, err := ContourSegments(tr, u[:3], 0.5); !errors.As(err, &ie) {
		t.Errorf("short values: %v", err)
	}
	if _, err := ContourSegments(tr, u, math.NaN()); !errors.As(err, &ie) {
		t.Errorf("NaN level: %v", err)
	}
}

func TestEvenLevels(t *testing.T) {
	got := EvenLevels(0, 1, 3)
	for i, w := range []float64{0.25, 0.5, 0.75} {
		if got[i] != w {
			t.Errorf("EvenLevels(0,1,3)[%d] = %g, want %g", i, got[i], w)
		}
	}
}
