package plot

import (
	"image"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// p1At evaluates the P1 field at (x, y) independently of the rasteriser:
// it finds a triangle containing the point by the signs of three cross
// products, then solves the 3×3 system [1 x y] c = u on that triangle
// with gonum's dense LU and evaluates c₀ + c₁x + c₂y.
func p1At(t *testing.T, tr Triangulation, u []float64, x, y float64) (float64, bool) {
	t.Helper()
	cross := func(ax, ay, bx, by, px, py float64) float64 { return (bx-ax)*(py-ay) - (by-ay)*(px-ax) }
	for _, tri := range tr.Triangles {
		var px, py [3]float64
		for k, v := range tri {
			px[k], py[k] = tr.X[v], tr.Y[v]
		}
		s0 := cross(px[0], py[0], px[1], py[1], x, y)
		s1 := cross(px[1], py[1], px[2], py[2], x, y)
		s2 := cross(px[2], py[2], px[0], py[0], x, y)
		if !(s0 >= 0 && s1 >= 0 && s2 >= 0) && !(s0 <= 0 && s1 <= 0 && s2 <= 0) {
			continue
		}
		a := mat.NewDense(3, 3, []float64{1, px[0], py[0], 1, px[1], py[1], 1, px[2], py[2]})
		b := mat.NewVecDense(3, []float64{u[tri[0]], u[tri[1]], u[tri[2]]})
		var c mat.VecDense
		if err := c.SolveVec(a, b); err != nil {
			t.Fatal(err)
		}
		return c.AtVec(0) + c.AtVec(1)*x + c.AtVec(2)*y, true
	}
	return 0, false
}

// TestRasterP1: random nodal values (seeded) on a jittered mesh; at 200
// random interior pixels the colour equals the palette colour of the P1
// field at the pixel centre, the field evaluated independently (p1At).
// Tolerance 2 levels per channel, as in TestColourMapLinearField.
func TestRasterP1(t *testing.T) {
	tr := squareMesh(9, 6, -0.5, 2, 1, 1.5, 0.22)
	rng := rand.New(rand.NewPCG(7, 11))
	u := make([]float64, len(tr.X))
	for i := range u {
		u[i] = rng.Float64()*4 - 1
	}
	lo, hi := minMax(u)
	c, f, err := renderColourMap(tr, u, MapOptions{Width: 700, Height: 600, Levels: -1})
	if err != nil {
		t.Fatal(err)
	}
	img := c.Image()
	pal := Viridis()
	pal.SetMin(lo)
	pal.SetMax(hi)
	checked := 0
	for checked < 200 {
		col := f.col0 + rng.IntN(f.nx)
		row := f.row0 + rng.IntN(f.ny)
		x, y := f.centre(col, row)
		v, ok := p1At(t, tr, u, x, y)
		if !ok {
			continue // pixel centre outside the mesh
		}
		pc, err := pal.At(math.Max(lo, math.Min(hi, v)))
		if err != nil {
			t.Fatal(err)
		}
		if d := maxChannelDiff(rgba8(img.At(col, row)), rgba8(pc)); d > 2 {
			t.Errorf("pixel (%d, %d) at (%.4f, %.4f), u = %.4f: %v, want %v", col, row, x, y, v, rgba8(img.At(col, row)), rgba8(pc))
		}
		checked++
	}
}

// TestPaintAllocs: filling the raster allocates nothing.
func TestPaintAllocs(t *testing.T) {
	r, img := benchRaster(20, 300)
	if n := testing.AllocsPerRun(5, func() { r.paint(img) }); n != 0 {
		t.Errorf("paint: %v allocations per run, want 0", n)
	}
}

// TestAtomicOnError: a refused plot leaves an existing file as it was and
// no temporary file behind; a good plot replaces it.
func TestAtomicOnError(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "p.png")
	if err := os.WriteFile(path, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	bad := []Series{{Name: "a", X: []float64{0, 1}, Y: []float64{0, math.NaN()}}}
	if err := Line(path, bad, LineOptions{}); err == nil {
		t.Fatal("NaN accepted")
	}
	if b, _ := os.ReadFile(path); string(b) != "old" {
		t.Errorf("file changed by a refused plot: %q", b)
	}
	good := []Series{{Name: "a", X: []float64{0, 1}, Y: []float64{0, 1}}}
	if err := Line(path, good, LineOptions{Width: 300, Height: 200}); err != nil {
		t.Fatal(err)
	}
	decodePNG(t, path, 300, 200)
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("%d entries in the directory, want only p.png", len(ents))
	}
}

// benchRaster returns a fieldRaster over an n×n jittered mesh with random
// values (seeded) and a px×px image for it.
func benchRaster(n, px int) (*fieldRaster, *image.RGBA) {
	tr := squareMesh(n, n, 0, 1, 0, 1, 0.2)
	rng := rand.New(rand.NewPCG(3, 5))
	u := make([]float64, len(tr.X))
	for i := range u {
		u[i] = rng.Float64()
	}
	r := &fieldRaster{tr: tr, u: u, lut: colourLUT(Viridis(), 0, 1), lo: 0, hi: 1,
		xmin: 0, xmax: 1, ymin: 0, ymax: 1}
	r.frame = rasterFrame{nx: px, ny: px, x0: 0, dx: 1 / float64(px), y0: 1, dy: 1 / float64(px)}
	return r, image.NewRGBA(image.Rect(0, 0, px, px))
}

var sinkImage *image.RGBA

func benchPaint(b *testing.B, n, px int) {
	r, img := benchRaster(n, px)
	for b.Loop() {
		r.paint(img)
	}
	sinkImage = img
}

func BenchmarkPaintMesh16Px256(b *testing.B)   { benchPaint(b, 16, 256) }
func BenchmarkPaintMesh128Px512(b *testing.B)  { benchPaint(b, 128, 512) }
func BenchmarkPaintMesh512Px1024(b *testing.B) { benchPaint(b, 512, 1024) }
