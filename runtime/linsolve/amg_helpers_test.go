package linsolve

import (
	"math"

	"github.com/formwright/formwright/runtime/sparse"
)

// Finite-element test matrices on structured meshes of the unit square and
// cube, assembled element by element (element matrices from the closed
// forms for linear elements: K_ab = |T| ∇φ_a·∇φ_b; Zienkiewicz, Taylor &
// Zhu 2005, §4.2).

// feMatrix assembles Σ_e K_e over ne elements with dofs(e) and element
// matrices ke(e, K) (row-major, len(dofs)²).
func feMatrix(n, ne int, dofs func(e int) []int32, ke func(e int, K []float64)) *sparse.CSR {
	A := sparse.PatternFromElements(n, ne, func(e int, buf []int32) []int32 { return append(buf, dofs(e)...) })
	var pos []int
	var K []float64
	for e := 0; e < ne; e++ {
		d := dofs(e)
		if need := len(d) * len(d); len(K) != need {
			K = make([]float64, need)
		}
		ke(e, K)
		pos = A.ScatterIndex(d, pos)
		A.AddScatter(pos, K)
	}
	return A
}

// triMesh returns the triangles of the unit square cut into m×m squares
// (m+1 nodes a side, node (i, j) numbered j(m+1)+i), each square split
// along its rising diagonal, and the node coordinates.
func triMesh(m int) (tris [][3]int32, xy [][2]float64) {
	nn := m + 1
	for j := 0; j <= m; j++ {
		for i := 0; i <= m; i++ {
			xy = append(xy, [2]float64{float64(i) / float64(m), float64(j) / float64(m)})
		}
	}
	for j := 0; j < m; j++ {
		for i := 0; i < m; i++ {
			a := int32(j*nn + i)
			b, c, d := a+1, a+1+int32(nn), a+int32(nn)
			tris = append(tris, [3]int32{a, b, c}, [3]int32{a, c, d})
		}
	}
	return tris, xy
}

// p1Grad returns the area of a triangle and the gradients of its three
// hat functions.
func p1Grad(x [3][2]float64) (area float64, g [3][2]float64) {
	det := (x[1][0]-x[0][0])*(x[2][1]-x[0][1]) - (x[2][0]-x[0][0])*(x[1][1]-x[0][1])
	for a := 0; a < 3; a++ {
		b, c := (a+1)%3, (a+2)%3
		g[a] = [2]float64{(x[b][1] - x[c][1]) / det, (x[c][0] - x[b][0]) / det}
	}
	return det / 2, g
}

// boundary2D marks the nodes of an (m+1)² grid on the sides of the square.
func boundary2D(m int, sides func(i, j int) bool) []bool {
	nn := m + 1
	f := make([]bool, nn*nn)
	for j := 0; j < nn; j++ {
		for i := 0; i < nn; i++ {
			f[j*nn+i] = sides(i, j)
		}
	}
	return f
}

func allSides(m int) func(i, j int) bool {
	return func(i, j int) bool { return i == 0 || j == 0 || i == m || j == m }
}

// poissonP1 is the P1 stiffness matrix of −Δ on m×m squares (2m² cells),
// Dirichlet rows and columns eliminated symmetrically: SPD.
func poissonP1(m int) *sparse.CSR {
	tris, xy := triMesh(m)
	A := feMatrix(len(xy), len(tris), func(e int) []int32 { return tris[e][:] }, func(e int, K []float64) {
		t := tris[e]
		area, g := p1Grad([3][2]float64{xy[t[0]], xy[t[1]], xy[t[2]]})
		for a := 0; a < 3; a++ {
			for b := 0; b < 3; b++ {
				K[a*3+b] = area * (g[a][0]*g[b][0] + g[a][1]*g[b][1])
			}
		}
	})
	fixed := boundary2D(m, allSides(m))
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), true)
	return A
}

