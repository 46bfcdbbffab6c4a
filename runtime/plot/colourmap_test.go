package plot

import (
	"errors"
	"image/color"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// squareMesh returns the unit square [x0, x0+lx]×[y0, y0+ly] cut into
// n×m quadrilaterals, each split into two triangles by SplitQuads; with
// jitter > 0 the interior nodes are moved at random by up to jitter times
// the spacing (seeded), which keeps every triangle positive for
// jitter < ¼.
func squareMesh(n, m int, x0, lx, y0, ly, jitter float64) Triangulation {
	var tr Triangulation
	rng := rand.New(rand.NewPCG(1, 2))
	hx, hy := lx/float64(n), ly/float64(m)
	for j := 0; j <= m; j++ {
		for i := 0; i <= n; i++ {
			x, y := x0+float64(i)*hx, y0+float64(j)*hy
			if i > 0 && i < n && j > 0 && j < m && jitter > 0 {
				x += jitter * hx * (2*rng.Float64() - 1)
				y += jitter * hy * (2*rng.Float64() - 1)
			}
			tr.X = append(tr.X, x)
			tr.Y = append(tr.Y, y)
		}
	}
	var quads [][4]int
	for j := 0; j < m; j++ {
		for i := 0; i < n; i++ {
			a := j*(n+1) + i
			quads = append(quads, [4]int{a, a + 1, a + n + 2, a + n + 1})
		}
	}
	tr.Triangles = SplitQuads(quads)
	return tr
}

func nodal(tr Triangulation, f func(x, y float64) float64) []float64 {
	u := make([]float64, len(tr.X))
	for i := range u {
		u[i] = f(tr.X[i], tr.Y[i])
	}
	return u
}

func rgba8(c color.Color) [3]int {
	r, g, b, _ := c.RGBA()
	return [3]int{int(r >> 8), int(g >> 8), int(b >> 8)}
}

func maxChannelDiff(a, b [3]int) int {
	d := 0
	for k := range a {
		d = max(d, abs(a[k]-b[k]))
	}
	return d
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}

// TestColourMapLinearField draws u = x on the unit square with no contour
// lines and compares pixels with the palette. The expectation is
// independent of the mesh: the P1 interpolant of a linear field is the
// field itself, so the pixel centred at (x, y) must have the palette
// colour of x. Tolerance: 2 levels per 8-bit channel, for the colour
// look-up table (< 1 level, see lutSize) plus rounding in gonum's image
// drawing (our own bound, no source).
func TestColourMapLinearField(t *testing.T) {
	tr := squareMesh(7, 5, 0, 1, 0, 1, 0.2)
	u := nodal(tr, func(x, _ float64) float64 { return x })
	const w, h = 640, 480
	path := outPath(t, "map_linear.png")
	if err := ColourMap(path, tr, u, MapOptions{Title: "u = x", Width: w, Height: h, Levels: -1, ValueLabel: "u"}); err != nil {
		t.Fatal(err)
	}
	img := decodePNG(t, path, w, h)
	_, f, err := renderColourMap(tr, u, MapOptions{Title: "u = x", Width: w, Height: h, Levels: -1, ValueLabel: "u"})
	if err != nil {
		t.Fatal(err)
	}
	pal := Viridis()
	pal.SetMin(0)
	pal.SetMax(1)
	want := func(v float64) [3]int {
		c, err := pal.At(v)
		if err != nil {
			t.Fatal(err)
		}
		return rgba8(c)
	}
	// Equal aspect ratio: the unit square is as many pixels wide as high
	// (±1 for the outward rounding of the raster bounds).
	if abs(f.nx-f.ny) > 1 || math.Abs(f.dx-f.dy) > 1e-9*f.dx {
		t.Errorf("raster %d×%d pixels, %g×%g units per pixel: axes not equal", f.nx, f.ny, f.dx, f.dy)
	}
	// Interior points: the pixel nearest each point, its colour against
	// the palette at that pixel centre's x.
	for _, p := range [][2]float64{{0.1, 0.5}, {0.25, 0.25}, {0.5, 0.8}, {0.62, 0.37}, {0.9, 0.1}} {
		col, row := f.pixel(p[0], p[1])
		x, _ := f.centre(col, row)
		got := rgba8(img.At(col, row))
		if d := maxChannelDiff(got, want(x)); d > 2 {
			t.Errorf("pixel at (%g, %g) [x = %.4f]: %v, want %v (diff %d)", p[0], p[1], x, got, want(x), d)
		}
	}
	// Left and right edges: the first and last raster columns that lie
	// inside the square have palette min and max, to within the colour
	// change across one pixel (< 2 % of the range here) plus the 2 above.
	for _, p := range [][2]float64{{0, 0.5}, {1, 0.5}} {
		col, row := f.pixel(p[0], p[1])
		x, _ := f.centre(col, row)
		if x < 0 {
			col++
		}
		if x > 1 {
			col--
		}
		x, _ = f.centre(col, row)
		if math.Abs(x-p[0]) > f.dx {
			t.Fatalf("edge pixel at x = %g, want within one pixel (%g) of %g", x, f.dx, p[0])
		}
		end := want(p[0])
		got := rgba8(img.At(col, row))
		slope := maxChannelDiff(want(math.Min(1, p[0]+f.dx)), want(math.Max(0, p[0]-f.dx)))
		if d := maxChannelDiff(got, end); d > 2+slope {
			t.Errorf("edge x = %g: %v, want palette end %v (diff %d > %d)", p[0], got, end, d, 2+slope)
		}
	}
}

// TestColourMapContourPixels: with contour levels at x = 0.25, 0.5, 0.75
// the darkest of the three pixels nearest each line is much darker than
// the palette there. On an 800-pixel image the black line is 0.9 pt =
// 1.2 px wide, so the pixel holding its centre line is covered at least
// 0.6 (half the width, when the centre line runs along a pixel edge);
// luminance ≤ 0.5 of the fill leaves room for anti-aliasing error
// (geometry of a line against a pixel square; our own bound).
func TestColourMapContourPixels(t *testing.T) {
	tr := squareMesh(6, 6, 0, 1, 0, 1, 0.2)
	u := nodal(tr, func(x, _ float64) float64 { return x })
	opts := MapOptions{Width: 800, Height: 700, Levels: 3}
	c, f, err := renderColourMap(tr, u, opts)
	if err != nil {
		t.Fatal(err)
	}
	img := c.Image()
	pal := Viridis()
	pal.SetMin(0)
	pal.SetMax(1)
	lum := func(c [3]int) float64 { return 0.2126*float64(c[0]) + 0.7152*float64(c[1]) + 0.0722*float64(c[2]) }
	for _, lv := range []float64{0.25, 0.5, 0.75} {
		col, row := f.pixel(lv, 0.5)
		pc, _ := pal.At(lv)
		bg := rgba8(pc)
		darkest := math.Inf(1)
		for dc := -1; dc <= 1; dc++ {
			darkest = math.Min(darkest, lum(rgba8(img.At(col+dc, row))))
		}
		if darkest > 0.5*lum(bg) {
			t.Errorf("level %g: darkest pixel luminance %.0f, palette %.0f: no line", lv, darkest, lum(bg))
		}
	}
	// Half-way between lines the fill is untouched.
	col, row := f.pixel(0.375, 0.5)
	x, _ := f.centre(col, row)
	pc, _ := pal.At(x)
	if d := maxChannelDiff(rgba8(img.At(col, row)), rgba8(pc)); d > 2 {
		t.Errorf("between lines: diff %d from palette", d)
	}
}

// TestColourMapPictures writes the pictures a person would look at: a
// bilinear-ish field on a jittered mesh, and a wide domain (equal axes).
func TestColourMapPictures(t *testing.T) {
	tr := squareMesh(24, 24, 0, 1, 0, 1, 0.2)
	u := nodal(tr, func(x, y float64) float64 { return math.Sin(math.Pi*x) * math.Sin(math.Pi*y) })
	path := outPath(t, "map_sines.png")
	if err := ColourMap(path, tr, u, MapOptions{Title: "u = sin πx sin πy", ValueLabel: "u", Width: 800, Height: 600}); err != nil {
		t.Fatal(err)
	}
	decodePNG(t, path, 800, 600)

	wide := squareMesh(40, 8, -1, 4, 0, 1, 0.15)
	uw := nodal(wide, func(x, y float64) float64 { return math.Exp(-((x-0.5)*(x-0.5) + (y-0.5)*(y-0.5)) * 4) })
	path = outPath(t, "map_wide.png")
	if err := ColourMap(path, wide, uw, MapOptions{Title: "wide domain", ValueLabel: "u", Width: 900, Height: 500, Levels: 6}); err != nil {
		t.Fatal(err)
	}
	_, f, err := renderColourMap(wide, uw, MapOptions{Title: "wide domain", ValueLabel: "u", Width: 900, Height: 500, Levels: 6})
	if err != nil {
		t.Fatal(err)
	}
	// 4 by 1 in data units must be 4 by 1 in pixels (±1 px of rounding each).
	if r := float64(f.nx) / float64(f.ny); math.Abs(r-4) > 4*(1/float64(f.nx)+1/float64(f.ny)) {
		t.Errorf("raster %d×%d, aspect %g, want 4", f.nx, f.ny, r)
	}
	decodePNG(t, path, 900, 500)
}

func TestColourMapRejects(t *testing.T) {
	good := squareMesh(2, 2, 0, 1, 0, 1, 0)
	u := nodal(good, func(x, y float64) float64 { return x + y })
	bad := good
	bad.Triangles = append([][3]int{{0, 1, 99}}, good.Triangles...)
	flat := Triangulation{X: []float64{0, 1, 2}, Y: []float64{0, 0, 0}, Triangles: [][3]int{{0, 1, 2}}}
	nan := append([]float64(nil), u...)
	nan[3] = math.NaN()
	cases := []struct {
		name string
		tr   Triangulation
		u    []float64
		opts MapOptions
	}{
		{"node index", bad, u, MapOptions{}},
		{"value count", good, u[:4], MapOptions{}},
		{"NaN value", good, nan, MapOptions{}},
		{"no triangles", Triangulation{X: good.X, Y: good.Y}, u, MapOptions{}},
		{"XY mismatch", Triangulation{X: good.X, Y: good.Y[:3], Triangles: good.Triangles}, u, MapOptions{}},
		{"zero extent", flat, []float64{0, 1, 2}, MapOptions{}},
		{"range", good, u, MapOptions{ValueMin: 1, ValueMax: 0}},
		{"NaN level", good, u, MapOptions{LevelValues: []float64{math.NaN()}}},
		{"size", good, u, MapOptions{Width: 100000}},
	}
	for _, c := range cases {
		path := filepath.Join(t.TempDir(), "x.png")
		err := ColourMap(path, c.tr, c.u, c.opts)
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
