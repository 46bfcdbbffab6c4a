package plot

import (
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	gplot "gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Curve is one error curve of a convergence study: the error of one
// method in one norm, Err[i] on the mesh of size H[i].
type Curve struct {
	Method string // e.g. "SUPG"; curves of one method share a colour
	Norm   string // e.g. "L2" or "H1"; curves of one norm share a marker
	H, Err []float64
}

// ConvOptions controls Convergence. The zero value gives an 800×600
// plot with axis labels "h" and "error", the legend top left and no
// reference slopes.
type ConvOptions struct {
	Title          string
	XLabel, YLabel string // default "h" and "error"
	Width, Height  int    // pixels; 0 means DefaultWidth, DefaultHeight
	Legend         Corner

	// Orders are the orders k of the reference lines C h^k, drawn grey
	// and dashed and labelled "h^k". Each runs over the h range of the
	// curve whose observed order is nearest to k, a factor 2 below it.
	Orders []float64

	// Rates adds the observed order (ObservedOrder) to each legend entry.
	Rates bool
}

// Convergence draws error against h on log–log axes, one line with
// markers per curve, and the reference lines of opts.Orders, and writes
// the PNG to path atomically. It returns *InputError, and writes
// nothing, when there is no curve, a curve has no method name or no
// points or len(H) != len(Err), any h or error is zero, negative, NaN or
// infinite (a log axis shows positive numbers only; an exactly zero
// error has to be reported otherwise), or an order is not a positive
// finite number.
func Convergence(path string, curves []Curve, opts ConvOptions) error {
	c, err := renderConvergence(curves, opts)
	if err != nil {
		return err
	}
	return writePNG(path, c)
}

func renderConvergence(curves []Curve, opts ConvOptions) (*vgimg.Canvas, error) {
	const fn = "Convergence"
	w, h, err := imageSize(fn, opts.Width, opts.Height, DefaultWidth, DefaultHeight)
	if err != nil {
		return nil, err
	}
	if len(curves) == 0 {
		return nil, &InputError{Func: fn, Msg: "no curves"}
	}
	for i, c := range curves {
		item := fmt.Sprintf("curve %d %q", i, curveName(c))
		if c.Method == "" {
			return nil, &InputError{Func: fn, Item: item, Msg: "empty method name (it labels the legend)"}
		}
		if len(c.H) == 0 {
			return nil, &InputError{Func: fn, Item: item, Msg: "no points"}
		}
		if len(c.H) != len(c.Err) {
			return nil, &InputError{Func: fn, Item: item, Msg: fmt.Sprintf("len(H) = %d but len(Err) = %d", len(c.H), len(c.Err))}
		}
		for _, v := range []struct {
			name string
			x    []float64
		}{{"H", c.H}, {"Err", c.Err}} {
			if err := checkFinite(fn, item, v.name, v.x); err != nil {
				return nil, err
			}
			for j, x := range v.x {
				if x <= 0 {
					return nil, &InputError{Func: fn, Item: item, Msg: fmt.Sprintf("%s[%d] = %g: a log axis needs positive values", v.name, j, x)}
				}
			}
		}
	}
	for i, k := range opts.Orders {
		if !(k > 0) || math.IsInf(k, 0) {
			return nil, &InputError{Func: fn, Item: "orders", Msg: fmt.Sprintf("Orders[%d] = %g, want a positive finite number", i, k)}
		}
	}

	p := newPlot(opts.Title, orDefault(opts.XLabel, "h"), orDefault(opts.YLabel, "error"), w)
	opts.Legend.place(p, TopLeft)
	p.X.Scale, p.Y.Scale = gplot.LogScale{}, gplot.LogScale{}
	p.X.Tick.Marker, p.Y.Tick.Marker = logTicks{}, logTicks{}
	grid := plotter.NewGrid()
	grid.Horizontal.Color = color.Gray{0xdd}
	grid.Vertical.Color = color.Gray{0xdd}
	p.Add(grid)
	s := scale(w)
	lw := vg.Length(1.25 * s)

	// Reference lines first, so the data is drawn over them.
	dashes := [][]vg.Length{{6 * lw, 3 * lw}, {2 * lw, 2 * lw}, {8 * lw, 3 * lw, 2 * lw, 3 * lw}}
	var labels plotter.XYLabels
	for i, k := range opts.Orders {
		c := nearestCurve(curves, k)
		ha, hb, ea := refAnchor(c)
		ref := func(h float64) float64 { return 0.5 * ea * math.Pow(h/ha, k) }
		if hb == ha {
			hb = 2 * ha
		}
		xy := plotter.XYs{{X: ha, Y: ref(ha)}, {X: hb, Y: ref(hb)}}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return nil, &InputError{Func: fn, Item: "orders", Msg: err.Error()}
		}
		l.LineStyle = draw.LineStyle{Color: color.Gray{0x55}, Width: lw, Dashes: dashes[i%len(dashes)]}
		p.Add(l)
		hm := math.Sqrt(ha * hb)
		labels.XYs = append(labels.XYs, plotter.XY{X: hm, Y: ref(hm)})
		labels.Labels = append(labels.Labels, "h^"+strconv.FormatFloat(k, 'g', -1, 64))
	}
	if len(labels.XYs) > 0 {
		lab, err := plotter.NewLabels(labels)
		if err != nil {
			return nil, &InputError{Func: fn, Item: "orders", Msg: err.Error()}
		}
		for i := range lab.TextStyle {
			lab.TextStyle[i].Font.Size = vg.Length(11 * s)
			lab.TextStyle[i].Color = color.Gray{0x33}
			lab.TextStyle[i].XAlign = draw.XLeft
			lab.TextStyle[i].YAlign = draw.YTop
		}
		lab.Offset = vg.Point{X: 4 * lw, Y: -2 * lw}
		p.Add(lab)
	}

	methods, norms := map[string]int{}, map[string]int{}
	for _, c := range curves {
		if _, ok := methods[c.Method]; !ok {
			methods[c.Method] = len(methods)
		}
		if _, ok := norms[c.Norm]; !ok {
			norms[c.Norm] = len(norms)
		}
	}
	for _, c := range curves {
		xy := make(plotter.XYs, len(c.H))
		for j := range c.H {
			xy[j] = plotter.XY{X: c.H[j], Y: c.Err[j]}
		}
		sort.Slice(xy, func(a, b int) bool { return xy[a].X < xy[b].X })
		l, sc, err := plotter.NewLinePoints(xy)
		if err != nil {
			return nil, &InputError{Func: fn, Item: fmt.Sprintf("curve %q", curveName(c)), Msg: err.Error()}
		}
		col := seriesColour(methods[c.Method])
		l.LineStyle = draw.LineStyle{Color: col, Width: lw}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 2.4 * lw, Shape: seriesShapes[norms[c.Norm]%len(seriesShapes)]}
		p.Add(l, sc)
		name := curveName(c)
		if opts.Rates && len(c.H) >= 2 {
			name += fmt.Sprintf(": order %.2f", ObservedOrder(c.H, c.Err))
		}
		p.Legend.Add(name, l, sc)
	}
	// A little room round the data on the log axes.
	p.X.Min, p.X.Max = p.X.Min/1.25, p.X.Max*1.25
	p.Y.Min, p.Y.Max = p.Y.Min/1.6, p.Y.Max*1.6

	cv := newCanvas(w, h)
	p.Draw(margin(draw.New(cv), w))
	return cv, nil
}

