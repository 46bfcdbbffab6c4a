# Independent computation of C_inv = sup h^2 ||lap v||^2 / ||grad v||^2
# over the element space on the reference cell, h = largest vertex distance.
import sympy as sp
x, y = sp.symbols('x y')
def sup(basis, integ, grad, lap, h):
    n = len(basis)
    S = sp.Matrix(n, n, lambda i, j: integ(sum(a*b for a, b in zip(grad(basis[i]), grad(basis[j])))))
    L = sp.Matrix(n, n, lambda i, j: integ(lap(basis[i])*lap(basis[j])))
    mu = sp.symbols('mu')
    p = sp.Poly((L - mu*S).det(), mu)
    roots = [r for r in sp.real_roots(p)]
    m = max(roots)
    return sp.nsimplify(h**2) * m
i1 = lambda f: sp.integrate(f, (x, 0, 1))
print("1D P2", sup([x, x**2], i1, lambda f: [sp.diff(f, x)], lambda f: sp.diff(f, x, 2), 1))
r = sup([x, x**2, x**3], i1, lambda f: [sp.diff(f, x)], lambda f: sp.diff(f, x, 2), 1)
print("1D P3", r, sp.N(r, 17))
itri = lambda f: sp.integrate(sp.integrate(f, (y, 0, 1 - x)), (x, 0, 1))
g2 = lambda f: [sp.diff(f, x), sp.diff(f, y)]
l2 = lambda f: sp.diff(f, x, 2) + sp.diff(f, y, 2)
r = sup([x, y, x**2, x*y, y**2], itri, g2, l2, sp.sqrt(2))
print("tri P2", r, sp.N(r, 17))
iq = lambda f: sp.integrate(sp.integrate(f, (y, -1, 1)), (x, -1, 1))
qb = [x**i*y**j for i in range(3) for j in range(3) if i+j > 0]
r = sup(qb, iq, g2, l2, 2*sp.sqrt(2))
print("quad Q2", r, sp.N(r, 17))
z = sp.symbols('z')
itet = lambda f: sp.integrate(sp.integrate(sp.integrate(f, (z, 0, 1 - x - y)), (y, 0, 1 - x)), (x, 0, 1))
g3 = lambda f: [sp.diff(f, x), sp.diff(f, y), sp.diff(f, z)]
l3 = lambda f: sp.diff(f, x, 2) + sp.diff(f, y, 2) + sp.diff(f, z, 2)
r = sup([x, y, z, x**2, y**2, z**2, x*y, x*z, y*z], itet, g3, l3, sp.sqrt(2))
print("tet P2", r, sp.N(r, 17))
ih = lambda f: sp.integrate(sp.integrate(sp.integrate(f, (z, -1, 1)), (y, -1, 1)), (x, -1, 1))
hb = [x**i*y**j*z**k for i in range(3) for j in range(3) for k in range(3) if i+j+k > 0]
r = sup(hb, ih, g3, l3, 2*sp.sqrt(3))
print("hex Q2", r, sp.N(r, 17))
