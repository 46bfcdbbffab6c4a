package plot

// InputError reports data that cannot be drawn: an empty or mismatched
// series, a NaN or infinite value, a non-positive value on a log axis, a
// node index out of range, an impossible image size.
type InputError struct {
	Func string // the exported function that refused: "Line", "ColourMap", ...
	Item string // what was wrong, e.g. `series "SUPG"` or "values"
	Msg  string // why, e.g. "Y[3] is NaN"
}

func (e *InputError) Error() string {
	s := "plot: " + e.Func
	if e.Item != "" {
		s += ": " + e.Item
	}
	return s + ": " + e.Msg
}