// poissonQ1 is the Q1 stiffness matrix of −Δ on m×m squares, Dirichlet
// eliminated symmetrically. The element matrix of a square (any size) is
// (1/6)[4 −1 −2 −1; −1 4 −1 −2; −2 −1 4 −1; −1 −2 −1 4] for the vertices
// in counter-clockwise order (the 9-point stencil 8/3, −1/3; Braess,
// Finite Elements, 3rd ed. 2007, §II.8 [memory]; checked in
// TestQ1StencilRowSums).
func poissonQ1(m int) *sparse.CSR {
	nn := m + 1
	ke := [16]float64{4, -1, -2, -1, -1, 4, -1, -2, -2, -1, 4, -1, -1, -2, -1, 4}
	A := feMatrix(nn*nn, m*m, func(e int) []int32 {
		i, j := e%m, e/m
		a := int32(j*nn + i)
		return []int32{a, a + 1, a + 1 + int32(nn), a + int32(nn)}
	}, func(e int, K []float64) {
		for q := range K {
			K[q] = ke[q] / 6
		}
	})
	fixed := boundary2D(m, allSides(m))
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), true)
	return A
}

// poissonTet is the P1 stiffness matrix of −Δ on the unit cube cut into m³
// cubes, each split into six tetrahedra around its main diagonal (Kuhn's
// triangulation), Dirichlet eliminated symmetrically.
func poissonTet(m int) *sparse.CSR {
	nn := m + 1
	id := func(i, j, k int) int32 { return int32((k*nn+j)*nn + i) }
	var tets [][4]int32
	perms := [6][3]int{{0, 1, 2}, {0, 2, 1}, {1, 0, 2}, {1, 2, 0}, {2, 0, 1}, {2, 1, 0}}
	for k := 0; k < m; k++ {
		for j := 0; j < m; j++ {
			for i := 0; i < m; i++ {
				for _, p := range perms {
					v := [3]int{i, j, k}
					t := [4]int32{id(v[0], v[1], v[2])}
					for s := 0; s < 3; s++ {
						v[p[s]]++
						t[s+1] = id(v[0], v[1], v[2])
					}
					tets = append(tets, t)
				}
			}
		}
	}
	coord := func(v int32) [3]float64 {
		i, j, k := int(v)%nn, int(v)/nn%nn, int(v)/(nn*nn)
		return [3]float64{float64(i) / float64(m), float64(j) / float64(m), float64(k) / float64(m)}
	}
	A := feMatrix(nn*nn*nn, len(tets), func(e int) []int32 { return tets[e][:] }, func(e int, K []float64) {
		t := tets[e]
		x0 := coord(t[0])
		var J [3][3]float64 // rows: edges x_a − x_0
		for a := 1; a < 4; a++ {
			xa := coord(t[a])
			for d := 0; d < 3; d++ {
				J[a-1][d] = xa[d] - x0[d]
			}
		}
		det := J[0][0]*(J[1][1]*J[2][2]-J[1][2]*J[2][1]) - J[0][1]*(J[1][0]*J[2][2]-J[1][2]*J[2][0]) + J[0][2]*(J[1][0]*J[2][1]-J[1][1]*J[2][0])
		// Gradients of φ_1..φ_3 are the columns of J⁻¹ (J g_a = e_a);
		// φ_0's is minus their sum.
		var inv [3][3]float64
		for r := 0; r < 3; r++ {
			for c := 0; c < 3; c++ {
				r1, r2 := (c+1)%3, (c+2)%3
				c1, c2 := (r+1)%3, (r+2)%3
				inv[r][c] = (J[r1][c1]*J[r2][c2] - J[r1][c2]*J[r2][c1]) / det
			}
		}
		var g [4][3]float64
		for a := 1; a < 4; a++ {
			for d := 0; d < 3; d++ {
				g[a][d] = inv[d][a-1]
				g[0][d] -= g[a][d]
			}
		}
		vol := math.Abs(det) / 6
		for a := 0; a < 4; a++ {
			for b := 0; b < 4; b++ {
				K[a*4+b] = vol * (g[a][0]*g[b][0] + g[a][1]*g[b][1] + g[a][2]*g[b][2])
			}
		}
	})
	fixed := make([]bool, A.N)
	for v := range fixed {
		i, j, k := v%nn, v/nn%nn, v/(nn*nn)
		fixed[v] = i == 0 || j == 0 || k == 0 || i == m || j == m || k == m
	}
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), true)
	return A
}

