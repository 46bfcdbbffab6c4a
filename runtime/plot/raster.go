package plot

import (
	"image"
	"image/color"
	"math"

	gplot "gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// lutSize is the number of entries of the colour look-up table. The
// value step (hi − lo)/4095 is far below what an 8-bit colour channel
// resolves, so the table changes no pixel by more than one level against
// calling the colour map at every pixel.
const lutSize = 4096

// colourLUT tabulates cm (with its range already set to [lo, hi]).
func colourLUT(cm palette.ColorMap, lo, hi float64) []color.RGBA {
	lut := make([]color.RGBA, lutSize)
	for k := range lut {
		v := lo + (hi-lo)*float64(k)/(lutSize-1)
		if k == lutSize-1 {
			v = hi
		}
		c, err := cm.At(v)
		if err != nil {
			panic("plot: colour map refuses a value in its own range: " + err.Error())
		}
		r, g, b, a := c.RGBA()
		lut[k] = color.RGBA{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8), uint8(a >> 8)}
	}
	return lut
}

// rasterFrame records where the raster went: the image pixel of its
// top-left corner, its size, and the data coordinates of pixel centres,
// x = x0 + (i + ½) dx and y = y0 − (j + ½) dy for raster column i and
// row j (rows run downwards, like image rows).
type rasterFrame struct {
	col0, row0     int
	nx, ny         int
	x0, dx, y0, dy float64
}

// centre returns the data coordinates of the centre of image pixel
// (col, row).
func (f *rasterFrame) centre(col, row int) (x, y float64) {
	return f.x0 + (float64(col-f.col0)+0.5)*f.dx, f.y0 - (float64(row-f.row0)+0.5)*f.dy
}

// pixel returns the image pixel whose centre is nearest to (x, y).
func (f *rasterFrame) pixel(x, y float64) (col, row int) {
	return f.col0 + int(math.Floor((x-f.x0)/f.dx)), f.row0 + int(math.Floor((f.y0-y)/f.dy))
}

// fieldRaster is a gonum plotter that paints a piecewise-linear field on
// a triangulation pixel by pixel: every pixel whose centre lies in a
// triangle gets the colour of the linear interpolant there; pixels
// outside the mesh stay transparent.
type fieldRaster struct {
	tr                     Triangulation
	u                      []float64
	lut                    []color.RGBA
	lo, hi                 float64
	xmin, xmax, ymin, ymax float64
	himg                   int         // height of the whole image in pixels
	frame                  rasterFrame // set by Plot
}

// DataRange implements plot.DataRanger.
func (r *fieldRaster) DataRange() (xmin, xmax, ymin, ymax float64) {
	return r.xmin, r.xmax, r.ymin, r.ymax
}

// Plot implements plot.Plotter.
func (r *fieldRaster) Plot(c draw.Canvas, p *gplot.Plot) {
	res, himg := float64(dpi), r.himg
	trX, trY := p.Transforms(&c)
	// Raster bounds in device pixels, y upwards.
	ix0 := int(math.Floor(trX(r.xmin).Dots(res)))
	ix1 := int(math.Ceil(trX(r.xmax).Dots(res)))
	iy0 := int(math.Floor(trY(r.ymin).Dots(res)))
	iy1 := int(math.Ceil(trY(r.ymax).Dots(res)))
	nx, ny := ix1-ix0, iy1-iy0
	if nx <= 0 || ny <= 0 {
		return
	}
	// Device pixel → data coordinates (linear axes).
	cx0, cx1 := c.Min.X.Dots(res), c.Max.X.Dots(res)
	cy0, cy1 := c.Min.Y.Dots(res), c.Max.Y.Dots(res)
	dx := (p.X.Max - p.X.Min) / (cx1 - cx0)
	dy := (p.Y.Max - p.Y.Min) / (cy1 - cy0)
	r.frame = rasterFrame{
		col0: ix0, row0: himg - iy1, nx: nx, ny: ny,
		x0: p.X.Min + (float64(ix0)-cx0)*dx, dx: dx,
		y0: p.Y.Min + (float64(iy1)-cy0)*dy, dy: dy,
	}
	img := image.NewRGBA(image.Rect(0, 0, nx, ny))
	r.paint(img)
	toPt := func(d int) vg.Length { return vg.Length(float64(d) * 72 / res) }
	c.DrawImage(vg.Rectangle{
		Min: vg.Point{X: toPt(ix0), Y: toPt(iy0)},
		Max: vg.Point{X: toPt(ix1), Y: toPt(iy1)},
	}, img)
}

