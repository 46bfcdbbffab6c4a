package plot

import (
	"image/color"

	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
)

// viridisAnchors are five colours of the viridis colour map at 0, ¼, ½,
// ¾ and 1 (van der Walt & Smith 2015, the default colour map of
// matplotlib 2.0, designed with Smith's "viscm" in CAM02-UCS; hex values
// recalled from memory, not re-checked against the published table).
var viridisAnchors = []color.Color{
	color.RGBA{0x44, 0x01, 0x54, 0xff},
	color.RGBA{0x3b, 0x52, 0x8b, 0xff},
	color.RGBA{0x21, 0x91, 0x8c, 0xff},
	color.RGBA{0x5e, 0xc9, 0x62, 0xff},
	color.RGBA{0xfd, 0xe7, 0x25, 0xff},
}

// Viridis returns the default colour map of ColourMap: a viridis-like map
// from dark purple through blue and green to yellow, built by
// interpolating the five anchor colours above in CIELAB with lightness L*
// linear in the value (the luminance-linear construction of Moreland,
// "Why we use bad color maps and what you can do about it", HVEI 2016, as
// implemented by gonum's palette/moreland). It is therefore not the
// 256-entry viridis table itself but follows it closely, and its
// lightness rises uniformly, which is what keeps it readable in grey and
// for colour-blind readers. Its range is [0, 1]; ColourMap sets it.
func Viridis() palette.ColorMap {
	m, err := moreland.NewLuminance(viridisAnchors)
	if err != nil {
		panic("plot: viridis anchors are not increasing in lightness: " + err.Error())
	}
	m.SetMax(1)
	return m
}