// supgP1 is the SUPG P1 matrix of a·∇c − κΔc on m×m squares for constant
// a = (cos θ, sin θ), |a| = 1:
//
//	K_ab = |T| (κ ∇φ_a·∇φ_b + (a·∇φ_b)/3 + τ (a·∇φ_a)(a·∇φ_b)),
//
// τ = h/2·min(Pe/3, 1), Pe = h/(2κ), h the longest edge (Brooks & Hughes
// 1982, CMAME 32; the τ of the stdlib's tau_doubly_asymptotic), with the
// inflow sides (left and bottom) fixed by row elimination as
// runtime/problem does for nonsymmetric matrices; the skew-advection test
// of Brooks & Hughes for θ = 30° and κ = 10⁻⁶.
func supgP1(m int, theta, kappa float64) *sparse.CSR {
	tris, xy := triMesh(m)
	ax, ay := math.Cos(theta), math.Sin(theta)
	A := feMatrix(len(xy), len(tris), func(e int) []int32 { return tris[e][:] }, func(e int, K []float64) {
		t := tris[e]
		x := [3][2]float64{xy[t[0]], xy[t[1]], xy[t[2]]}
		area, g := p1Grad(x)
		h := 0.0
		for a := 0; a < 3; a++ {
			b := (a + 1) % 3
			h = math.Max(h, math.Hypot(x[a][0]-x[b][0], x[a][1]-x[b][1]))
		}
		tau := h / 2 * math.Min(h/(2*kappa)/3, 1)
		for a := 0; a < 3; a++ {
			aga := ax*g[a][0] + ay*g[a][1]
			for b := 0; b < 3; b++ {
				agb := ax*g[b][0] + ay*g[b][1]
				K[a*3+b] = area * (kappa*(g[a][0]*g[b][0]+g[a][1]*g[b][1]) + agb/3 + tau*aga*agb)
			}
		}
	})
	fixed := boundary2D(m, func(i, j int) bool { return i == 0 || j == 0 })
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), false)
	return A
}

// stokesP1 is the equal-order P1–P1 Stokes matrix on m×m squares with the
// stabilisation formwright derives for P1 (GLS/VMS of the block operator;
// the viscous term of the residual vanishes on linear elements):
//
//	[ ν K⊗I + τ_c D ᵀD    G  ] [u]   momentum: ν∫∇u:∇v + τ_c∫div u div v + ∫v·∇p
//	[ D                  τ_m K ] [p]   continuity: ∫q div u + τ_m∫∇q·∇p
//
// τ_m = h²/(4ν), τ_c = h²/(4τ_m) = ν (the stdlib's tau_stokes_momentum and
// tau_stokes_continuity; Hughes, Franca & Balestra 1986, CMAME 59, for the
// pressure stabilisation), velocity fixed on the whole boundary and the
// pressure fixed at node 0 (the mean condition replaced by one fixed dof,
// as runtime/problem does), both by row elimination. The layout has the
// velocity (2 components, interleaved) first and the pressure second.
func stokesP1(m int, nu float64) (*sparse.CSR, *Layout) {
	tris, xy := triMesh(m)
	nn := len(xy)
	nu2 := 2 * nn
	dofs := func(e int) []int32 {
		t := tris[e]
		d := make([]int32, 0, 9)
		for _, v := range t {
			d = append(d, 2*v, 2*v+1)
		}
		for _, v := range t {
			d = append(d, int32(nu2)+v)
		}
		return d
	}
	A := feMatrix(3*nn, len(tris), dofs, func(e int, K []float64) {
		t := tris[e]
		x := [3][2]float64{xy[t[0]], xy[t[1]], xy[t[2]]}
		area, g := p1Grad(x)
		h := 0.0
		for a := 0; a < 3; a++ {
			b := (a + 1) % 3
			h = math.Max(h, math.Hypot(x[a][0]-x[b][0], x[a][1]-x[b][1]))
		}
		taum := h * h / (4 * nu)
		tauc := h * h / (4 * taum)
		clear(K)
		at := func(r, c int, v float64) { K[r*9+c] += v }
		for a := 0; a < 3; a++ {
			for b := 0; b < 3; b++ {
				lap := area * (g[a][0]*g[b][0] + g[a][1]*g[b][1])
				for c := 0; c < 2; c++ {
					at(2*a+c, 2*b+c, nu*lap)
					for d := 0; d < 2; d++ {
						at(2*a+c, 2*b+d, tauc*area*g[a][c]*g[b][d])
					}
					// ∫ v_c ∂_c p = |T|/3 ∂_c φ_b (test a, trial p b)
					at(2*a+c, 6+b, area/3*g[b][c])
					// ∫ q ∂_c u_c (test q a, trial u_c b)
					at(6+a, 2*b+c, area/3*g[b][c])
				}
				at(6+a, 6+b, taum*lap)
			}
		}
	})
	fixed := make([]bool, A.N)
	for j := 0; j <= m; j++ {
		for i := 0; i <= m; i++ {
			if i == 0 || j == 0 || i == m || j == m {
				v := j*(m+1) + i
				fixed[2*v], fixed[2*v+1] = true, true
			}
		}
	}
	fixed[nu2] = true
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), false)
	return A, &Layout{Fields: []FieldBlock{
		{Name: "vel", Offset: 0, Nodes: nn, Components: 2},
		{Name: "p", Offset: nu2, Nodes: nn, Components: 1, Constraint: true},
	}}
}

