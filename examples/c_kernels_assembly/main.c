/*
 * Assembles and solves the plate model (plate.fw) with the generated C
 * kernels (plate_kernels.h, plate_kernels.c) and nothing else of
 * formwright: a production code's own loop over its own mesh.
 *
 * The mesh is the unit square cut into n x n squares, each split into two
 * triangles along the diagonal from its lower-left to its upper-right
 * corner; the P1 unknowns are the n+1 x n+1 vertices, numbered row by row.
 * For each triangle the program calls plate_galerkin_cell and adds the
 * 3 x 3 element matrix and the element vector into a sparse matrix in
 * compressed sparse row (CSR) form. The boundary vertices, where u = 0,
 * become identity rows and their columns are removed from the other rows,
 * which keeps the matrix symmetric positive definite; conjugate gradients
 * with a diagonal preconditioner solve it. For n = 16, 32 and 64 the
 * program prints the largest nodal error against the manufactured
 * solution sin(pi x) sin(pi y) and the temperature at the centre.
 *
 * Build and run (see README.md):
 *
 *   cc -std=c99 -O2 -Wall -Wextra -pedantic -o plate main.c plate_kernels.c -lm
 *   ./plate
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "plate_kernels.h"

/* A sparse matrix in compressed sparse row form. */
struct csr {
	int n;
	int *start; /* row i holds entries start[i] .. start[i+1]-1 */
	int *col;
	double *val;
};

static void *alloc(size_t count, size_t size)
{
	void *p = calloc(count, size);
	if (p == NULL) {
		fprintf(stderr, "plate: out of memory\n");
		exit(1);
	}
	return p;
}

static int vertex(int n, int i, int j) { return j * (n + 1) + i; }

/* The three vertices of triangle t of square (i, j), counter-clockwise. */
static void triangle(int n, int i, int j, int t, int v[3])
{
	v[0] = vertex(n, i, j);
	if (t == 0) {
		v[1] = vertex(n, i + 1, j);
		v[2] = vertex(n, i + 1, j + 1);
	} else {
		v[1] = vertex(n, i + 1, j + 1);
		v[2] = vertex(n, i, j + 1);
	}
}

/* pattern builds the CSR pattern of the triangulation: vertex p couples
 * with itself and with the six neighbours it shares a triangle with. */
static struct csr pattern(int n)
{
	struct csr a;
	int nv = (n + 1) * (n + 1);
	a.n = nv;
	a.start = alloc((size_t)nv + 1, sizeof(int));
	a.col = alloc((size_t)nv * 7, sizeof(int));
	int k = 0;
	for (int j = 0; j <= n; ++j) {
		for (int i = 0; i <= n; ++i) {
			a.start[vertex(n, i, j)] = k;
			/* neighbours in increasing index order */
			static const int di[7] = {-1, 0, -1, 0, 1, 0, 1};
			static const int dj[7] = {-1, -1, 0, 0, 0, 1, 1};
			for (int m = 0; m < 7; ++m) {
				int ii = i + di[m], jj = j + dj[m];
				if (ii >= 0 && ii <= n && jj >= 0 && jj <= n) {
					a.col[k++] = vertex(n, ii, jj);
				}
			}
		}
	}
	a.start[nv] = k;
	a.val = alloc((size_t)k, sizeof(double));
	return a;
}

static void add(struct csr *a, int row, int col, double v)
{
	for (int k = a->start[row]; k < a->start[row + 1]; ++k) {
		if (a->col[k] == col) {
			a->val[k] += v;
			return;
		}
	}
	fprintf(stderr, "plate: (%d, %d) is not in the pattern\n", row, col);
	exit(1);
}

static void multiply(const struct csr *a, const double *x, double *y)
{
	for (int i = 0; i < a->n; ++i) {
		double s = 0;
		for (int k = a->start[i]; k < a->start[i + 1]; ++k) {
			s += a->val[k] * x[a->col[k]];
		}
		y[i] = s;
	}
}

static double dot(int n, const double *x, const double *y)
{
	double s = 0;
	for (int i = 0; i < n; ++i) {
		s += x[i] * y[i];
	}
	return s;
}

/* cg solves a x = b by conjugate gradients with the diagonal of a as the
 * preconditioner (Hestenes & Stiefel 1952, J. Res. Natl. Bur. Stand. 49
 * [memory]), to a relative residual of
 * 1e-12; it returns the number of iterations, or -1. */
