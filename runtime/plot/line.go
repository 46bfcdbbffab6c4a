package plot

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Series is one named set of points of a 1D plot: X[i] against Y[i],
// typically the nodal values computed by one method.
type Series struct {
	Name string
	X, Y []float64
}

// DefaultExactSamples is the number of points at which LineOptions.Exact
// is sampled when ExactSamples is zero.
const DefaultExactSamples = 400

// LineOptions controls Line. The zero value gives an 800×600 plot with no
// title, axis labels "x" and "u", the legend in the top right corner and
// no exact solution.
type LineOptions struct {
	Title          string
	XLabel, YLabel string // default "x" and "u"
	Width, Height  int    // pixels; 0 means DefaultWidth, DefaultHeight
	Legend         Corner

	// Exact, if not nil, is drawn as a smooth dashed black line sampled
	// at ExactSamples equally spaced points (0 means
	// DefaultExactSamples) over [ExactFrom, ExactTo], or over the range
	// of the series' x values when both are zero.
	Exact              func(x float64) float64
	ExactName          string // legend entry; default "exact"
	ExactSamples       int
	ExactFrom, ExactTo float64
}

// Line draws series as markers joined by straight lines, one colour and
// marker shape per series, with the exact solution of opts (if any)
// underneath, and writes the PNG to path atomically. It returns
// *InputError, and writes nothing, when a series is empty, has no name,
// has len(X) != len(Y) or holds NaN or infinities, or when Exact returns
// one.
func Line(path string, series []Series, opts LineOptions) error {
	c, err := renderLine(series, opts)
	if err != nil {
		return err
	}
	return writePNG(path, c)
}

func renderLine(series []Series, opts LineOptions) (*vgimg.Canvas, error) {
	const fn = "Line"
	w, h, err := imageSize(fn, opts.Width, opts.Height, DefaultWidth, DefaultHeight)
	if err != nil {
		return nil, err
	}
	if len(series) == 0 {
		return nil, &InputError{Func: fn, Msg: "no series"}
	}
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for i, s := range series {
		item := fmt.Sprintf("series %d %q", i, s.Name)
		if s.Name == "" {
			return nil, &InputError{Func: fn, Item: item, Msg: "empty name (it labels the legend)"}
		}
		if len(s.X) == 0 {
			return nil, &InputError{Func: fn, Item: item, Msg: "no points"}
		}
		if len(s.X) != len(s.Y) {
			return nil, &InputError{Func: fn, Item: item, Msg: fmt.Sprintf("len(X) = %d but len(Y) = %d", len(s.X), len(s.Y))}
		}
		if err := checkFinite(fn, item, "X", s.X); err != nil {
			return nil, err
		}
		if err := checkFinite(fn, item, "Y", s.Y); err != nil {
			return nil, err
		}
		for _, x := range s.X {
			xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
		}
	}

	p := newPlot(opts.Title, orDefault(opts.XLabel, "x"), orDefault(opts.YLabel, "u"), w)
	opts.Legend.place(p, TopRight)
	p.Add(plotter.NewGrid())
	lw := vg.Length(1.25 * scale(w))

	if opts.Exact != nil {
		exact, err := sampleExact(fn, opts, xmin, xmax)
		if err != nil {
			return nil, err
		}
		l, err := plotter.NewLine(exact)
		if err != nil {
			return nil, &InputError{Func: fn, Item: "exact", Msg: err.Error()}
		}
		l.LineStyle = draw.LineStyle{Color: color.Black, Width: lw, Dashes: []vg.Length{6 * lw, 3 * lw}}
		p.Add(l)
		p.Legend.Add(orDefault(opts.ExactName, "exact"), l)
	}
	for i, s := range series {
		xy := make(plotter.XYs, len(s.X))
		for j := range s.X {
			xy[j] = plotter.XY{X: s.X[j], Y: s.Y[j]}
		}
		l, sc, err := plotter.NewLinePoints(xy)
		if err != nil {
			return nil, &InputError{Func: fn, Item: fmt.Sprintf("series %q", s.Name), Msg: err.Error()}
		}
		col := seriesColour(i)
		l.LineStyle = draw.LineStyle{Color: col, Width: lw}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 2.2 * lw, Shape: seriesShape(i)}
		p.Add(l, sc)
		p.Legend.Add(s.Name, l, sc)
	}

	c := newCanvas(w, h)
	p.Draw(margin(draw.New(c), w))
	return c, nil
}

// sampleExact evaluates opts.Exact on its sampling grid.
func sampleExact(fn string, opts LineOptions, xmin, xmax float64) (plotter.XYs, error) {
	a, b := opts.ExactFrom, opts.ExactTo
	if a == 0 && b == 0 {
		a, b = xmin, xmax
	}
	if !(a < b) || math.IsInf(a, 0) || math.IsInf(b, 0) {
		return nil, &InputError{Func: fn, Item: "exact", Msg: fmt.Sprintf("sampling range [%g, %g] is empty or not finite", a, b)}
	}
	n := opts.ExactSamples
	if n == 0 {
		n = DefaultExactSamples
	}
	if n < 2 || n > 1e6 {
		return nil, &InputError{Func: fn, Item: "exact", Msg: fmt.Sprintf("ExactSamples = %d, want 2 to 10⁶", n)}
	}
	xy := make(plotter.XYs, n)
	for i := range xy {
		x := a + (b-a)*float64(i)/float64(n-1)
		if i == n-1 {
			x = b
		}
		y := opts.Exact(x)
		if math.IsNaN(y) || math.IsInf(y, 0) {
			return nil, &InputError{Func: fn, Item: "exact", Msg: fmt.Sprintf("Exact(%g) = %v", x, y)}
		}
		xy[i] = plotter.XY{X: x, Y: y}
	}
	return xy, nil
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}