// elasticityP1 is the plane-strain linear elasticity matrix (E = 1,
// Poisson ratio 0.3) on m×m squares of the unit square with P1 triangles,
// K_e = |T| BᵀCB (Zienkiewicz, Taylor & Zhu 2005, §6.2), displacement
// dofs interleaved (2v, 2v+1), the left side clamped (eliminated
// symmetrically). The layout carries the node coordinates.
func elasticityP1(m int) (*sparse.CSR, *Layout) {
	tris, xy := triMesh(m)
	const E, nu = 1.0, 0.3
	f := E / ((1 + nu) * (1 - 2*nu))
	C := [3][3]float64{{f * (1 - nu), f * nu, 0}, {f * nu, f * (1 - nu), 0}, {0, 0, f * (1 - 2*nu) / 2}}
	A := feMatrix(2*len(xy), len(tris), func(e int) []int32 {
		t := tris[e]
		return []int32{2 * t[0], 2*t[0] + 1, 2 * t[1], 2*t[1] + 1, 2 * t[2], 2*t[2] + 1}
	}, func(e int, K []float64) {
		t := tris[e]
		area, g := p1Grad([3][2]float64{xy[t[0]], xy[t[1]], xy[t[2]]})
		var B [3][6]float64 // strains (xx, yy, 2xy) of the six dofs
		for a := 0; a < 3; a++ {
			B[0][2*a] = g[a][0]
			B[1][2*a+1] = g[a][1]
			B[2][2*a], B[2][2*a+1] = g[a][1], g[a][0]
		}
		for r := 0; r < 6; r++ {
			for c := 0; c < 6; c++ {
				s := 0.0
				for i := 0; i < 3; i++ {
					for j := 0; j < 3; j++ {
						s += B[i][r] * C[i][j] * B[j][c]
					}
				}
				K[r*6+c] = area * s
			}
		}
	})
	fixed := make([]bool, A.N)
	for v, p := range xy {
		if p[0] == 0 {
			fixed[2*v], fixed[2*v+1] = true, true
		}
	}
	A.EliminateRows(fixed, make([]float64, A.N), make([]float64, A.N), true)
	coords := make([]float64, 0, 2*len(xy))
	for _, p := range xy {
		coords = append(coords, p[0], p[1])
	}
	return A, &Layout{Fields: []FieldBlock{{Name: "disp", Nodes: len(xy), Components: 2, Coords: coords, Dim: 2}}}
}
