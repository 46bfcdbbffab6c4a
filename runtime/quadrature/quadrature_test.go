package quadrature

import (
	"math"
	"testing"

	"github.com/formwright/formwright/runtime/cell"
	"gonum.org/v1/gonum/floats/scalar"
)

// Abramowitz & Stegun (1964), Table 25.4, values as in
// testdata/REFERENCES.md (repository root) (15 decimals). Tolerance 1e-15: the table is
// rounded to 15 decimals (error <= 5e-16) and gonum's nodes are accurate to
// a few ulps.
func TestGaussLegendreAbramowitzStegun(t *testing.T) {
	table := map[int][][2]float64{ // positive nodes with weights
		2: {{0.577350269189626, 1}},
		3: {{0, 0.888888888888889}, {0.774596669241483, 0.555555555555556}},
		4: {{0.339981043584856, 0.652145154862546}, {0.861136311594053, 0.347854845137454}},
		5: {{0, 0.568888888888889}, {0.538469310105683, 0.478628670499366}, {0.906179845938664, 0.236926885056189}},
	}
	for n, rows := range table {
		x, w := GaussLegendre(n)
		for _, row := range rows {
			found := false
			for i := range x {
				if math.Abs(x[i]-row[0]) < 1e-15 {
					found = true
					if math.Abs(w[i]-row[1]) > 1e-15 {
						t.Errorf("n=%d x=%v: weight %.17g, A&S %.15f", n, row[0], w[i], row[1])
					}
				}
				if math.Abs(x[i]+row[0]) < 1e-15 && math.Abs(w[i]-row[1]) > 1e-15 {
					t.Errorf("n=%d x=-%v: weight %.17g, A&S %.15f", n, row[0], w[i], row[1])
				}
			}
			if !found {
				t.Errorf("n=%d: node %v (A&S 25.4) not found in %v", n, row[0], x)
			}
		}
	}
	x, w := GaussLegendre(1) // one-point rule: midpoint, weight 2 (exact for degree 1)
	if x[0] != 0 || w[0] != 2 {
		t.Errorf("1-point rule %v %v", x, w)
	}
}

func fact(n int) float64 {
	f := 1.0
	for i := 2; i <= n; i++ {
		f *= float64(i)
	}
	return f
}

// exact integral over the reference cell of the shifted monomial
// prod (x_k - s)^e_k, s = 0 on simplices and the interval, s = -1 on
// [-1,1]^d. Closed forms: unit simplex ∫ x^a y^b = a!b!/(a+b+2)!,
// ∫ x^a y^b z^c = a!b!c!/(a+b+c+3)! (Dirichlet integral); [-1,1]:
// ∫ (1+x)^a = 2^{a+1}/(a+1); [0,1]: ∫ x^a = 1/(a+1).
func exact(c cell.Type, e []int) float64 {
	switch c {
	case cell.Segment:
		return 1 / float64(e[0]+1)
	case cell.Quadrilateral, cell.Hexahedron:
		v := 1.0
		for _, a := range e {
			v *= math.Pow(2, float64(a+1)) / float64(a+1)
		}
		return v
	}
	num, s := 1.0, 0
	for _, a := range e {
		num *= fact(a)
		s += a
	}
	return num / fact(s+len(e))
}

func apply(r Rule, e []int) float64 {
	shift := 0.0
	if r.Cell == cell.Quadrilateral || r.Cell == cell.Hexahedron {
		shift = -1
	}
	d := r.Cell.Dim()
	sum := 0.0
	for q := range r.Weights {
		v := r.Weights[q]
		for k, a := range e {
			v *= math.Pow(r.Points[q*d+k]-shift, float64(a))
		}
		sum += v
	}
	return sum
}

// exponents lists all exponent tuples of dimension d and total degree == deg.
func exponents(d, deg int) [][]int {
	if d == 1 {
		return [][]int{{deg}}
	}
	var out [][]int
	for a := 0; a <= deg; a++ {
		for _, rest := range exponents(d-1, deg-a) {
			out = append(out, append([]int{a}, rest...))
		}
	}
	return out
}

// exactTo checks every monomial of total degree <= r.Degree. Tolerance
// 1e-13 relative: the published tables carry 15 significant digits.
func exactTo(t *testing.T, name string, r Rule) {
	t.Helper()
	for deg := 0; deg <= r.Degree; deg++ {
		for _, e := range exponents(r.Cell.Dim(), deg) {
			got, want := apply(r, e), exact(r.Cell, e)
			if !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-13) {
				t.Errorf("%s (degree %d): monomial %v: %.16g, exact %.16g", name, r.Degree, e, got, want)
			}
		}
	}
}

// notExactAbove checks that some monomial of degree r.Degree+1 is not
// integrated exactly (error far above rounding), proving the degree claim
// is sharp.
func notExactAbove(t *testing.T, name string, r Rule) {
	t.Helper()
	for _, e := range exponents(r.Cell.Dim(), r.Degree+1) {
		got, want := apply(r, e), exact(r.Cell, e)
		if math.Abs(got-want) > 1e-10*math.Abs(want) {
			return
		}
	}
	t.Errorf("%s: exact at degree %d as well; claimed degree %d is not sharp", name, r.Degree+1, r.Degree)
}

