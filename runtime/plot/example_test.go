package plot_test

import (
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"

	"github.com/formwright/formwright/runtime/plot"
)

// The level set u = 0.5 of u = x + y on the unit square cut into two
// triangles (split along the diagonal from node 0 to node 2) is the line
// from (0.5, 0) to (0, 0.5), one segment per triangle it crosses: the two
// meet on the diagonal.
func ExampleContourSegments() {
	tr := plot.Triangulation{
		X:         []float64{0, 1, 1, 0},
		Y:         []float64{0, 0, 1, 1},
		Triangles: plot.SplitQuads([][4]int{{0, 1, 2, 3}}),
	}
	u := []float64{0, 1, 2, 1}
	segs, err := plot.ContourSegments(tr, u, 0.5)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, s := range segs {
		fmt.Printf("(%g, %g) – (%g, %g)\n", s.X0, s.Y0, s.X1, s.Y1)
	}
	// Output:
	// (0.5, 0) – (0.25, 0.25)
	// (0.25, 0.25) – (0, 0.5)
}

// A refused input names the function, the item and the reason.
func ExampleConvergence_zeroError() {
	dir, _ := os.MkdirTemp("", "plot")
	defer os.RemoveAll(dir)
	err := plot.Convergence(filepath.Join(dir, "conv.png"), []plot.Curve{
		{Method: "SUPG", Norm: "L2", H: []float64{0.1, 0.05}, Err: []float64{1e-3, 0}},
	}, plot.ConvOptions{Orders: []float64{2}})
	fmt.Println(err)
	// Output:
	// plot: Convergence: curve 0 "SUPG, L2": Err[1] = 0: a log axis needs positive values
}

// Nodal values of a nodally exact method and the exact solution of
// u′ − 0.1 u″ = 0, u(0) = 0, u(1) = 1 (Pe = 10).
func ExampleLine() {
	dir, _ := os.MkdirTemp("", "plot")
	defer os.RemoveAll(dir)
	exact := func(x float64) float64 { return math.Expm1(10*x) / math.Expm1(10) }
	x := []float64{0, 0.25, 0.5, 0.75, 1}
	nodal := make([]float64, len(x))
	for i := range x {
		nodal[i] = exact(x[i])
	}
	path := filepath.Join(dir, "line.png")
	err := plot.Line(path, []plot.Series{{Name: "SUPG", X: x, Y: nodal}}, plot.LineOptions{
		Title: "Pe = 10", Exact: exact, Legend: plot.TopLeft, Width: 640, Height: 480,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	f, _ := os.Open(path)
	defer f.Close()
	cfg, _ := png.DecodeConfig(f)
	fmt.Println(cfg.Width, cfg.Height)
	// Output:
	// 640 480
}
