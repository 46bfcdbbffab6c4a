package plot

import (
	"image/color"
	"math"
	"testing"
)

// lightness returns CIE 1976 L* of an 8-bit sRGB colour, computed here
// independently of gonum: sRGB decoding per IEC 61966-2-1, Y from the
// Rec. 709 / sRGB primaries (0.2126, 0.7152, 0.0722), L* = 116 f(Y) − 16
// with the CIE cube-root function and its linear toe below (6/29)³.
func lightness(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	lin := func(v uint32) float64 {
		s := float64(v>>8) / 255
		if s <= 0.04045 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	y := 0.2126*lin(r) + 0.7152*lin(g) + 0.0722*lin(b)
	const d = 6.0 / 29
	f := math.Cbrt(y)
	if y <= d*d*d {
		f = y/(3*d*d) + 4.0/29
	}
	return 116*f - 16
}

// TestViridisLightness: the default palette starts and ends at the
// viridis end colours #440154 and #fde725 (van der Walt & Smith 2015;
// recalled from memory, see viridisAnchors) within one 8-bit level, and
// its lightness L* is linear in the value within 0.6 L* (the 8-bit
// rounding of a colour moves L* by up to ~0.4; the rest allows for the
// slightly different white point and matrices of gonum's conversion;
// our own bound; measured 0.30 at 1001 points). A linear L* is what "perceptually uniform in
// lightness" means here (Moreland 2016).
func TestViridisLightness(t *testing.T) {
	p := Viridis()
	if p.Min() != 0 || p.Max() != 1 {
		t.Fatalf("range [%g, %g], want [0, 1]", p.Min(), p.Max())
	}
	at := func(v float64) color.Color {
		c, err := p.At(v)
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	for _, c := range []struct {
		v    float64
		want [3]int
	}{{0, [3]int{0x44, 0x01, 0x54}}, {1, [3]int{0xfd, 0xe7, 0x25}}} {
		if got := rgba8(at(c.v)); maxChannelDiff(got, c.want) > 1 {
			t.Errorf("At(%g) = %v, want %v", c.v, got, c.want)
		}
	}
	l0, l1 := lightness(at(0)), lightness(at(1))
	if !(l1 > l0+60) {
		t.Errorf("L* from %.1f to %.1f: want a rise of more than 60", l0, l1)
	}
	prev := -1.0
	for i := 0; i <= 100; i++ {
		v := float64(i) / 100
		l := lightness(at(v))
		if want := l0 + v*(l1-l0); math.Abs(l-want) > 0.6 {
			t.Errorf("L*(%g) = %.2f, want %.2f ± 0.6", v, l, want)
		}
		if l <= prev {
			t.Errorf("L* not increasing at %g", v)
		}
		prev = l
	}
}
