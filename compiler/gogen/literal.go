package gogen

import (
	"math"
	"strconv"
	"strings"
)

// Constants of the generated code. A printer writes a float64 constant v
// in one of three ways, all of which read back as exactly v (in Go an
// untyped constant expression is exact and rounded once to float64; in C
// the division of two exactly representable integers is rounded once):
//
//   - an integer as "2.0";
//   - a rational p/q whose decimal expansion does not terminate (q has a
//     prime factor other than 2 and 5) as "p.0 / q", e.g. 1.0 / 6 for a
//     reference integral of P1 basis functions, when q ≤ maxDenominator
//     and float64(p)/float64(q) == v;
//   - anything else as the shortest decimal that reads back as v
//     (strconv.FormatFloat with precision −1), e.g. 0.01 or
//     2.23606797749979.
//
// The rational is found from the continued fraction of v: if v is the
// double nearest to p/q with q ≤ 10⁶, then
// |v − p/q| ≤ 2⁻⁵³|v| < 1/(2q²) for |v| < 4·10³, so p/q is a convergent
// (Legendre's theorem; Hardy & Wright, An Introduction to the Theory of
// Numbers, Thm. 184 [memory]); the first convergent that reads back as v
// is taken.

// maxDenominator bounds the denominators of printed rationals.
const maxDenominator = 1_000_000

// litKind says how a constant is written.
type litKind uint8

const (
	litDecimal  litKind = iota // text is the shortest round-trip decimal
	litInteger                 // text is "n.0"
	litRational                // p.0 / q
	litNaN
	litPosInf
	litNegInf
)

// literal is the printed form of a float64 constant, shared by the
// printers so that they write the same numbers.
type literal struct {
	kind litKind
	neg  bool   // written with a leading minus
	text string // the magnitude (decimal or integer kinds)
	p, q int64  // the magnitude p/q (rational kind)
}

func literalOf(v float64) literal {
	switch {
	case math.IsNaN(v):
		return literal{kind: litNaN}
	case math.IsInf(v, 1):
		return literal{kind: litPosInf}
	case math.IsInf(v, -1):
		return literal{kind: litNegInf}
	}
	l := literal{neg: v < 0 || (v == 0 && math.Signbit(v))}
	a := math.Abs(v)
	if a == math.Trunc(a) && a < 1e15 {
		l.kind = litInteger
		l.text = strconv.FormatFloat(a, 'f', -1, 64) + ".0"
		return l
	}
	if p, q, ok := ratio(a); ok && !terminating(q) {
		l.kind, l.p, l.q = litRational, p, q
		return l
	}
	s := strconv.FormatFloat(a, 'g', -1, 64)
	if !strings.ContainsAny(s, ".eE") {
		s += ".0"
	}
	l.kind, l.text = litDecimal, s
	return l
}

// terminating reports whether 1/q has a finite decimal expansion.
func terminating(q int64) bool {
	for q%2 == 0 {
		q /= 2
	}
	for q%5 == 0 {
		q /= 5
	}
	return q == 1
}

// ratio returns p/q, q ≤ maxDenominator, with float64(p)/float64(q) == v
// for a positive finite v that is not an integer, if it finds one. The
// convergents come from the continued fraction of v computed in floating
// point, whose few steps up to q = 10⁶ lose far less than the precision
// the partial quotients need; the exact test decides.
func ratio(v float64) (p, q int64, ok bool) {
	if !(v > 0) || v >= 4e3 || v < 1e-6 {
		return 0, 0, false
	}
	h0, h1 := 0.0, 1.0
	k0, k1 := 1.0, 0.0
	x := v
	for i := 0; i < 64; i++ {
		t := math.Floor(x)
		h0, h1 = h1, t*h1+h0
		k0, k1 = k1, t*k1+k0
		if k1 > maxDenominator {
			break
		}
		if h1/k1 == v {
			return int64(h1), int64(k1), true
		}
		if x == t {
			break
		}
		x = 1 / (x - t)
	}
	return 0, 0, false
}

// snapDenominator and snapULPs bound the rationals a computed reference
// integral is rounded to (snapRational).
const (
	snapDenominator = 10_000
	snapULPs        = 16
)

// snapRational returns the double nearest to p/q when v lies within
// snapULPs units in the last place of a rational p/q with q ≤
// snapDenominator, and v otherwise. The reference integrals of pairs of
// polynomial basis derivatives are rational (the quadrature rule
// integrates them exactly) with small denominators (1/6, −1/2520); the
// sum over the quadrature points, whose coordinates and basis values are
// rounded, misses them by an ulp or two. Rationals with q ≤ 10⁴ are about
// 3·10⁻⁸ apart (the Farey sequence of order N has about 3N²/π² terms), so
// a value that is not such a rational lands within 16 ulps (≈ 4·10⁻¹⁵|v|)
// of one with probability about 10⁻⁷, and then moves by less than its own
// round-off.
func snapRational(v float64) float64 {
	a := math.Abs(v)
	if !(a > 0) || a >= 4e3 || math.IsInf(a, 0) {
		return v
	}
	tol := snapULPs * (math.Nextafter(a, math.Inf(1)) - a)
	// Convergents h/k of the continued fraction of a, in floating point:
	// their error is far below tol for the few steps that reach k ≤ 10⁴.
	h0, h1 := 0.0, 1.0
	k0, k1 := 1.0, 0.0
	x := a
	for i := 0; i < 40; i++ {
		t := math.Floor(x)
		h0, h1 = h1, t*h1+h0
		k0, k1 = k1, t*k1+k0
		if k1 > snapDenominator {
			break
		}
		r := h1 / k1
		if math.Abs(r-a) <= tol {
			return math.Copysign(r, v)
		}
		if x == t {
			break
		}
		x = 1 / (x - t)
	}
	return v
}
