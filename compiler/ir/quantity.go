package ir

// Quantity is a quantity of the cell, of its facet or of the
// discretisation that expressions may read by name: the typed table
// behind the model spellings diam(K) and meas(K) (the diameter and the
// measure of the cell K), G, n, time_step and inverse_estimate. The checker resolves names through it, lowering writes
// CellQ leaves of it, and the evaluators and back ends switch on it.
type Quantity uint8

// The quantities.
const (
	NoQuantity Quantity = iota
	// Diameter is the largest distance between two vertices of the cell
	// (its longest edge on simplices, a diagonal on quadrilaterals and
	// hexahedra).
	Diameter
	// Volume is the length, area or volume of the cell.
	Volume
	// Metric is the element metric tensor G = J⁻ᵀJ⁻¹ of the map from the
	// reference cell (Bazilevs et al. 2007, CMAME 197).
	Metric
	// Normal is the outward unit normal n of a boundary facet; it appears
	// in derived boundary integrals only.
	Normal
	// TimeStep is the Δt of a time-stepped (backward Euler) form.
	TimeStep
	// InverseEstimate is C_inv = sup h²‖Δv‖²/‖∇v‖² of the unknowns'
	// elements on their reference cells; lowering replaces it by its
	// number.
	InverseEstimate
	numQuantities
)

// Variation says over what a quantity varies, which decides where
// evaluators and generated kernels compute it.
type Variation uint8

const (
	// Fixed quantities are numbers once the model is lowered.
	Fixed Variation = iota
	// PerCell quantities are constant in each cell.
	PerCell
	// PerStep quantities change with the time step only.
	PerStep
	// PerPoint quantities vary inside a cell or facet (G on non-affine
	// cells, n on curved facets).
	PerPoint
)

type quantityInfo struct {
	name      string
	rank      int // in dimensions 2 and 3; G has rank 2 in 1D too
	variation Variation
	derived   bool // appears only in derived forms, not in models
}

var quantities = [numQuantities]quantityInfo{
	Diameter:        {name: "diam(K)", variation: PerCell},
	Volume:          {name: "meas(K)", variation: PerCell},
	Metric:          {name: "G", rank: 2, variation: PerPoint},
	Normal:          {name: "n", rank: 1, variation: PerPoint, derived: true},
	TimeStep:        {name: "time_step", variation: PerStep},
	InverseEstimate: {name: "inverse_estimate", variation: Fixed},
}

func (q Quantity) String() string {
	if q == NoQuantity || q >= numQuantities {
		return "no quantity"
	}
	return quantities[q].name
}

// Rank is 0 for scalars, 1 for the normal and 2 for the metric tensor.
func (q Quantity) Rank() int { return quantities[q].rank }

// Variation says over what q varies.
func (q Quantity) Variation() Variation { return quantities[q].variation }

// QuantityByName resolves a model name. Quantities that appear only in
// derived forms (the normal n) are not found.
func QuantityByName(name string) (Quantity, bool) {
	for q := Quantity(1); q < numQuantities; q++ {
		if quantities[q].name == name && !quantities[q].derived {
			return q, true
		}
	}
	return NoQuantity, false
}

// QuantityNames lists the names a model may use, in table order.
func QuantityNames() []string {
	var out []string
	for q := Quantity(1); q < numQuantities; q++ {
		if !quantities[q].derived {
			out = append(out, quantities[q].name)
		}
	}
	return out
}
