package plot

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// gauss5 is the 5-point Gauss–Legendre rule on [−1, 1] (Abramowitz &
// Stegun 1964, Table 25.4, as in testdata/REFERENCES.md [checked]).
var gauss5 = [5][2]float64{
	{0, 0.568888888888889},
	{-0.538469310105683, 0.478628670499366}, {0.538469310105683, 0.478628670499366},
	{-0.906179845938664, 0.236926885056189}, {0.906179845938664, 0.236926885056189},
}

// interpErrors returns the L² and H¹-seminorm errors of the piecewise
// linear interpolant of sin πx on n uniform cells of (0, 1). Their
// orders are 2 and 1 (Ciarlet 1978, interpolation estimates; testdata/REFERENCES.md
// "Convergence rates" [memory; standard]).
func interpErrors(n int) (l2, h1 float64) {
	h := 1 / float64(n)
	for c := 0; c < n; c++ {
		a, b := float64(c)*h, float64(c+1)*h
		ua, ub := math.Sin(math.Pi*a), math.Sin(math.Pi*b)
		for _, q := range gauss5 {
			x := (a+b)/2 + q[0]*h/2
			ih := ua + (ub-ua)*(x-a)/h
			e := math.Sin(math.Pi*x) - ih
			de := math.Pi*math.Cos(math.Pi*x) - (ub-ua)/h
			l2 += q[1] * h / 2 * e * e
			h1 += q[1] * h / 2 * de * de
		}
	}
	return math.Sqrt(l2), math.Sqrt(h1)
}

func TestConvergencePNG(t *testing.T) {
	var hs, l2, h1, l2b []float64
	for _, n := range []int{4, 8, 16, 32, 64, 128} {
		a, b := interpErrors(n)
		hs = append(hs, 1/float64(n))
		l2 = append(l2, a)
		h1 = append(h1, b)
		l2b = append(l2b, 3*a*math.Sqrt(1/float64(n))) // a made-up h^2.5 curve for a second method
	}
	// Observed orders of the interpolation errors: 2 and 1 within 0.01
	// on these meshes (the asymptotic constant is reached at h = 1/64;
	// tolerance from the next-order term, O(h²) relative; our own bound).
	if p := ObservedOrder(hs, l2); math.Abs(p-2) > 0.01 {
		t.Errorf("L2 order %g, want 2", p)
	}
	if p := ObservedOrder(hs, h1); math.Abs(p-1) > 0.01 {
		t.Errorf("H1 order %g, want 1", p)
	}
	curves := []Curve{
		{Method: "P1 interpolant", Norm: "L2", H: hs, Err: l2},
		{Method: "P1 interpolant", Norm: "H1", H: hs, Err: h1},
		{Method: "other", Norm: "L2", H: hs, Err: l2b},
	}
	path := outPath(t, "convergence.png")
	if err := Convergence(path, curves, ConvOptions{Title: "interpolation error of sin πx", Orders: []float64{1, 2}, Rates: true, Width: 800, Height: 640}); err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, path, 800, 640)
	for i := 0; i < 2; i++ {
		if got := countColour(img, seriesColour(i), 8); got < 30 {
			t.Errorf("method %d: %d pixels of its colour, want ≥ 30", i, got)
		}
	}
}

func TestObservedOrder(t *testing.T) {
	// e = 3 h^1.5 exactly, points out of order: the two smallest h give 1.5.
	h := []float64{0.5, 0.125, 0.25, 1}
	e := make([]float64, len(h))
	for i := range h {
		e[i] = 3 * math.Pow(h[i], 1.5)
	}
	e[3] = 1 // a pre-asymptotic point at the largest h must not matter
	if p := ObservedOrder(h, e); math.Abs(p-1.5) > 1e-12 {
		t.Errorf("order %g, want 1.5", p)
	}
}

