// Package element implements Lagrange finite elements on the reference
// cells of runtime/cell — P1 and P2 on segments, triangles and tetrahedra,
// Q1 and Q2 on quadrilaterals and hexahedra — their values sampled at
// quadrature points, the isoparametric map to a physical cell with its
// Jacobian, physical gradients and second derivatives and the element
// metric tensor, and several definitions of the element size used by
// stabilised methods.
//
// Place in the flow lang -> compiler -> runtime: the compiler's generated
// element kernels receive, per quadrature point, the basis values and the
// physical derivatives computed here (PointGeometry), and the stabilisation
// parameters they evaluate use Size or the metric tensor G.
//
// # Node order
//
// Nodes come vertices first (in cell vertex order), then one node per edge
// at its midpoint (cell edge order, runtime/cell), then face-interior
// nodes (Q2 hexahedron: the six face centres in cell facet order), then
// cell-interior nodes (Q2 quadrilateral and hexahedron: the centre). On the
// interval the P2 midpoint is the cell interior; on the quadrilateral the
// Q2 centre is the cell interior. NodeEntity names the topological entity
// (kind and local index) each node belongs to, so that a dof numbering can
// share vertex, edge and face nodes between neighbouring cells: exactly one
// node sits on each entity that carries nodes.
//
// # Basis functions
//
// P_k on simplices in barycentric coordinates λ_0 = 1 - Σ x_k, λ_k = x_k:
// P1 φ_i = λ_i; P2 vertex φ_i = λ_i(2λ_i - 1), edge (a,b) φ = 4λ_aλ_b.
// Q_k on [-1,1]^d as products of 1D Lagrange polynomials on the nodes
// {-1, 1} (k=1) or {-1, 0, 1} (k=2). See e.g. Zienkiewicz, Taylor & Zhu,
// The Finite Element Method: Its Basis and Fundamentals (2005), ch. 6.
//
// # Map and metric
//
// The map x(ξ) = Σ_n x_n N_n(ξ) uses the nodes of a geometry element (by
// default the element itself, so P2/Q2 cells may be curved). With
// J = dx/dξ: physical gradients ∇_x N = J^{-T}∇_ξ N; physical second
// derivatives
//
//	d²N/dx² = J^{-T} [ d²N/dξ² − Σ_k (dN/dx_k) d²x_k/dξ² ] J^{-1},
//
// which keeps the curvature term of a non-affine map; the metric tensor
// G = J^{-T}J^{-1}, G_ij = Σ_k ∂ξ_k/∂x_i ∂ξ_k/∂x_j, and g_i = Σ_j ∂ξ_j/∂x_i
// (Bazilevs, Calo, Cottrell, Hughes, Reali & Scovazzi 2007, CMAME 197).
// Facet tables (SampleFacet) carry a facet rule mapped onto one local
// facet; their Map adds the outward unit normal and the surface weight,
// for boundary integrals.
//
// G depends on the reference cell: on [-1,1]^d a square of side h has
// G = (4/h²) I, on the unit simplex a right triangle with legs h has
// G = (1/h²) I.
package element