// paint fills img (the raster of r.frame) triangle by triangle. The inner
// loops do not allocate.
func (r *fieldRaster) paint(img *image.RGBA) {
	f := &r.frame
	scale := float64(lutSize-1) / (r.hi - r.lo)
	X, Y, u := r.tr.X, r.tr.Y, r.u
	for _, t := range r.tr.Triangles {
		x1, y1, x2, y2, x3, y3 := X[t[0]], Y[t[0]], X[t[1]], Y[t[1]], X[t[2]], Y[t[2]]
		det := (y2-y3)*(x1-x3) + (x3-x2)*(y1-y3)
		if det == 0 {
			continue // no area, no pixels
		}
		// Barycentric coordinates λ1, λ2 as affine functions of (x, y).
		a1, b1 := (y2-y3)/det, (x3-x2)/det
		a2, b2 := (y3-y1)/det, (x1-x3)/det
		// Pixel index range covering the bounding box.
		i0 := max(0, int(math.Floor((min(x1, x2, x3)-f.x0)/f.dx-0.5)))
		i1 := min(f.nx-1, int(math.Ceil((max(x1, x2, x3)-f.x0)/f.dx-0.5)))
		j0 := max(0, int(math.Floor((f.y0-max(y1, y2, y3))/f.dy-0.5)))
		j1 := min(f.ny-1, int(math.Ceil((f.y0-min(y1, y2, y3))/f.dy-0.5)))
		// A pixel centre on a shared edge may be claimed by either
		// neighbour; the field is continuous, so either gives its colour.
		const eps = 1e-12
		for j := j0; j <= j1; j++ {
			y := f.y0 - (float64(j)+0.5)*f.dy
			row := img.Pix[j*img.Stride:]
			for i := i0; i <= i1; i++ {
				x := f.x0 + (float64(i)+0.5)*f.dx
				l1 := a1*(x-x3) + b1*(y-y3)
				l2 := a2*(x-x3) + b2*(y-y3)
				l3 := 1 - l1 - l2
				if l1 < -eps || l2 < -eps || l3 < -eps {
					continue
				}
				v := l1*u[t[0]] + l2*u[t[1]] + l3*u[t[2]]
				k := int((v-r.lo)*scale + 0.5)
				k = max(0, min(lutSize-1, k))
				c := r.lut[k]
				o := 4 * i
				row[o], row[o+1], row[o+2], row[o+3] = c.R, c.G, c.B, c.A
			}
		}
	}
}

// contourLines is a gonum plotter that strokes precomputed segments.
type contourLines struct {
	segs  []Segment
	style draw.LineStyle
}

// Plot implements plot.Plotter.
func (l *contourLines) Plot(c draw.Canvas, p *gplot.Plot) {
	if len(l.segs) == 0 {
		return
	}
	trX, trY := p.Transforms(&c)
	var path vg.Path
	for _, s := range l.segs {
		path.Move(vg.Point{X: trX(s.X0), Y: trY(s.Y0)})
		path.Line(vg.Point{X: trX(s.X1), Y: trY(s.Y1)})
	}
	c.SetLineStyle(l.style)
	c.Stroke(path)
}

// levelMarks is a gonum plotter for the colour bar: a horizontal line
// across the bar at each contour level.
type levelMarks struct {
	levels []float64
	style  draw.LineStyle
}

// Plot implements plot.Plotter.
func (m *levelMarks) Plot(c draw.Canvas, p *gplot.Plot) {
	_, trY := p.Transforms(&c)
	for _, v := range m.levels {
		y := trY(v)
		c.StrokeLine2(m.style, c.Min.X, y, c.Max.X, y)
	}
}
