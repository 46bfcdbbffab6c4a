package ir

import "fmt"

// Family is the kind of cell a Lagrange element lives on.
type Family uint8

const (
	// Simplicial elements (P_k) live on intervals, triangles and
	// tetrahedra.
	Simplicial Family = iota + 1
	// TensorProduct elements (Q_k) live on intervals, quadrilaterals and
	// hexahedra.
	TensorProduct
)

// Element is the Lagrange element of an unknown as a model names it: P1,
// P2 (complete polynomials of degree k on simplices) or Q1, Q2
// (polynomials of degree k in each coordinate on tensor-product cells;
// Ciarlet 1978, ch. 2). On an interval P_k and Q_k coincide. The zero
// value is no element.
type Element struct {
	Family Family
	Degree int
}

// The implemented elements.
var (
	P1 = Element{Simplicial, 1}
	P2 = Element{Simplicial, 2}
	Q1 = Element{TensorProduct, 1}
	Q2 = Element{TensorProduct, 2}
)

// Elements lists the implemented elements.
var Elements = []Element{P1, P2, Q1, Q2}

// ParseElement reads an element name (P1, P2, Q1, Q2). It is the one
// place where element names are read.
func ParseElement(name string) (Element, error) {
	for _, e := range Elements {
		if e.String() == name {
			return e, nil
		}
	}
	return Element{}, fmt.Errorf("unknown element %q (use P1 or P2 on simplices, Q1 or Q2 on quadrilaterals and hexahedra)", name)
}

func (e Element) String() string {
	switch e.Family {
	case Simplicial:
		return fmt.Sprintf("P%d", e.Degree)
	case TensorProduct:
		return fmt.Sprintf("Q%d", e.Degree)
	}
	return "no element"
}

// CellNoun names the cells the element needs in dimension dim, for
// messages: "simplex" or "quadrilateral or hexahedral"; in 1D both
// families live on intervals.
func (e Element) CellNoun(dim int) string {
	switch {
	case dim == 1:
		return "segment"
	case e.Family == Simplicial:
		return "simplex"
	}
	return "quadrilateral or hexahedral"
}
