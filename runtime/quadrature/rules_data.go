package quadrature

import "math"

// Orbit is one symmetry orbit of a fully symmetric simplex rule: a point in
// barycentric coordinates and the weight of every point of the orbit (all
// distinct permutations of Bary). Weights of a rule sum to 1 over all its
// points; they are scaled by the reference-simplex measure when a Rule is
// built.
type Orbit struct {
	Bary   []float64
	Weight float64
}

// SymmetricRule is a published fully symmetric simplex rule.
type SymmetricRule struct {
	Degree int
	Orbits []Orbit
}

var sqrt15 = math.Sqrt(15)

// DunavantTriangle holds the triangle rules of Dunavant (1985, IJNME 21,
// 1129–1148), Table I, in barycentric coordinates with weights summing to
// 1. Degrees 1–5 are the values listed in testdata/REFERENCES.md (repository root)
// (degree 5 in its closed form: a = (6±√15)/21, w = (155±√15)/1200).
// Degrees 6 (12 points) and 8 (16 points) are recalled from memory of the
// published table (15 digits); the exactness tests in this package prove
// them to 1e-13.
var DunavantTriangle = []SymmetricRule{
	{1, []Orbit{{[]float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, 1}}},
	{2, []Orbit{{[]float64{2.0 / 3, 1.0 / 6, 1.0 / 6}, 1.0 / 3}}},
	{3, []Orbit{
		{[]float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, -9.0 / 16},
		{[]float64{3.0 / 5, 1.0 / 5, 1.0 / 5}, 25.0 / 48},
	}},
	{4, []Orbit{
		{[]float64{0.108103018168070, 0.445948490915965, 0.445948490915965}, 0.223381589678011},
		{[]float64{0.816847572980459, 0.091576213509771, 0.091576213509771}, 0.109951743655322},
	}},
	{5, []Orbit{
		{[]float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, 9.0 / 40},
		{[]float64{1 - 2*(6+sqrt15)/21, (6 + sqrt15) / 21, (6 + sqrt15) / 21}, (155 + sqrt15) / 1200},
		{[]float64{1 - 2*(6-sqrt15)/21, (6 - sqrt15) / 21, (6 - sqrt15) / 21}, (155 - sqrt15) / 1200},
	}},
	// From memory (see above).
	{6, []Orbit{
		{[]float64{0.501426509658179, 0.249286745170910, 0.249286745170910}, 0.116786275726379},
		{[]float64{0.873821971016996, 0.063089014491502, 0.063089014491502}, 0.050844906370207},
		{[]float64{0.053145049844817, 0.310352451033784, 0.636502499121399}, 0.082851075618374},
	}},
	// From memory (see above).
	{8, []Orbit{
		{[]float64{1.0 / 3, 1.0 / 3, 1.0 / 3}, 0.144315607677787},
		{[]float64{0.081414823414554, 0.459292588292723, 0.459292588292723}, 0.095091634267285},
		{[]float64{0.658861384496480, 0.170569307751760, 0.170569307751760}, 0.103217370534718},
		{[]float64{0.898905543365938, 0.050547228317031, 0.050547228317031}, 0.032458497623198},
		{[]float64{0.008394777409958, 0.263112829634638, 0.728492392955404}, 0.027230314174435},
	}},
}

// keast2a is (5-√5)/20 = 0.1381966011250105, Keast's degree-2 point.
var keast2a = (5 - math.Sqrt(5)) / 20

// KeastTetrahedron holds the tetrahedron rules of Keast (1986, CMAME 55,
// 339–348) of degrees 1–4 as listed in testdata/REFERENCES.md (repository root), in
// barycentric coordinates with weights summing to 1. The degree-3 and
// degree-4 rules have a negative centroid weight, as published.
var KeastTetrahedron = []SymmetricRule{
	{1, []Orbit{{[]float64{0.25, 0.25, 0.25, 0.25}, 1}}},
	{2, []Orbit{{[]float64{keast2a, keast2a, keast2a, 1 - 3*keast2a}, 0.25}}},
	{3, []Orbit{
		{[]float64{0.25, 0.25, 0.25, 0.25}, -4.0 / 5},
		{[]float64{1.0 / 6, 1.0 / 6, 1.0 / 6, 0.5}, 9.0 / 20},
	}},
	{4, []Orbit{
		{[]float64{0.25, 0.25, 0.25, 0.25}, -148.0 / 1875},
		{[]float64{1.0 / 14, 1.0 / 14, 1.0 / 14, 11.0 / 14}, 343.0 / 7500},
		{[]float64{0.3994035761667992, 0.3994035761667992, 0.5 - 0.3994035761667992, 0.5 - 0.3994035761667992}, 56.0 / 375},
	}},
}