func TestPublishedSimplexRules(t *testing.T) {
	for _, sr := range DunavantTriangle {
		r := Symmetric(cell.Triangle, sr)
		exactTo(t, "Dunavant", r)
		notExactAbove(t, "Dunavant", r)
		sum := 0.0
		for _, w := range r.Weights {
			sum += w
			// Dunavant's rules here have positive weights except the
			// centroid weight -9/16 of degree 3.
			if w <= 0 && !(sr.Degree == 3 && w == -9.0/16*0.5) {
				t.Errorf("Dunavant degree %d: weight %v not positive", sr.Degree, w)
			}
		}
		if math.Abs(sum-0.5) > 1e-14 {
			t.Errorf("Dunavant degree %d: weights sum %v, want 1/2", sr.Degree, sum)
		}
		// Published point counts (Dunavant 1985, Table I).
		wantN := map[int]int{1: 1, 2: 3, 3: 4, 4: 6, 5: 7, 6: 12, 8: 16}[sr.Degree]
		if r.NumPoints() != wantN {
			t.Errorf("Dunavant degree %d: %d points, published %d", sr.Degree, r.NumPoints(), wantN)
		}
	}
	for _, sr := range KeastTetrahedron {
		r := Symmetric(cell.Tetrahedron, sr)
		exactTo(t, "Keast", r)
		notExactAbove(t, "Keast", r)
		// Keast's degree-3 and degree-4 rules have a negative weight at the
		// centroid only; every other weight is positive.
		for q, w := range r.Weights {
			p := r.Point(q)
			centroid := p[0] == 0.25 && p[1] == 0.25 && p[2] == 0.25
			if w <= 0 && !(centroid && sr.Degree >= 3) {
				t.Errorf("Keast degree %d: weight %v at %v not positive", sr.Degree, w, p)
			}
			if centroid && sr.Degree >= 3 && w >= 0 {
				t.Errorf("Keast degree %d: centroid weight %v, published negative", sr.Degree, w)
			}
		}
		wantN := map[int]int{1: 1, 2: 4, 3: 5, 4: 11}[sr.Degree]
		if r.NumPoints() != wantN {
			t.Errorf("Keast degree %d: %d points, published %d", sr.Degree, r.NumPoints(), wantN)
		}
	}
}

func TestTensorAndIntervalRules(t *testing.T) {
	for _, c := range []cell.Type{cell.Segment, cell.Quadrilateral, cell.Hexahedron} {
		for n := 1; n <= 6; n++ {
			r := TensorGauss(c, n)
			if r.Degree != 2*n-1 {
				t.Errorf("%v n=%d: degree %d", c, n, r.Degree)
			}
			exactTo(t, c.String(), r)
			notExactAbove(t, c.String(), r)
			// Gauss–Legendre weights are positive (A&S 25.4).
			for _, w := range r.Weights {
				if w <= 0 {
					t.Errorf("%v: non-positive weight", c)
				}
			}
		}
	}
}

func TestCollapsedRules(t *testing.T) {
	for _, c := range []cell.Type{cell.Triangle, cell.Tetrahedron} {
		for d := 0; d <= 12; d++ {
			r := Collapsed(c, d)
			if r.Degree < d {
				t.Errorf("%v collapsed(%d): degree %d", c, d, r.Degree)
			}
			exactTo(t, "collapsed "+c.String(), r)
			for _, w := range r.Weights {
				if w <= 0 {
					t.Errorf("%v collapsed(%d): weight %v", c, d, w)
				}
			}
		}
	}
}

func TestFor(t *testing.T) {
	for _, c := range cell.All {
		for d := 0; d <= 14; d++ {
			r := For(c, d)
			if r.Degree < d || r.Cell != c {
				t.Fatalf("For(%v,%d): got %v degree %d", c, d, r.Cell, r.Degree)
			}
			exactTo(t, "For", r)
		}
	}
	// Cheapest choices (point counts from Dunavant 1985 Table I and Keast 1986).
	for _, tc := range []struct {
		c    cell.Type
		d, n int
	}{
		{cell.Triangle, 2, 3}, {cell.Triangle, 5, 7}, {cell.Triangle, 6, 12}, {cell.Triangle, 7, 16},
		{cell.Tetrahedron, 3, 5}, {cell.Tetrahedron, 4, 11}, {cell.Quadrilateral, 3, 4}, {cell.Segment, 0, 1},
	} {
		if got := For(tc.c, tc.d).NumPoints(); got != tc.n {
			t.Errorf("For(%v,%d): %d points, want %d", tc.c, tc.d, got, tc.n)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("For(triangle,-1) did not panic")
		}
	}()
	For(cell.Triangle, -1)
}