static int cg(const struct csr *a, const double *b, double *x)
{
	int n = a->n;
	double *r = alloc((size_t)n, sizeof(double)), *z = alloc((size_t)n, sizeof(double));
	double *p = alloc((size_t)n, sizeof(double)), *q = alloc((size_t)n, sizeof(double));
	double *d = alloc((size_t)n, sizeof(double));
	for (int i = 0; i < n; ++i) {
		for (int k = a->start[i]; k < a->start[i + 1]; ++k) {
			if (a->col[k] == i) {
				d[i] = 1 / a->val[k];
			}
		}
		x[i] = 0;
		r[i] = b[i];
		z[i] = d[i] * r[i];
		p[i] = z[i];
	}
	double rz = dot(n, r, z), norm = sqrt(dot(n, b, b));
	int it = -1;
	for (int k = 0; k < 10 * n; ++k) {
		if (sqrt(dot(n, r, r)) <= 1e-12 * norm) {
			it = k;
			break;
		}
		multiply(a, p, q);
		double alpha = rz / dot(n, p, q);
		for (int i = 0; i < n; ++i) {
			x[i] += alpha * p[i];
			r[i] -= alpha * q[i];
			z[i] = d[i] * r[i];
		}
		double rz1 = dot(n, r, z);
		for (int i = 0; i < n; ++i) {
			p[i] = z[i] + rz1 / rz * p[i];
		}
		rz = rz1;
	}
	free(r);
	free(z);
	free(p);
	free(q);
	free(d);
	return it;
}

static int solve(int n)
{
	const struct fw_kernel_layout *l = plate_galerkin_layout();
	if (l->dofs != 3 || l->dim != 2 || l->needs_previous) {
		fprintf(stderr, "plate: unexpected kernel layout\n");
		return 1;
	}
	struct csr a = pattern(n);
	double *rhs = alloc((size_t)a.n, sizeof(double)), *u = alloc((size_t)a.n, sizeof(double));
	double h = 1.0 / n;
	for (int j = 0; j < n; ++j) {
		for (int i = 0; i < n; ++i) {
			for (int t = 0; t < 2; ++t) {
				int v[3];
				double x[6], A[9], b[3];
				triangle(n, i, j, t, v);
				for (int k = 0; k < 3; ++k) {
					x[2 * k] = (v[k] % (n + 1)) * h;
					x[2 * k + 1] = (v[k] / (n + 1)) * h;
				}
				struct fw_kernel_input in;
				in.coords = x;
				in.previous = NULL;
				in.time = 0;
				in.step = 0;
				in.recovered = NULL;
				if (plate_galerkin_cell(&in, A, b) != FW_KERNEL_OK) {
					fprintf(stderr, "plate: degenerate triangle\n");
					return 1;
				}
				for (int r = 0; r < 3; ++r) {
					for (int c = 0; c < 3; ++c) {
						add(&a, v[r], v[c], A[3 * r + c]);
					}
					rhs[v[r]] += b[r];
				}
			}
		}
	}
	/* u = 0 on the boundary: identity rows, and the columns removed. */
	for (int p = 0; p < a.n; ++p) {
		int i = p % (n + 1), j = p / (n + 1);
		int boundary = i == 0 || j == 0 || i == n || j == n;
		for (int k = a.start[p]; k < a.start[p + 1]; ++k) {
			int q = a.col[k];
			int qi = q % (n + 1), qj = q / (n + 1);
			int qb = qi == 0 || qj == 0 || qi == n || qj == n;
			if (boundary || qb) {
				a.val[k] = q == p ? 1 : 0;
			}
		}
		if (boundary) {
			rhs[p] = 0;
		}
	}
	int it = cg(&a, rhs, u);
	if (it < 0) {
		fprintf(stderr, "plate: conjugate gradients did not converge\n");
		return 1;
	}
	const double pi = 3.14159265358979323846;
	double err = 0;
	for (int p = 0; p < a.n; ++p) {
		double x = (p % (n + 1)) * h, y = (p / (n + 1)) * h;
		err = fmax(err, fabs(u[p] - sin(pi * x) * sin(pi * y)));
	}
	printf("n = %2d: largest nodal error %.3e, u(0.5, 0.5) = %.6f (%d CG iterations)\n", n, err, u[vertex(n, n / 2, n / 2)], it);
	free(a.start);
	free(a.col);
	free(a.val);
	free(rhs);
	free(u);
	return 0;
}

int main(void)
{
	for (int n = 16; n <= 64; n *= 2) {
		if (solve(n) != 0) {
			return 1;
		}
	}
	return 0;
}