// TestConvergenceLogAxes: a log axis accepts only positive numbers.
func TestConvergenceLogAxes(t *testing.T) {
	h := []float64{0.5, 0.25}
	cases := []struct {
		name   string
		curves []Curve
		opts   ConvOptions
	}{
		{"zero error", []Curve{{Method: "a", H: h, Err: []float64{1e-3, 0}}}, ConvOptions{}},
		{"negative error", []Curve{{Method: "a", H: h, Err: []float64{1e-3, -1e-4}}}, ConvOptions{}},
		{"zero h", []Curve{{Method: "a", H: []float64{0, 0.5}, Err: []float64{1, 2}}}, ConvOptions{}},
		{"NaN", []Curve{{Method: "a", H: h, Err: []float64{math.NaN(), 1}}}, ConvOptions{}},
		{"mismatch", []Curve{{Method: "a", H: h, Err: []float64{1}}}, ConvOptions{}},
		{"no method", []Curve{{H: h, Err: h}}, ConvOptions{}},
		{"no curves", nil, ConvOptions{}},
		{"bad order", []Curve{{Method: "a", H: h, Err: h}}, ConvOptions{Orders: []float64{0}}},
	}
	for _, c := range cases {
		path := filepath.Join(t.TempDir(), "x.png")
		err := Convergence(path, c.curves, c.opts)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%s: err = %v, want *InputError", c.name, err)
			continue
		}
		if _, serr := os.Stat(path); !os.IsNotExist(serr) {
			t.Errorf("%s: file written despite error", c.name)
		}
	}
	// Positive data is accepted, including a single point.
	path := filepath.Join(t.TempDir(), "one.png")
	if err := Convergence(path, []Curve{{Method: "a", H: []float64{0.1}, Err: []float64{1e-3}}}, ConvOptions{Orders: []float64{2}}); err != nil {
		t.Errorf("one point: %v", err)
	}
}

// TestLogTicks: over 2.5 decades or more only powers of ten are
// labelled; over fewer, 1, 2 and 5 multiples; within a narrow range all.
func TestLogTicks(t *testing.T) {
	lab := func(lo, hi float64) []string {
		var s []string
		for _, tk := range (logTicks{}).Ticks(lo, hi) {
			if tk.Label != "" {
				s = append(s, tk.Label)
			}
		}
		return s
	}
	if got := lab(1e-4, 0.5); len(got) != 4 || got[0] != "0.0001" || got[3] != "0.1" {
		t.Errorf("1e-4..0.5: labels %v", got)
	}
	if got := lab(0.006, 0.3); len(got) != 5 || got[0] != "0.01" || got[4] != "0.2" {
		t.Errorf("0.006..0.3: labels %v", got)
	}
	if got := lab(0.12, 0.35); len(got) != 2 || got[0] != "0.2" || got[1] != "0.3" {
		t.Errorf("0.12..0.35: labels %v, want [0.2 0.3] (fallback to every multiple)", got)
	}
}

// TestLinearTicks: steps of 1, 2 or 5 times a power of ten, labels with
// the decimals the step needs.
func TestLinearTicks(t *testing.T) {
	lab := func(lo, hi float64) []string {
		var s []string
		for _, tk := range (linearTicks{}).Ticks(lo, hi) {
			if tk.Label != "" {
				s = append(s, tk.Label)
			}
		}
		return s
	}
	for _, c := range []struct {
		lo, hi float64
		want   []string
	}{
		{0, 1, []string{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}},
		{-0.38, 1.02, []string{"-0.2", "0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}},
		{-1.6, 2.6, []string{"-1", "0", "1", "2"}},
		{0, 4, []string{"0", "1", "2", "3", "4"}},
	} {
		got := lab(c.lo, c.hi)
		if len(got) != len(c.want) {
			t.Errorf("[%g, %g]: %v, want %v", c.lo, c.hi, got, c.want)
			continue
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("[%g, %g]: %v, want %v", c.lo, c.hi, got, c.want)
				break
			}
		}
	}
}
