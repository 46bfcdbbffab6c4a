package plot

import (
	"math"
	"strconv"

	gplot "gonum.org/v1/plot"
)

// linearTicks marks a linear axis with about five labelled major ticks at
// multiples of a "nice" step (1, 2 or 5 times a power of ten, the usual
// choice; common practice, no source) and unlabelled minor ticks between
// them. Labels have as many decimals as the step needs, so 0 reads "0"
// and never "-0".
type linearTicks struct{}

// Ticks implements plot.Ticker.
func (linearTicks) Ticks(lo, hi float64) []gplot.Tick {
	if !(hi > lo) {
		return []gplot.Tick{{Value: lo, Label: strconv.FormatFloat(lo, 'g', 6, 64)}}
	}
	step, minor := niceStep((hi - lo) / 5)
	prec := max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	exp := math.Abs(lo) >= 1e5 || math.Abs(hi) >= 1e5 || prec > 5
	var ts []gplot.Tick
	k0 := int(math.Ceil(lo/step - 1e-9))
	k1 := int(math.Floor(hi/step + 1e-9))
	for k := k0; k <= k1; k++ {
		v := float64(k) * step
		var label string
		if exp {
			label = strconv.FormatFloat(v, 'g', 4, 64)
		} else {
			label = strconv.FormatFloat(v, 'f', prec, 64)
		}
		ts = append(ts, gplot.Tick{Value: v, Label: label})
	}
	m0 := int(math.Ceil(lo/minor - 1e-9))
	m1 := int(math.Floor(hi/minor + 1e-9))
	ratio := int(math.Round(step / minor))
	for m := m0; m <= m1; m++ {
		if m%ratio != 0 {
			ts = append(ts, gplot.Tick{Value: float64(m) * minor})
		}
	}
	return ts
}

// niceStep returns the 1-2-5 step nearest to raw on a log scale (the
// switch points are the geometric means √2, √10, √50) and a minor step
// that divides it into 4 or 5 intervals.
func niceStep(raw float64) (step, minor float64) {
	p := math.Pow10(int(math.Floor(math.Log10(raw))))
	switch f := raw / p; {
	case f < math.Sqrt2:
		return p, p / 5
	case f < math.Sqrt(10):
		return 2 * p, p / 2
	case f < math.Sqrt(50):
		return 5 * p, p
	default:
		return 10 * p, 2 * p
	}
}
