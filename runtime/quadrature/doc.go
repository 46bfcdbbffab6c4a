// Package quadrature provides numerical integration rules on the reference
// cells of runtime/cell: Gauss–Legendre rules on the interval, their
// tensor products on quadrilaterals and hexahedra, the symmetric triangle
// rules of Dunavant (1985) and tetrahedron rules of Keast (1986), and
// collapsed-coordinate (Duffy) product rules for any higher degree.
//
// Place in the flow lang -> compiler -> runtime: the compiler decides the
// polynomial degree of each integrand; at run time For picks the cheapest
// rule exact to that degree and runtime/element tabulates the basis at
// its points.
//
// A Rule's points are in reference coordinates (see runtime/cell: unit
// simplex, [0,1] for the interval, [-1,1]^d for tensor cells) and its
// weights sum to the reference-cell measure (1, 1/2, 1/6, 4, 8).
// Rule.Degree is the largest d such that the rule integrates every
// polynomial of total degree <= d exactly (for tensor rules, the degree
// in each variable separately is as large, so Q_d is integrated too).
//
// Sources:
//   - Gauss–Legendre nodes and weights: gonum.org/v1/gonum/integrate/quad,
//     checked in the tests against Abramowitz & Stegun (1964), Table 25.4.
//   - D. A. Dunavant, High degree efficient symmetrical Gaussian quadrature
//     rules for the triangle, Int. J. Numer. Meth. Eng. 21 (1985) 1129–1148.
//   - P. Keast, Moderate-degree tetrahedral quadrature formulas, Comput.
//     Methods Appl. Mech. Eng. 55 (1986) 339–348.
//   - M. G. Duffy, Quadrature over a pyramid or cube of integrands with a
//     singularity at a vertex, SIAM J. Numer. Anal. 19 (1982) 1260–1262,
//     for the collapsed map; the conical product idea is in A. H. Stroud,
//     Approximate Calculation of Multiple Integrals (1971), who used
//     Gauss–Jacobi points in the collapsed direction. Here Gauss–Legendre
//     points are used in every direction and the collapse Jacobian is
//     integrated as part of the polynomial, which costs one extra point
//     per collapsed direction but needs no Jacobi tables.
package quadrature
