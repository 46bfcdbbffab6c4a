package plot

import (
	"errors"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// keepDir, when set through FORMWRIGHT_PLOT_DIR, keeps the test PNGs so a
// person can look at them.
func outPath(t *testing.T, name string) string {
	t.Helper()
	if d := os.Getenv("FORMWRIGHT_PLOT_DIR"); d != "" {
		return filepath.Join(d, name)
	}
	return filepath.Join(t.TempDir(), name)
}

// decodePNG reads path and checks that it is a PNG of exactly w×h pixels.
func decodePNG(t *testing.T, path string, w, h int) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
		t.Fatalf("%s: %d×%d pixels, want %d×%d", path, b.Dx(), b.Dy(), w, h)
	}
	return img
}

// countColour counts the pixels of img within tol (per 8-bit channel) of c.
func countColour(img image.Image, c color.Color, tol int) int {
	r0, g0, b0, _ := c.RGBA()
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bb, _ := img.At(x, y).RGBA()
			if absDiff(r>>8, r0>>8) <= tol && absDiff(g>>8, g0>>8) <= tol && absDiff(bb>>8, b0>>8) <= tol {
				n++
			}
		}
	}
	return n
}

func absDiff(a, b uint32) int {
	if a > b {
		return int(a - b)
	}
	return int(b - a)
}

// advDiffExact is the exact solution of a u' − k u” = 0 on (0,1) with
// u(0)=0, u(1)=1 and Pe = a/k, in the overflow-safe form; source
// testdata/REFERENCES.md, "1D steady advection–diffusion" [checked].
func advDiffExact(pe float64) func(float64) float64 {
	return func(x float64) float64 {
		return (math.Exp(pe*(x-1)) - math.Exp(-pe)) / (1 - math.Exp(-pe))
	}
}

// galerkinNodal returns the nodal values of the P1 Galerkin solution of
// the same problem on n uniform cells: the three-point scheme
// −(1+α)u_{j−1} + 2u_j − (1−α)u_{j+1} = 0 has the solution
// u_j = (r^j − 1)/(r^n − 1), r = (1+α)/(1−α), α = Pe/(2n) (the standard
// difference-equation solution, e.g. Brooks & Hughes 1982, CMAME 32; it
// oscillates for α > 1 as testdata/REFERENCES.md says).
func galerkinNodal(pe float64, n int) (x, u []float64) {
	alpha := pe / (2 * float64(n))
	r := (1 + alpha) / (1 - alpha)
	for j := 0; j <= n; j++ {
		x = append(x, float64(j)/float64(n))
		u = append(u, (math.Pow(r, float64(j))-1)/(math.Pow(r, float64(n))-1))
	}
	return x, u
}

func TestLinePNG(t *testing.T) {
	// Pe = 50 on 10 cells: α = 2.5, the oscillating case of testdata/REFERENCES.md.
	const pe, n = 50, 10
	exact := advDiffExact(pe)
	xg, ug := galerkinNodal(pe, n)
	us := make([]float64, len(xg))
	for i, x := range xg {
		us[i] = exact(x) // SUPG with the optimal τ is nodally exact (testdata/REFERENCES.md)
	}
	// The test data itself against testdata/REFERENCES.md: Galerkin at α = 2.5,
	// s = 0 has maximum nodal error 0.436 [checked by independent
	// computation]; 5e-4 covers the three printed digits.
	maxErr := 0.0
	for i, x := range xg {
		maxErr = math.Max(maxErr, math.Abs(ug[i]-exact(x)))
	}
	if math.Abs(maxErr-0.436) > 5e-4 {
		t.Fatalf("Galerkin test data: max nodal error %.4f, want 0.436", maxErr)
	}
	path := outPath(t, "line.png")
	err := Line(path, []Series{{Name: "Galerkin", X: xg, Y: ug}, {Name: "SUPG", X: xg, Y: us}}, LineOptions{
		Title: "a u′ − k u″ = 0, Pe = 50, 10 cells", Width: 900, Height: 600,
		Exact: exact, Legend: TopLeft,
	})
	if err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, path, 900, 600)
	// Each series is drawn in its own colour: a plot that lost a series
	// would have (almost) no pixels of that colour. 30 pixels is far
	// below what a 1.7-pixel-wide line across the plot gives and far
	// above anti-aliasing coincidences (common practice, no source).
	for i := 0; i < 2; i++ {
		if got := countColour(img, seriesColour(i), 8); got < 30 {
			t.Errorf("series %d: %d pixels of its colour, want ≥ 30", i, got)
		}
	}
	if got := countColour(img, color.Black, 8); got < 200 {
		t.Errorf("%d black pixels (exact curve, axes, text), want ≥ 200", got)
	}
}

func TestLineRejects(t *testing.T) {
	ok := []float64{0, 1}
	cases := []struct {
		name   string
		series []Series
		opts   LineOptions
	}{
		{"no series", nil, LineOptions{}},
		{"empty", []Series{{Name: "a"}}, LineOptions{}},
		{"no name", []Series{{X: ok, Y: ok}}, LineOptions{}},
		{"mismatch", []Series{{Name: "a", X: ok, Y: []float64{1}}}, LineOptions{}},
		{"NaN", []Series{{Name: "a", X: ok, Y: []float64{0, math.NaN()}}}, LineOptions{}},
		{"Inf", []Series{{Name: "a", X: []float64{math.Inf(1), 0}, Y: ok}}, LineOptions{}},
		{"exact NaN", []Series{{Name: "a", X: ok, Y: ok}}, LineOptions{Exact: math.Log, ExactFrom: -1, ExactTo: 1}},
		{"size", []Series{{Name: "a", X: ok, Y: ok}}, LineOptions{Width: 10}},
	}
	for _, c := range cases {
		path := filepath.Join(t.TempDir(), "x.png")
		err := Line(path, c.series, c.opts)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%s: err = %v, want *InputError", c.name, err)
			continue
		}
		if _, serr := os.Stat(path); !os.IsNotExist(serr) {
			t.Errorf("%s: file written despite error", c.name)
		}
	}
}
