package plot

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"

	gplot "gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/formwright/formwright/runtime/output"
)

// dpi is the canvas resolution: gonum's vgimg default, so sizes in pixels
// and in points relate by 96/72.
const dpi = vgimg.DefaultDPI

// Image sizes in pixels: the defaults used when a size is zero, and the
// bounds outside which a size is refused (a plot smaller than the minimum
// has no room for its axes; the maximum keeps a typo from allocating
// gigabytes).
const (
	DefaultWidth  = 800
	DefaultHeight = 600
	MinSize       = 120
	MaxSize       = 8000
)

// Corner says where a legend goes inside the data area.
type Corner int

// Legend positions. The zero value, AutoCorner, is each plot's own
// default: top right for Line, top left for Convergence (where small h
// and large errors leave that corner empty).
const (
	AutoCorner Corner = iota
	TopRight
	TopLeft
	BottomRight
	BottomLeft
)

// place sets the legend position of p, def standing in for AutoCorner.
func (c Corner) place(p *gplot.Plot, def Corner) {
	if c == AutoCorner {
		c = def
	}
	p.Legend.Top = c == TopRight || c == TopLeft
	p.Legend.Left = c == TopLeft || c == BottomLeft
}

// pxToPt converts a length in pixels to a gonum length (points).
func pxToPt(px float64) vg.Length { return vg.Length(px * 72 / dpi) }

// imageSize resolves a requested size: zero means the default.
func imageSize(fn string, w, h, dw, dh int) (int, int, error) {
	if w == 0 {
		w = dw
	}
	if h == 0 {
		h = dh
	}
	if w < MinSize || h < MinSize || w > MaxSize || h > MaxSize {
		return 0, 0, &InputError{Func: fn, Item: "size", Msg: fmt.Sprintf("%d×%d pixels; each side must be in [%d, %d] (0 for the default)", w, h, MinSize, MaxSize)}
	}
	return w, h, nil
}

// newCanvas returns a white canvas of exactly w×h pixels.
func newCanvas(w, h int) *vgimg.Canvas {
	return vgimg.NewWith(vgimg.UseWH(pxToPt(float64(w)), pxToPt(float64(h))), vgimg.UseDPI(dpi))
}

// writePNG encodes c as PNG into path, atomically.
func writePNG(path string, c *vgimg.Canvas) error {
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return err
	}
	return output.WriteFileAtomic(path, func(w io.Writer) error {
		_, err := w.Write(output.TagPNG(buf.Bytes()))
		return err
	})
}

// checkFinite returns an error naming the first NaN or infinite entry.
func checkFinite(fn, item, name string, v []float64) error {
	for i, x := range v {
		if math.IsNaN(x) {
			return &InputError{Func: fn, Item: item, Msg: fmt.Sprintf("%s[%d] is NaN", name, i)}
		}
		if math.IsInf(x, 0) {
			return &InputError{Func: fn, Item: item, Msg: fmt.Sprintf("%s[%d] is %v", name, i, x)}
		}
	}
	return nil
}

// newPlot returns a gonum plot with the title and labels set and font
// sizes scaled to the image: 12 pt text on an 800-pixel-wide image, more
// on larger ones, never below 9 pt.
func newPlot(title, xlabel, ylabel string, w int) *gplot.Plot {
	p := gplot.New()
	s := scale(w)
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = vg.Length(14 * s)
	p.Title.Padding = vg.Length(6 * s)
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	for _, a := range []*gplot.Axis{&p.X, &p.Y} {
		a.Tick.Marker = linearTicks{}
		a.Label.TextStyle.Font.Size = vg.Length(12 * s)
		a.Tick.Label.Font.Size = vg.Length(10 * s)
	}
	p.Legend.TextStyle.Font.Size = vg.Length(11 * s)
	p.Legend.ThumbnailWidth = vg.Length(30 * s)
	return p
}

// seriesColours are the colour-blind-safe colours of Okabe & Ito (2008,
// "Color Universal Design", J*FLY; hex values recalled from memory) in the
// order used here; black is kept for exact solutions and reference lines
// and yellow is left out for its low contrast on white.
var seriesColours = []color.RGBA{
	{0x00, 0x72, 0xB2, 0xff}, // blue
	{0xD5, 0x5E, 0x00, 0xff}, // vermillion
	{0x00, 0x9E, 0x73, 0xff}, // bluish green
	{0xCC, 0x79, 0xA7, 0xff}, // reddish purple
	{0xE6, 0x9F, 0x00, 0xff}, // orange
	{0x56, 0xB4, 0xE9, 0xff}, // sky blue
}

// seriesShapes are the marker shapes, filled ones first.
var seriesShapes = []draw.GlyphDrawer{
	draw.CircleGlyph{}, draw.BoxGlyph{}, draw.TriangleGlyph{},
	draw.RingGlyph{}, draw.SquareGlyph{}, draw.PyramidGlyph{},
	draw.CrossGlyph{}, draw.PlusGlyph{},
}

// seriesColour returns the colour of the i-th series.
func seriesColour(i int) color.RGBA { return seriesColours[i%len(seriesColours)] }

// seriesShape returns the marker of the i-th series: colours cycle
// faster than shapes, so two series share both only after 48.
func seriesShape(i int) draw.GlyphDrawer {
	return seriesShapes[(i+i/len(seriesColours))%len(seriesShapes)]
}

// margin crops a few pixels off every side of the canvas so text does
// not touch the image border.
func margin(c draw.Canvas, w int) draw.Canvas {
	m := pxToPt(math.Max(6, 10*float64(w)/800))
	return draw.Crop(c, m, -m, m, -m)
}

// scale is the factor applied to font sizes and line widths: 1 on an
// 800-pixel-wide image, in proportion on wider ones, never below 0.75.
func scale(w int) float64 { return math.Max(0.75, float64(w)/800) }
