package gogen

import (
	"go/constant"
	"go/token"
	"go/types"
	"math"
	"strconv"
	"testing"
)

// Printed constants read back as exactly the value: each is evaluated by
// go/types as the Go compiler evaluates an untyped constant expression
// (exact, then rounded once to float64; The Go Programming Language
// Specification, "Constant expressions"), and compared bit for bit.
func TestLiteral(t *testing.T) {
	third := 1.0 / 3
	cases := []struct {
		v    float64
		want string
	}{
		{1.0 / 6, "1.0 / 6"},
		{2.0 / 3, "2.0 / 3"},
		{-1.0 / 12, "-1.0 / 12"},
		{1.0 / 2520, "1.0 / 2520"},     // a P2 tetrahedron mass-matrix entry
		{1.0 / 999983, "1.0 / 999983"}, // the largest prime denominator allowed
		{1.0 / 1000003, "9.99997000009e-07"},
		{math.Nextafter(1.0/6, 1), "0.16666666666666669"}, // not the double nearest 1/6
		{third * third, "1.0 / 9"},                        // which happens to be the double nearest 1/9
		{0.5, "0.5"},
		{0.01, "0.01"},
		{-0.25, "-0.25"},
		{3, "3.0"},
		{0, "0.0"},
		{math.Sqrt(5), "2.23606797749979"},
		{1e-20, "1e-20"},
	}
	for _, c := range cases {
		e := goNumber(c.v, false)
		got := types.ExprString(e)
		if got != c.want {
			t.Errorf("%v: printed %s, want %s", c.v, got, c.want)
		}
		tv, err := types.Eval(token.NewFileSet(), nil, token.NoPos, "float64("+got+")")
		if err != nil {
			t.Errorf("%s: %v", got, err)
			continue
		}
		f, _ := constant.Float64Val(constant.ToFloat(tv.Value))
		if math.Float64bits(f) != math.Float64bits(c.v) && !(c.v == 0 && f == 0) {
			t.Errorf("%s reads back as %v, want %v", got, f, c.v)
		}
	}
}

// snapRational rounds a computed reference integral to the double nearest
// its rational value when it is within 16 ulps of a rational with a
// denominator up to 10⁴, and leaves other values alone.
func TestSnapRational(t *testing.T) {
	ulps := func(v float64, n int) float64 {
		for range n {
			v = math.Nextafter(v, math.Inf(1))
		}
		return v
	}
	for _, c := range []struct{ v, want float64 }{
		{ulps(1.0/6, 1), 1.0 / 6},
		{-ulps(1.0/6, 2), -1.0 / 6},
		{ulps(1.0/2520, 12), 1.0 / 2520},
		{ulps(1.0/2520, 40), ulps(1.0/2520, 40)},
		{math.Pi, math.Pi},
		{math.Sqrt2 / 4, math.Sqrt2 / 4},
		{0.5, 0.5},
		{1.0 / 10007, 1.0 / 10007}, // prime denominator above the bound: kept as computed
	} {
		if got := snapRational(c.v); got != c.want {
			t.Errorf("snapRational(%s) = %s, want %s", strconv.FormatFloat(c.v, 'g', -1, 64),
				strconv.FormatFloat(got, 'g', -1, 64), strconv.FormatFloat(c.want, 'g', -1, 64))
		}
	}
}