func curveName(c Curve) string {
	if c.Norm == "" {
		return c.Method
	}
	return c.Method + ", " + c.Norm
}

// ObservedOrder returns the order of convergence seen between the two
// smallest mesh sizes, log(e₁/e₂)/log(h₁/h₂): the usual estimate of the
// exponent p in e ≈ C h^p. It panics unless len(h) == len(e) ≥ 2 (a
// programmer error); h and e must be positive, and h values distinct.
func ObservedOrder(h, e []float64) float64 {
	if len(h) != len(e) || len(h) < 2 {
		panic("plot: ObservedOrder needs two or more (h, error) pairs of equal length")
	}
	i1, i2 := -1, -1 // smallest and second smallest h
	for i, x := range h {
		switch {
		case i1 < 0 || x < h[i1]:
			i1, i2 = i, i1
		case i2 < 0 || x < h[i2]:
			i2 = i
		}
	}
	return math.Log(e[i2]/e[i1]) / math.Log(h[i2]/h[i1])
}

// nearestCurve returns the curve whose observed order is nearest to k
// (the first curve among those with a single point, if none has two).
func nearestCurve(curves []Curve, k float64) Curve {
	best, bd := curves[0], math.Inf(1)
	for _, c := range curves {
		if len(c.H) < 2 {
			continue
		}
		if d := math.Abs(ObservedOrder(c.H, c.Err) - k); d < bd {
			best, bd = c, d
		}
	}
	return best
}

// refAnchor returns the h range of c and its error at the smallest h.
func refAnchor(c Curve) (hmin, hmax, emin float64) {
	hmin, hmax = math.Inf(1), math.Inf(-1)
	for i, h := range c.H {
		if h < hmin {
			hmin, emin = h, c.Err[i]
		}
		hmax = math.Max(hmax, h)
	}
	return hmin, hmax, emin
}

// logTicks marks a log axis: labelled powers of ten with unlabelled
// 2…9 multiples when the range spans 2.5 decades or more, labelled 1, 2
// and 5 multiples over less, and every multiple labelled if that still
// gives fewer than two labels.
type logTicks struct{}

// Ticks implements plot.Ticker.
func (logTicks) Ticks(lo, hi float64) []gplot.Tick {
	d0 := int(math.Floor(math.Log10(lo)))
	d1 := int(math.Ceil(math.Log10(hi)))
	labelled := func(m int) bool { return m == 1 }
	if math.Log10(hi/lo) < 2.5 {
		labelled = func(m int) bool { return m == 1 || m == 2 || m == 5 }
	}
	build := func(all bool) ([]gplot.Tick, int) {
		var ts []gplot.Tick
		n := 0
		for d := d0; d <= d1; d++ {
			for m := 1; m <= 9; m++ {
				v := float64(m) * math.Pow10(d)
				if v < lo*(1-1e-12) || v > hi*(1+1e-12) {
					continue
				}
				t := gplot.Tick{Value: v}
				if all || labelled(m) {
					t.Label = strconv.FormatFloat(v, 'g', 6, 64)
					n++
				}
				ts = append(ts, t)
			}
		}
		return ts, n
	}
	ts, n := build(false)
	if n < 2 {
		ts, _ = build(true)
	}
	return ts
}
