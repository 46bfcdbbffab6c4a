package plot

import (
	"fmt"
	"image/color"
	"math"

	gplot "gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// DefaultLevels is the number of contour levels when MapOptions.Levels
// is zero.
const DefaultLevels = 10

// MapOptions controls ColourMap. The zero value gives an 800×600 image,
// axis labels "x" and "y", the Viridis colour map over the range of the
// values and DefaultLevels black contour lines.
type MapOptions struct {
	Title          string
	XLabel, YLabel string // default "x" and "y"
	ValueLabel     string // label of the colour bar
	Width, Height  int    // pixels; 0 means DefaultWidth, DefaultHeight

	// Levels is the number of contour levels, spaced evenly strictly
	// inside the colour range (EvenLevels); 0 means DefaultLevels and a
	// negative number draws no contours. LevelValues, if not empty, gives
	// the levels instead.
	Levels      int
	LevelValues []float64

	// Palette maps values to colours; nil means Viridis(). Its range is
	// set (SetMin, SetMax) to the colour range, so a palette passed here
	// is modified.
	Palette palette.ColorMap

	// ValueMin and ValueMax fix the colour range, e.g. to compare several
	// plots; both zero means the range of the values. Values outside a
	// fixed range get the colour of the nearer end.
	ValueMin, ValueMax float64

	// ContourColour is the colour of the contour lines and of the level
	// marks on the colour bar; nil means black.
	ContourColour color.Color
}

// ColourMap draws the continuous piecewise-linear field that takes
// values[i] at node i of tri as a filled colour map with contour lines
// and a colour bar, and writes the PNG to path atomically.
//
// The fill is rasterised here, not by gonum: each pixel of the data area
// whose centre lies in a triangle gets the palette colour of the linear
// interpolant at that centre (barycentric coordinates), so the picture
// is exactly the P1 field, sampled once per pixel; pixels outside the
// mesh stay white. The contour lines are the segments of
// ContourSegments, computed on the mesh (gonum's plotter.Contour needs a
// structured grid, so it is not used) and stroked as line segments over
// the fill. The x and y axes have equal scale: the shorter range is
// widened about its centre until one unit has the same length on both.
//
// It returns *InputError, and writes nothing, for a bad triangulation
// (see Triangulation), a value count other than the node count, NaN or
// infinite values or levels, a mesh of zero extent in x or y, or
// ValueMin ≥ ValueMax when they are set.
func ColourMap(path string, tri Triangulation, values []float64, opts MapOptions) error {
	c, _, err := renderColourMap(tri, values, opts)
	if err != nil {
		return err
	}
	return writePNG(path, c)
}

func renderColourMap(tri Triangulation, values []float64, opts MapOptions) (*vgimg.Canvas, rasterFrame, error) {
	const fn = "ColourMap"
	var frame rasterFrame
	w, h, err := imageSize(fn, opts.Width, opts.Height, DefaultWidth, DefaultHeight)
	if err != nil {
		return nil, frame, err
	}
	if err := tri.validate(fn, values); err != nil {
		return nil, frame, err
	}
	bx0, bx1 := minMax(tri.X)
	by0, by1 := minMax(tri.Y)
	if !(bx0 < bx1 && by0 < by1) {
		return nil, frame, &InputError{Func: fn, Item: "triangulation", Msg: fmt.Sprintf("zero extent: x in [%g, %g], y in [%g, %g]", bx0, bx1, by0, by1)}
	}

	// Colour range.
	lo, hi := minMax(values)
	if opts.ValueMin != 0 || opts.ValueMax != 0 {
		lo, hi = opts.ValueMin, opts.ValueMax
		if !(lo < hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
			return nil, frame, &InputError{Func: fn, Item: "colour range", Msg: fmt.Sprintf("ValueMin = %g, ValueMax = %g, want finite ValueMin < ValueMax", lo, hi)}
		}
	} else if lo == hi {
		d := 0.5 * math.Max(1, math.Abs(lo)) // a constant field: centre it
		lo, hi = lo-d, hi+d
	}
	levels := opts.LevelValues
	if len(levels) == 0 {
		switch n := opts.Levels; {
		case n == 0:
			levels = EvenLevels(lo, hi, DefaultLevels)
		case n > 0:
			if n > 1000 {
				return nil, frame, &InputError{Func: fn, Item: "levels", Msg: fmt.Sprintf("%d levels, want at most 1000", n)}
			}
			levels = EvenLevels(lo, hi, n)
		}
	}
	if err := checkFinite(fn, "", "LevelValues", levels); err != nil {
		return nil, frame, err
	}
	cm := opts.Palette
	if cm == nil {
		cm = Viridis()
	}
	// Set the range in an order that never leaves min > max.
	cm.SetMax(math.Max(hi, cm.Max()))
	cm.SetMin(lo)
	cm.SetMax(hi)

	s := scale(w)
	lineCol := opts.ContourColour
	if lineCol == nil {
		lineCol = color.Black
	}
	lineStyle := draw.LineStyle{Color: lineCol, Width: vg.Length(0.9 * s)}

	p := newPlot(opts.Title, orDefault(opts.XLabel, "x"), orDefault(opts.YLabel, "y"), w)
	raster := &fieldRaster{
		tr: tri, u: values, lut: colourLUT(cm, lo, hi), lo: lo, hi: hi,
		xmin: bx0, xmax: bx1, ymin: by0, ymax: by1, himg: h,
	}
	p.Add(raster)
	var segs []Segment
	for _, l := range levels {
		segs = appendContour(segs, tri, values, l)
	}
	p.Add(&contourLines{segs: segs, style: lineStyle})

	// Colour bar: its own plot to the right, as tall as the mesh is drawn.
	cb := gplot.New()
	cb.HideX()
	cb.Y.Padding = 0
	cb.Y.Label.Text = opts.ValueLabel
	cb.Y.Label.TextStyle.Font.Size = vg.Length(12 * s)
	cb.Y.Tick.Label.Font.Size = vg.Length(10 * s)
	cb.Y.Tick.Marker = linearTicks{}
	cb.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true, Colors: 256}, &levelMarks{levels: levels, style: lineStyle})

	cv := newCanvas(w, h)
	full := margin(draw.New(cv), w)
	barW := pxToPt(24 * s)
	gap := pxToPt(16 * s)
	probe := draw.Crop(full, full.Size().X/2, 0, 0, 0)
	axisW := probe.Size().X - cb.DataCanvas(probe).Size().X
	main := draw.Crop(full, 0, -(axisW + barW + gap), 0, 0)
	equalAspect(p, main, bx0, bx1, by0, by1)

	dc := p.DataCanvas(main)
	_, trY := p.Transforms(&dc)
	bar := draw.Crop(full, full.Size().X-(axisW+barW), 0, 0, 0)
	bdc := cb.DataCanvas(bar)
	bar.Min.Y += trY(by0) - bdc.Min.Y
	bar.Max.Y += trY(by1) - bdc.Max.Y

	p.Draw(main)
	cb.Draw(bar)
	return cv, raster.frame, nil
}

// equalAspect sets the axis ranges of p so that one data unit has the
// same length in x and y on canvas c, widening the shorter side of the
// box [x0, x1]×[y0, y1] about its centre. Tick labels change with the
// ranges and so does the data area; a few rounds settle it.
func equalAspect(p *gplot.Plot, c draw.Canvas, x0, x1, y0, y1 float64) {
	xc, yc := (x0+x1)/2, (y0+y1)/2
	var last vg.Point
	for range 6 {
		sz := p.DataCanvas(c).Size()
		if sz == last {
			return
		}
		last = sz
		u := math.Max((x1-x0)/float64(sz.X), (y1-y0)/float64(sz.Y)) // data units per point
		p.X.Min, p.X.Max = xc-u*float64(sz.X)/2, xc+u*float64(sz.X)/2
		p.Y.Min, p.Y.Max = yc-u*float64(sz.Y)/2, yc+u*float64(sz.Y)/2
		// Keep the mesh box inside despite rounding.
		p.X.Min, p.X.Max = math.Min(p.X.Min, x0), math.Max(p.X.Max, x1)
		p.Y.Min, p.Y.Max = math.Min(p.Y.Min, y0), math.Max(p.Y.Max, y1)
	}
}

func minMax(v []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	return lo, hi
}
