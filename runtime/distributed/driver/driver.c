/*
 * formwright's distributed driver: assembles one lowered form with its
 * generated C kernels on the part of the mesh that formwright gave this
 * MPI rank, into a parallel AIJ matrix with exact preallocation, imposes
 * the value conditions, and solves with PETSc's Krylov solvers and
 * preconditioners (Balay et al., PETSc Users Manual, ANL-21/39 [memory]).
 * Forms that read a lagged iterate are solved by Picard iteration, and
 * Newton step forms (the Jacobian and the residual of a nonlinear form)
 * by Newton's method with a line search, both around the parallel linear
 * solve.
 *
 * It is built and run by formwright (runtime/distributed), never by hand:
 *
 *   mpiexec -n R driver RUNDIR [PETSc options]
 *
 * RUNDIR holds part.<rank> for every rank (the binary format below, all
 * numbers little-endian, written by runtime/distributed/format.go); the
 * driver writes x.<rank> (the solution on the rank's dofs) and, on rank 0,
 * result (key value lines). The kernels are compiled in: the header and
 * source from compiler/gogen.GenerateC, and names.h, which includes the
 * header and maps FW_CELL, FW_FACET and FW_LAYOUT onto the kernels of
 * the form.
 *
 * Exit status: 0 when the result file was written (a solve that did not
 * converge says so there), 3 bad input files, 4 a degenerate cell, 5 a
 * PETSc error (its message is on standard error).
 */
#include <petscksp.h>
#include <petscversion.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

#include "names.h" /* the kernel header and FW_CELL, FW_FACET, FW_LAYOUT */

#if defined(PETSC_USE_COMPLEX)
#error "the formwright driver needs a real PETSc build (PetscScalar double)"
#endif

enum { EXIT_INPUT = 3, EXIT_DEGENERATE = 4, EXIT_PETSC = 5 };

/* Solver methods and preconditioners of the header (format.go). */
enum { METHOD_AUTO, METHOD_DIRECT, METHOD_CG, METHOD_GMRES, METHOD_BICGSTAB };
enum { PRECOND_DEFAULT, PRECOND_NONE, PRECOND_JACOBI, PRECOND_ILU0, PRECOND_GAMG, PRECOND_HYPRE, PRECOND_BLOCK };

#define MAGIC "FWPART01"
#define MAGIC_OUT "FWXOUT01"

static PetscMPIInt rank, size;

static void die(int code, const char *fmt, ...)
{
	va_list ap;
	fprintf(stderr, "formwright-driver: rank %d: ", (int)rank);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fprintf(stderr, "\n");
	fflush(stderr);
	MPI_Abort(MPI_COMM_WORLD, code);
	exit(code);
}

static void *alloc(size_t n, size_t size)
{
	void *p = calloc(n ? n : 1, size);
	if (p == NULL) {
		die(EXIT_PETSC, "out of memory (%zu x %zu bytes)", n, size);
	}
	return p;
}

/* The header of a part file. */
struct header {
	int64_t dim, verts, dofs, sides, global, ranks;
	int64_t method, precond, maxit, restart, direct_limit;
	int64_t max_picard, means, fields;
	int64_t constraint[16]; /* per field: 1 for a constraint field */
	double rtol, time, step, sym_tol, picard_tol, relax;
	/* Newton's method (a Newton step form: runtime/problem, newton.go) */
	int64_t newton, newton_maxit, newton_no_search;
	double newton_rtol, newton_atol, newton_steptol, newton_damping, newton_minstep;
};

/* One mean condition: the pinned dof, the target mean, and this rank's
 * dofs of the field with their weights w_i = integral of phi_i. */
struct mean {
	PetscInt pin;
	double target;
	PetscInt n;
	PetscInt *dofs;
	double *w;
};

/* What this rank holds. */
struct part {
	struct header h;
	PetscInt lo, hi; /* owned dofs, new numbering */
	PetscInt nvert, ncell, nfacet, nfixed;
	double *coords;  /* nvert*dim */
	int32_t *cells;  /* ncell*verts, local vertices */
	PetscInt *dofs;  /* ncell*dofs, global */
	int32_t *facets; /* nfacet*3: local cell, local facet, side */
	PetscInt *dnnz, *onnz;
	PetscInt *fixed;
	double *values;
	double *initial; /* hi-lo values: the first previous iterate (Picard) */
	PetscInt owned[16]; /* owned dofs of each field, consecutive from lo */
	struct mean *means;
};

static FILE *in_file;
static const char *in_name;

static void get(void *dst, size_t size, size_t n, const char *what)
{
	if (n > 0 && fread(dst, size, n, in_file) != n) {
		die(EXIT_INPUT, "%s: short read of %s", in_name, what);
	}
}

static int64_t get_i64(const char *what)
{
	int64_t v;
	get(&v, sizeof v, 1, what);
	return v;
}

static double get_f64(const char *what)
{
	double v;
	get(&v, sizeof v, 1, what);
	return v;
}

static PetscInt checked(int64_t v, int64_t lo, int64_t hi, const char *what)
{
	if (v < lo || v > hi) {
		die(EXIT_INPUT, "%s: %s = %lld is out of range [%lld, %lld]", in_name, what, (long long)v, (long long)lo, (long long)hi);
	}
	return (PetscInt)v;
}

/* get_index reads n int32 indices into PetscInt, each in [lo, hi). */
static PetscInt *get_index(size_t n, int64_t lo, int64_t hi, const char *what)
{
	int32_t *raw = alloc(n, sizeof *raw);
	PetscInt *out = alloc(n, sizeof *out);
	get(raw, sizeof *raw, n, what);
	for (size_t i = 0; i < n; ++i) {
		out[i] = checked(raw[i], lo, hi - 1, what);
	}
	free(raw);
	return out;
}

static void read_part(const char *dir, struct part *p)
{
	char path[4096];
	snprintf(path, sizeof path, "%s/part.%d", dir, (int)rank);
	in_name = path;
	in_file = fopen(path, "rb");
	if (in_file == NULL) {
		die(EXIT_INPUT, "cannot open %s", path);
	}
	char magic[8];
	get(magic, 1, 8, "magic");
	if (memcmp(magic, MAGIC, 8) != 0) {
		die(EXIT_INPUT, "%s is not a formwright part file of this version", path);
	}
	struct header *h = &p->h;
	h->dim = get_i64("dim");
	h->verts = get_i64("vertices per cell");
	h->dofs = get_i64("local dofs");
	h->sides = get_i64("sides");
	h->global = get_i64("global dofs");
	h->ranks = get_i64("ranks");
	h->method = get_i64("method");
	h->precond = get_i64("preconditioner");
	h->maxit = get_i64("iteration limit");
	h->restart = get_i64("restart");
	h->direct_limit = get_i64("direct limit");
	h->max_picard = get_i64("Picard limit");
	h->means = get_i64("mean conditions");
	h->rtol = get_f64("rtol");
	h->time = get_f64("time");
	h->step = get_f64("step");
	h->sym_tol = get_f64("symmetry tolerance");
	h->picard_tol = get_f64("Picard tolerance");
	h->relax = get_f64("relaxation");
	h->newton = get_i64("Newton");
	h->newton_maxit = get_i64("Newton limit");
	h->newton_no_search = get_i64("Newton without line search");
	h->newton_rtol = get_f64("Newton tolerance");
	h->newton_atol = get_f64("Newton absolute tolerance");
	h->newton_steptol = get_f64("Newton step tolerance");
	h->newton_damping = get_f64("Newton damping");
	h->newton_minstep = get_f64("Newton shortest step");
	h->fields = get_i64("fields");
	checked(h->fields, 1, 16, "fields");
	for (int64_t k = 0; k < h->fields; ++k) {
		h->constraint[k] = get_i64("constraint flag");
	}
	if (h->ranks != size) {
		die(EXIT_INPUT, "%s was written for %lld ranks, the run has %d", path, (long long)h->ranks, (int)size);
	}
	checked(h->global, 1, INT32_MAX, "global dofs");
	const struct fw_kernel_layout *l = FW_LAYOUT();
	if (h->dim != l->dim || h->verts != l->vertices || h->dofs != l->dofs || h->sides != l->num_sides) {
		die(EXIT_INPUT, "the mesh data (dimension %lld, %lld vertices and %lld dofs per cell, %lld sides) do not fit the kernels "
		    "(dimension %d, %d vertices, %d dofs, %d sides)",
		    (long long)h->dim, (long long)h->verts, (long long)h->dofs, (long long)h->sides, l->dim, l->vertices, l->dofs, l->num_sides);
	}
	for (int64_t k = 0; k < h->sides; ++k) {
		char name[256];
		int64_t n = checked(get_i64("side name length"), 0, (int64_t)sizeof name - 1, "side name length");
		get(name, 1, (size_t)n, "side name");
		name[n] = 0;
		if (strcmp(name, l->sides[k]) != 0) {
			die(EXIT_INPUT, "side %lld is \"%s\" in the mesh data and \"%s\" in the kernels", (long long)k, name, l->sides[k]);
		}
	}
	p->lo = checked(get_i64("lo"), 0, h->global, "lo");
	p->hi = checked(get_i64("hi"), p->lo, h->global, "hi");
	p->nvert = checked(get_i64("vertices"), 0, INT32_MAX, "vertices");
	p->ncell = checked(get_i64("cells"), 0, INT32_MAX, "cells");
	p->nfacet = checked(get_i64("facets"), 0, INT32_MAX, "facets");
	p->nfixed = checked(get_i64("fixed"), 0, p->hi - p->lo, "fixed dofs");
	PetscInt total = 0;
	for (int64_t k = 0; k < h->fields; ++k) {
		p->owned[k] = checked(get_i64("owned field dofs"), 0, p->hi - p->lo - total, "owned field dofs");
		total += p->owned[k];
	}
	if (total != p->hi - p->lo) {
		die(EXIT_INPUT, "%s: the fields own %d of %d dofs", path, (int)total, (int)(p->hi - p->lo));
	}
	PetscInt nown = p->hi - p->lo;
	p->coords = alloc((size_t)p->nvert * (size_t)h->dim, sizeof(double));
	get(p->coords, sizeof(double), (size_t)p->nvert * (size_t)h->dim, "coordinates");
	p->cells = alloc((size_t)p->ncell * (size_t)h->verts, sizeof(int32_t));
	get(p->cells, sizeof(int32_t), (size_t)p->ncell * (size_t)h->verts, "cells");
	for (size_t i = 0; i < (size_t)p->ncell * (size_t)h->verts; ++i) {
		checked(p->cells[i], 0, p->nvert - 1, "cell vertex");
	}
	p->dofs = get_index((size_t)p->ncell * (size_t)h->dofs, 0, h->global, "cell dofs");
	p->facets = alloc((size_t)p->nfacet * 3, sizeof(int32_t));
	get(p->facets, sizeof(int32_t), (size_t)p->nfacet * 3, "facets");
	for (PetscInt i = 0; i < p->nfacet; ++i) {
		checked(p->facets[3 * i], 0, p->ncell - 1, "facet cell");
		checked(p->facets[3 * i + 1], 0, l->num_facets - 1, "local facet");
		checked(p->facets[3 * i + 2], 0, h->sides - 1, "facet side");
	}
	p->dnnz = get_index((size_t)nown, 1, nown + 1, "d_nnz");
	p->onnz = get_index((size_t)nown, 0, h->global - nown + 1, "o_nnz");
	p->fixed = get_index((size_t)p->nfixed, p->lo, p->hi, "fixed dofs");
	p->values = alloc((size_t)p->nfixed, sizeof(double));
	get(p->values, sizeof(double), (size_t)p->nfixed, "fixed values");
	p->initial = alloc((size_t)nown, sizeof(double));
	get(p->initial, sizeof(double), (size_t)nown, "initial iterate");
	checked(h->means, 0, 1000, "mean conditions");
	p->means = alloc((size_t)h->means, sizeof(struct mean));
	for (int64_t k = 0; k < h->means; ++k) {
		struct mean *m = &p->means[k];
		m->pin = checked(get_i64("pin"), 0, h->global - 1, "pin");
		m->target = get_f64("mean");
		m->n = checked(get_i64("mean dofs"), 0, nown, "mean dofs");
		m->dofs = get_index((size_t)m->n, p->lo, p->hi, "mean dofs");
		m->w = alloc((size_t)m->n, sizeof(double));
		get(m->w, sizeof(double), (size_t)m->n, "mean weights");
	}
	char end[8];
	get(end, 1, 8, "end mark");
	if (memcmp(end, MAGIC, 8) != 0) {
		die(EXIT_INPUT, "%s: bad end mark", path);
	}
	fclose(in_file);
}

static int cmp_int(const void *a, const void *b)
{
	PetscInt x = *(const PetscInt *)a, y = *(const PetscInt *)b;
	return (x > y) - (x < y);
}

/* ghost is the gather of the previous iterate at the dofs of this rank's
 * cells: the sorted distinct global dofs, a scatter from the global vector
 * into a sequential one, and each cell dof's position in it. */
struct ghost {
	PetscInt n;
	PetscInt *where; /* ncell*dofs positions */
	Vec local;
	VecScatter scatter;
};

static PetscErrorCode ghost_create(const struct part *p, Vec x, struct ghost *g)
{
	PetscFunctionBeginUser;
	size_t nd = (size_t)p->ncell * (size_t)p->h.dofs;
	PetscInt *u = alloc(nd, sizeof *u);
	memcpy(u, p->dofs, nd * sizeof *u);
	qsort(u, nd, sizeof *u, cmp_int);
	PetscInt n = 0;
	for (size_t i = 0; i < nd; ++i) {
		if (n == 0 || u[n - 1] != u[i]) {
			u[n++] = u[i];
		}
	}
	g->n = n;
	g->where = alloc(nd, sizeof *g->where);
	for (size_t i = 0; i < nd; ++i) {
		PetscInt *hit = bsearch(&p->dofs[i], u, (size_t)n, sizeof *u, cmp_int);
		g->where[i] = (PetscInt)(hit - u);
	}
	IS from;
	PetscCall(ISCreateGeneral(PETSC_COMM_SELF, n, u, PETSC_COPY_VALUES, &from));
	PetscCall(VecCreateSeq(PETSC_COMM_SELF, n, &g->local));
	PetscCall(VecScatterCreate(x, from, g->local, NULL, &g->scatter));
	PetscCall(ISDestroy(&from));
	free(u);
	PetscFunctionReturn(0);
}

/* assemble adds every cell and boundary facet of this rank into A and b,
 * with prev the gathered previous iterate (NULL: none). */
static PetscErrorCode assemble(const struct part *p, const struct ghost *g, const PetscScalar *prev, Mat A, Vec b)
{
	PetscFunctionBeginUser;
	const int64_t d = p->h.dim, nv = p->h.verts, N = p->h.dofs;
	double *xc = alloc((size_t)(nv * d), sizeof(double));
	double *Ae = alloc((size_t)(N * N), sizeof(double)), *be = alloc((size_t)N, sizeof(double));
	double *pe = prev ? alloc((size_t)N, sizeof(double)) : NULL;
	struct fw_kernel_input in;
	in.time = p->h.time;
	in.step = p->h.step;
	in.previous = pe;
	in.coords = xc;
	in.recovered = NULL; /* the engine solves forms derived without the recovery */
	PetscCall(MatZeroEntries(A));
	PetscCall(VecSet(b, 0));
	for (PetscInt c = 0; c < p->ncell; ++c) {
		for (int64_t k = 0; k < nv; ++k) {
			memcpy(&xc[k * d], &p->coords[(size_t)p->cells[c * nv + k] * (size_t)d], (size_t)d * sizeof(double));
		}
		if (pe) {
			for (int64_t i = 0; i < N; ++i) {
				pe[i] = prev[g->where[c * N + i]];
			}
		}
		if (FW_CELL(&in, Ae, be) != FW_KERNEL_OK) {
			die(EXIT_DEGENERATE, "degenerate cell (det J <= 0), local cell %d", (int)c);
		}
		const PetscInt *dofs = &p->dofs[c * N];
		PetscCall(MatSetValues(A, (PetscInt)N, dofs, (PetscInt)N, dofs, Ae, ADD_VALUES));
		PetscCall(VecSetValues(b, (PetscInt)N, dofs, be, ADD_VALUES));
	}
	for (PetscInt f = 0; f < p->nfacet; ++f) {
		PetscInt c = p->facets[3 * f];
		for (int64_t k = 0; k < nv; ++k) {
			memcpy(&xc[k * d], &p->coords[(size_t)p->cells[c * nv + k] * (size_t)d], (size_t)d * sizeof(double));
		}
		if (pe) {
			for (int64_t i = 0; i < N; ++i) {
				pe[i] = prev[g->where[c * N + i]];
			}
		}
		int st = FW_FACET(&in, p->facets[3 * f + 2], p->facets[3 * f + 1], Ae, be);
		if (st == FW_KERNEL_DEGENERATE) {
			die(EXIT_DEGENERATE, "degenerate cell (det J <= 0) at a boundary facet, local cell %d", (int)c);
		} else if (st != FW_KERNEL_OK) {
			die(EXIT_INPUT, "facet kernel status %d (side %d, facet %d)", st, (int)p->facets[3 * f + 2], (int)p->facets[3 * f + 1]);
		}
		const PetscInt *dofs = &p->dofs[c * N];
		PetscCall(MatSetValues(A, (PetscInt)N, dofs, (PetscInt)N, dofs, Ae, ADD_VALUES));
		PetscCall(VecSetValues(b, (PetscInt)N, dofs, be, ADD_VALUES));
	}
	PetscCall(MatAssemblyBegin(A, MAT_FINAL_ASSEMBLY));
	PetscCall(VecAssemblyBegin(b));
	PetscCall(MatAssemblyEnd(A, MAT_FINAL_ASSEMBLY));
	PetscCall(VecAssemblyEnd(b));
	free(xc);
	free(Ae);
	free(be);
	free(pe);
	PetscFunctionReturn(0);
}

/* is_symmetric tests |a_ij - a_ji| <= tol * max|a| (the test of
 * runtime/sparse.CSR.IsSymmetric). */
static PetscErrorCode is_symmetric(Mat A, double tol, PetscBool *sym)
{
	PetscFunctionBeginUser;
	PetscInt lo, hi;
	double amax = 0, all;
	PetscCall(MatGetOwnershipRange(A, &lo, &hi));
	for (PetscInt i = lo; i < hi; ++i) {
		PetscInt n;
		const PetscScalar *v;
		PetscCall(MatGetRow(A, i, &n, NULL, &v));
		for (PetscInt k = 0; k < n; ++k) {
			amax = PetscMax(amax, PetscAbsScalar(v[k]));
		}
		PetscCall(MatRestoreRow(A, i, &n, NULL, &v));
	}
	PetscCallMPI(MPI_Allreduce(&amax, &all, 1, MPI_DOUBLE, MPI_MAX, PETSC_COMM_WORLD));
	PetscCall(MatIsSymmetric(A, tol * all, sym));
	PetscFunctionReturn(0);
}

/* pinned is a row of the unconstrained system at a mean condition's pin,
 * kept by its owner: the replaced equation whose residual the result
 * reports (runtime/problem, meanFix.replacedResidual). */
struct pinned {
	PetscInt n;
	PetscInt *cols;
	double *vals;
	double rhs;
	int owned;
};

static PetscErrorCode keep_row(Mat A, Vec b, PetscInt row, struct pinned *r)
{
	PetscFunctionBeginUser;
	PetscInt lo, hi;
	PetscCall(MatGetOwnershipRange(A, &lo, &hi));
	r->owned = row >= lo && row < hi;
	r->n = 0;
	if (r->owned) {
		PetscInt n;
		const PetscInt *c;
		const PetscScalar *v;
		PetscCall(MatGetRow(A, row, &n, &c, &v));
		r->n = n;
		r->cols = alloc((size_t)n, sizeof(PetscInt));
		r->vals = alloc((size_t)n, sizeof(double));
		memcpy(r->cols, c, (size_t)n * sizeof(PetscInt));
		memcpy(r->vals, v, (size_t)n * sizeof(double));
		PetscCall(MatRestoreRow(A, row, &n, &c, &v));
		PetscCall(VecGetValues(b, 1, &row, &r->rhs));
	}
	PetscFunctionReturn(0);
}

/* row_residual is |a.x - b| / (sum |a_j x_j| + |b|) of a kept row, on
 * every rank (collective: the owner gathers the columns it needs). */
static PetscErrorCode row_residual(const struct pinned *r, Vec x, double *res)
{
	PetscFunctionBeginUser;
	IS is;
	Vec xs;
	VecScatter sc;
	double val[2] = {0, 0};
	PetscCall(ISCreateGeneral(PETSC_COMM_SELF, r->n, r->owned ? r->cols : NULL, PETSC_COPY_VALUES, &is));
	PetscCall(VecCreateSeq(PETSC_COMM_SELF, r->n, &xs));
	PetscCall(VecScatterCreate(x, is, xs, NULL, &sc));
	PetscCall(VecScatterBegin(sc, x, xs, INSERT_VALUES, SCATTER_FORWARD));
	PetscCall(VecScatterEnd(sc, x, xs, INSERT_VALUES, SCATTER_FORWARD));
	if (r->owned) {
		const PetscScalar *xv;
		double s = -r->rhs, scale = PetscAbsScalar(r->rhs);
		PetscCall(VecGetArrayRead(xs, &xv));
		for (PetscInt k = 0; k < r->n; ++k) {
			s += r->vals[k] * xv[k];
			scale += PetscAbsScalar(r->vals[k] * xv[k]);
		}
		PetscCall(VecRestoreArrayRead(xs, &xv));
		val[0] = PetscAbsScalar(s);
		val[1] = scale;
	}
	double all[2];
	PetscCallMPI(MPI_Allreduce(val, all, 2, MPI_DOUBLE, MPI_SUM, PETSC_COMM_WORLD));
	*res = all[1] == 0 ? 0 : all[0] / all[1];
	PetscCall(VecScatterDestroy(&sc));
	PetscCall(VecDestroy(&xs));
	PetscCall(ISDestroy(&is));
	PetscFunctionReturn(0);
}

/* shift moves a field with a mean condition to its prescribed mean:
 * x_i += target - sum w_i x_i / sum w_i over the field's dofs. */
static PetscErrorCode shift(const struct mean *m, Vec x)
{
	PetscFunctionBeginUser;
	PetscScalar *xv;
	PetscInt lo;
	double loc[2] = {0, 0}, all[2];
	PetscCall(VecGetOwnershipRange(x, &lo, NULL));
	PetscCall(VecGetArray(x, &xv));
	for (PetscInt i = 0; i < m->n; ++i) {
		loc[0] += m->w[i] * xv[m->dofs[i] - lo];
		loc[1] += m->w[i];
	}
	PetscCallMPI(MPI_Allreduce(loc, all, 2, MPI_DOUBLE, MPI_SUM, PETSC_COMM_WORLD));
	double c = m->target - all[0] / all[1];
	for (PetscInt i = 0; i < m->n; ++i) {
		xv[m->dofs[i] - lo] += c;
	}
	PetscCall(VecRestoreArray(x, &xv));
	PetscFunctionReturn(0);
}

/* configure sets formwright's choice of solver (runtime/distributed,
 * Solver), which the user's PETSc options then override. */
/* has_constraint reports whether the form has a constraint field (the
 * pressure of an incompressible flow: ir.LoweredUnknown.Constraint). */
static int has_constraint(const struct header *h)
{
	for (int64_t k = 0; k < h->fields; ++k) {
		if (h->constraint[k]) {
			return 1;
		}
	}
	return 0;
}

static PetscErrorCode default_option(const char *name, const char *value);
static PetscErrorCode classical_amg_defaults(const char *prefix, int64_t dim);

/* block_preconditioner makes pc the block upper-triangular
 * preconditioner of a saddle-point system, as runtime/linsolve's
 * PrecondAMGBlock: M = [A_uu A_up; 0 S], with one AMG V-cycle for A_uu
 * (split "u": the primary fields) and the diagonal of
 * S_p = A_pp - A_pu diag(A_uu)^-1 A_up for the Schur complement (split
 * "p": the constraint fields); Murphy, Golub & Wathen 2000, SIAM J. Sci.
 * Comput. 21, and Elman, Silvester & Wathen 2005, ch. 6 [memory]. */
static PetscErrorCode block_preconditioner(PC pc, const struct part *p)
{
	PetscFunctionBeginUser;
	const struct header *h = &p->h;
	PetscInt nu = 0, np = 0, at = p->lo;
	PetscInt *iu = alloc((size_t)(p->hi - p->lo), sizeof(PetscInt)), *ip = alloc((size_t)(p->hi - p->lo), sizeof(PetscInt));
	for (int64_t k = 0; k < h->fields; ++k) {
		for (PetscInt i = 0; i < p->owned[k]; ++i, ++at) {
			if (h->constraint[k]) {
				ip[np++] = at;
			} else {
				iu[nu++] = at;
			}
		}
	}
	IS isu, isp;
	PetscCall(ISCreateGeneral(PETSC_COMM_WORLD, nu, iu, PETSC_OWN_POINTER, &isu));
	PetscCall(ISCreateGeneral(PETSC_COMM_WORLD, np, ip, PETSC_OWN_POINTER, &isp));
	PetscCall(PCSetType(pc, PCFIELDSPLIT));
	PetscCall(PCFieldSplitSetIS(pc, "u", isu));
	PetscCall(PCFieldSplitSetIS(pc, "p", isp));
	PetscCall(ISDestroy(&isu));
	PetscCall(ISDestroy(&isp));
	PetscCall(PCFieldSplitSetType(pc, PC_COMPOSITE_SCHUR));
	PetscCall(PCFieldSplitSetSchurFactType(pc, PC_FIELDSPLIT_SCHUR_FACT_UPPER));
	PetscCall(PCFieldSplitSetSchurPre(pc, PC_FIELDSPLIT_SCHUR_PRE_SELFP, NULL));
	PetscCall(default_option("-fieldsplit_u_ksp_type", "preonly"));
	PetscCall(default_option("-fieldsplit_p_ksp_type", "preonly"));
	PetscCall(default_option("-fieldsplit_p_pc_type", "jacobi"));
	PetscBool set;
	PetscCall(PetscOptionsHasName(NULL, NULL, "-fieldsplit_u_pc_type", &set));
	if (!set) {
#if defined(PETSC_HAVE_HYPRE)
		PetscCall(default_option("-fieldsplit_u_pc_type", "hypre"));
		PetscCall(default_option("-fieldsplit_u_pc_hypre_type", "boomeramg"));
		PetscCall(classical_amg_defaults("-fieldsplit_u_", h->dim));
#else
		PetscCall(default_option("-fieldsplit_u_pc_type", "gamg"));
#endif
	}
	PetscFunctionReturn(0);
}

static PetscErrorCode configure(KSP ksp, const struct part *part, PetscBool sym, int *direct, char *why, size_t nwhy)
{
	const struct header *h = &part->h;
	PetscFunctionBeginUser;
	PC pc;
	int64_t method = h->method;
	PetscCall(KSPGetPC(ksp, &pc));
	snprintf(why, nwhy, "as asked");
	if (method == METHOD_AUTO) {
		method = h->global < h->direct_limit ? METHOD_DIRECT : (sym ? METHOD_CG : METHOD_GMRES);
		if (method == METHOD_DIRECT) {
			snprintf(why, nwhy, "%lld unknowns < %lld: sparse LU", (long long)h->global, (long long)h->direct_limit);
		} else if (has_constraint(h)) {
			/* The block preconditioner (PRECOND_BLOCK) took 169
			 * GMRES iterations at 64^2 and 3700 at 128^2 on the
			 * seep-cell Stokes example, whose grad-div term
			 * dominates the velocity block, where MUMPS solved
			 * 310 000 unknowns in 8 s on 2 ranks (measured). */
			method = METHOD_DIRECT;
			snprintf(why, nwhy, "saddle point (a constraint field), %lld unknowns: parallel sparse LU", (long long)h->global);
		} else {
			snprintf(why, nwhy, "%s, %lld unknowns: %s with algebraic multigrid", sym ? "symmetric" : "not symmetric", (long long)h->global, sym ? "CG" : "GMRES");
		}
	}
	*direct = method == METHOD_DIRECT;
	if (method == METHOD_DIRECT) {
		PetscCall(KSPSetType(ksp, KSPPREONLY));
		PetscCall(PCSetType(pc, PCLU));
#if defined(PETSC_HAVE_MUMPS)
		PetscCall(PCFactorSetMatSolverType(pc, MATSOLVERMUMPS));
#elif defined(PETSC_HAVE_SUPERLU_DIST)
		PetscCall(PCFactorSetMatSolverType(pc, MATSOLVERSUPERLU_DIST));
#endif
		PetscFunctionReturn(0);
	}
	switch (method) {
	case METHOD_CG:
		PetscCall(KSPSetType(ksp, KSPCG));
		break;
	case METHOD_GMRES:
		PetscCall(KSPSetType(ksp, KSPGMRES));
		PetscCall(KSPGMRESSetRestart(ksp, (PetscInt)h->restart));
		PetscCall(KSPSetPCSide(ksp, PC_RIGHT));
		break;
	case METHOD_BICGSTAB:
		PetscCall(KSPSetType(ksp, KSPBCGS));
		PetscCall(KSPSetPCSide(ksp, PC_RIGHT));
		break;
	}
	/* The residual that stops the iteration is b - A x itself, as in
	 * runtime/linsolve, so the tolerance means the same on both engines. */
	PetscCall(KSPSetNormType(ksp, KSP_NORM_UNPRECONDITIONED));
	PetscCall(KSPSetTolerances(ksp, h->rtol, 1e-300, PETSC_DEFAULT, (PetscInt)h->maxit));
	switch (h->precond) {
	case PRECOND_NONE:
		PetscCall(PCSetType(pc, PCNONE));
		break;
	case PRECOND_JACOBI:
		PetscCall(PCSetType(pc, PCJACOBI));
		break;
	case PRECOND_ILU0:
		/* ILU(0) of each rank's diagonal block (block Jacobi). */
		PetscCall(PCSetType(pc, PCBJACOBI));
		break;
	case PRECOND_HYPRE:
#if defined(PETSC_HAVE_HYPRE)
		PetscCall(PCSetType(pc, PCHYPRE));
		PetscCall(PCHYPRESetType(pc, "boomeramg"));
		break;
#else
		die(EXIT_INPUT, "this PETSc has no hypre: use the preconditioner sa-amg (GAMG)");
#endif
	case PRECOND_GAMG:
		PetscCall(PCSetType(pc, PCGAMG));
		break;
	case PRECOND_BLOCK:
		if (!has_constraint(h)) {
			die(EXIT_INPUT, "the block preconditioner needs a constraint field (the pressure of an incompressible flow); this form has none");
		}
		PetscCall(block_preconditioner(pc, part));
		break;
	default:
		/* Algebraic multigrid: hypre's classical AMG where PETSc has it
		 * (fewer iterations and less time than GAMG on the diffusion
		 * and advection problems of the package's tests), else GAMG. */
#if defined(PETSC_HAVE_HYPRE)
		PetscCall(PCSetType(pc, PCHYPRE));
		PetscCall(PCHYPRESetType(pc, "boomeramg"));
#else
		PetscCall(PCSetType(pc, PCGAMG));
#endif
		break;
	}
	PetscFunctionReturn(0);
}

/* default_option puts name = value in PETSc's options unless the user
 * gave name, so that the user's options win. */
static PetscErrorCode default_option(const char *name, const char *value)
{
	PetscFunctionBeginUser;
	PetscBool set;
	PetscCall(PetscOptionsHasName(NULL, NULL, name, &set));
	if (!set) {
		PetscCall(PetscOptionsSetValue(NULL, name, value));
	}
	PetscFunctionReturn(0);
}

/* classical_amg_defaults are formwright's settings of hypre's classical
 * AMG for problems of this size: HMIS coarsening with extended+i
 * interpolation truncated to 4 entries per row (De Sterck, Yang & Heys
 * 2006, SIAM J. Matrix Anal. Appl. 27; De Sterck et al. 2008, Numer.
 * Linear Algebra Appl. 15 [memory]), strength threshold 0.25 in 2D and
 * 0.5 in 3D, and in 3D aggressive coarsening on the first level (Yang
 * 2010, Numer. Linear Algebra Appl. 17 [memory]). hypre's own defaults
 * (Falgout coarsening, classical interpolation) give 3D operators of high
 * complexity: on the 10^6-unknown diffusion problem of the package's
 * benchmark their set-up took 4x longer and each V-cycle 6x longer. */
static PetscErrorCode classical_amg_defaults(const char *prefix, int64_t dim)
{
	PetscFunctionBeginUser;
	char name[256];
#define AMG_DEFAULT(opt, value) \
	do { \
		snprintf(name, sizeof name, "%spc_hypre_boomeramg_%s", prefix, opt); \
		PetscCall(default_option(name, value)); \
	} while (0)
	AMG_DEFAULT("coarsen_type", "HMIS");
	AMG_DEFAULT("interp_type", "ext+i");
	AMG_DEFAULT("P_max", "4");
	AMG_DEFAULT("strong_threshold", dim >= 3 ? "0.5" : "0.25");
	/* hypre's own smoothing (one forward hybrid Gauss-Seidel sweep down,
	 * one backward up, a symmetric V-cycle) instead of PETSc's symmetric
	 * sweeps both ways: half the cost per cycle for as many cycles on
	 * the benchmark's advection problem. */
	AMG_DEFAULT("relax_type_down", "SOR/Jacobi");
	AMG_DEFAULT("relax_type_up", "backward-SOR/Jacobi");
	AMG_DEFAULT("relax_type_coarse", "Gaussian-elimination");
	if (dim >= 3) {
		AMG_DEFAULT("agg_nl", "1");
	}
#undef AMG_DEFAULT
	PetscFunctionReturn(0);
}

static double now(void) { return MPI_Wtime(); }

static PetscErrorCode write_x(const char *dir, Vec x, const struct part *p)
{
	PetscFunctionBeginUser;
	char path[4096];
	snprintf(path, sizeof path, "%s/x.%d", dir, (int)rank);
	FILE *f = fopen(path, "wb");
	if (f == NULL) {
		die(EXIT_INPUT, "cannot write %s", path);
	}
	const PetscScalar *xv;
	int64_t lh[2] = {p->lo, p->hi};
	PetscCall(VecGetArrayRead(x, &xv));
	if (fwrite(MAGIC_OUT, 1, 8, f) != 8 || fwrite(lh, sizeof(int64_t), 2, f) != 2 ||
	    fwrite(xv, sizeof(double), (size_t)(p->hi - p->lo), f) != (size_t)(p->hi - p->lo) || fclose(f) != 0) {
		die(EXIT_INPUT, "cannot write %s", path);
	}
	PetscCall(VecRestoreArrayRead(x, &xv));
	PetscFunctionReturn(0);
}

/* assemble_at assembles A and b with the kernels reading the iterate u
 * (NULL: a form that reads none), gathered to the rank's cells. */
static PetscErrorCode assemble_at(const struct part *p, const struct ghost *g, Vec u, Mat A, Vec b)
{
	PetscFunctionBeginUser;
	const PetscScalar *pl = NULL;
	if (u) {
		PetscCall(VecScatterBegin(g->scatter, u, g->local, INSERT_VALUES, SCATTER_FORWARD));
		PetscCall(VecScatterEnd(g->scatter, u, g->local, INSERT_VALUES, SCATTER_FORWARD));
		PetscCall(VecGetArrayRead(g->local, &pl));
	}
	PetscCall(assemble(p, g, pl, A, b));
	if (u) {
		PetscCall(VecRestoreArrayRead(g->local, &pl));
	}
	PetscFunctionReturn(0);
}

/* setup_solver configures the Krylov method and preconditioner once:
 * formwright's choice, then the user's options, then the classical-AMG
 * settings if the preconditioner is hypre's. */
static PetscErrorCode setup_solver(KSP ksp, const struct part *p, PetscBool sym, int *direct, char *why, size_t nwhy)
{
	PetscFunctionBeginUser;
	PC pc;
	PetscBool hypre;
	PetscCall(configure(ksp, p, sym, direct, why, nwhy));
	PetscCall(KSPSetFromOptions(ksp));
	PetscCall(KSPGetPC(ksp, &pc));
	PetscCall(PetscObjectTypeCompare((PetscObject)pc, PCHYPRE, &hypre));
	if (hypre) {
		/* Set only now, so no option is left unused when the
		 * preconditioner is another. */
		PetscCall(classical_amg_defaults("-", p->h.dim));
		PetscCall(PCSetFromOptions(pc));
	}
	PetscFunctionReturn(0);
}

/* One line of Newton's history (runtime/problem.NewtonStep). */
struct newton_step {
	int iter, backtracks, linear_its;
	double residual, relative, step, update, linear_residual;
};

/* masked_norm is ||b|| over the dofs without a value condition (mask 1
 * there, 0 elsewhere). */
static PetscErrorCode masked_norm(Vec b, Vec mask, Vec work, double *n)
{
	PetscFunctionBeginUser;
	PetscCall(VecPointwiseMult(work, b, mask));
	PetscCall(VecNorm(work, NORM_2, n));
	PetscFunctionReturn(0);
}

/* The phases timed, each the largest over the ranks. */
enum { T_READ, T_SETUP, T_ASSEMBLY, T_CONSTRAIN, T_PCSETUP, T_SOLVE, T_COUNT };
static const char *phase_names[T_COUNT] = {"read", "setup", "assembly", "constrain", "pc_setup", "solve"};

static PetscErrorCode run(const char *dir)
{
	PetscFunctionBeginUser;
	double t[T_COUNT] = {0}, t0 = now();
	char why[256] = "";
	struct rusage ru0;
	getrusage(RUSAGE_SELF, &ru0);
	long rss0 = ru0.ru_maxrss; /* after MPI and PETSc started: the baseline */
	struct part p;
	memset(&p, 0, sizeof p);
	read_part(dir, &p);
	const struct header *h = &p.h;
	t[T_READ] = now() - t0;
	t0 = now();

	const struct fw_kernel_layout *l = FW_LAYOUT();
	PetscInt nown = p.hi - p.lo;
	Mat A;
	Vec x, b, r, g, prev = NULL;
	PetscCall(MatCreate(PETSC_COMM_WORLD, &A));
	PetscCall(MatSetSizes(A, nown, nown, (PetscInt)h->global, (PetscInt)h->global));
	PetscCall(MatSetType(A, MATAIJ));
	if (l->num_fields == 1 && l->fields[0].components > 1 && nown % l->fields[0].components == 0) {
		/* One vector field, its components interleaved per node. */
		PetscCall(MatSetBlockSize(A, l->fields[0].components));
	}
	PetscCall(MatSeqAIJSetPreallocation(A, 0, p.dnnz));
	PetscCall(MatMPIAIJSetPreallocation(A, 0, p.dnnz, 0, p.onnz));
	PetscCall(MatSetOption(A, MAT_NEW_NONZERO_ALLOCATION_ERR, PETSC_TRUE));
	PetscCall(MatSetOption(A, MAT_KEEP_NONZERO_PATTERN, PETSC_TRUE));
	PetscCall(MatCreateVecs(A, &x, &b));
	PetscCall(VecDuplicate(x, &r));
	PetscCall(VecDuplicate(x, &g));
	for (PetscInt i = 0; i < p.nfixed; ++i) {
		PetscCall(VecSetValue(g, p.fixed[i], p.values[i], INSERT_VALUES));
	}
	PetscCall(VecAssemblyBegin(g));
	PetscCall(VecAssemblyEnd(g));
	struct ghost gh;
	memset(&gh, 0, sizeof gh);
	if (l->needs_previous) {
		PetscCall(VecDuplicate(x, &prev));
		PetscScalar *pv;
		PetscCall(VecGetArray(prev, &pv));
		memcpy(pv, p.initial, (size_t)nown * sizeof(double));
		PetscCall(VecRestoreArray(prev, &pv));
		PetscCall(ghost_create(&p, prev, &gh));
	}
	KSP ksp;
	PetscCall(KSPCreate(PETSC_COMM_WORLD, &ksp));
	t[T_SETUP] = now() - t0;

	struct pinned *pins = alloc((size_t)h->means, sizeof *pins);
	PetscBool sym = PETSC_FALSE;
	int direct = 0, converged = 1, picard = 0, picard_failed = 0;
	double residual = 0, mean_residual = 0, change = 0, bnorm = 0;
	PetscInt its = 0, total_its = 0;
	KSPConvergedReason reason = KSP_CONVERGED_ITERATING;
	MatInfo info;
	double mallocs = 0, unneeded = 0, nonzeros = 0;
	int64_t max_picard = l->needs_previous ? (h->max_picard > 0 ? h->max_picard : 50) : 1;
	struct newton_step *hist = NULL;
	int nhist = 0, newton_failed = 0;
	char newton_reason[256] = "";
	if (h->newton) {
		max_picard = 0; /* no Picard loop */
		/* Newton's method with a backtracking line search, as
		 * runtime/problem's newton: J(u_k) du = -F(u_k) with du = 0 on
		 * the prescribed dofs (and the mean pins), u_k + lambda du for
		 * lambda = lambda_0, lambda_0/2, ... until Armijo's condition
		 * ||F|| <= (1 - 1e-4 lambda) ||F_k|| holds (Dennis & Schnabel
		 * 1983, Numerical Methods for Unconstrained Optimization and
		 * Nonlinear Equations, 6.3 [memory]). The trial's assembly is the
		 * next iteration's system. */
		if (!prev) {
			die(EXIT_INPUT, "a Newton step form whose kernels do not read the iterate");
		}
		int64_t maxit = h->newton_maxit > 0 ? h->newton_maxit : 30;
		double rtol = h->newton_rtol > 0 ? h->newton_rtol : 1e-10;
		double steptol = h->newton_steptol > 0 ? h->newton_steptol : 1e-11;
		double damping = h->newton_damping > 0 && h->newton_damping <= 1 ? h->newton_damping : 1;
		double minstep = h->newton_minstep > 0 ? h->newton_minstep : 1.0 / 4096;
		hist = alloc((size_t)maxit + 1, sizeof *hist);
		Vec u = prev, du = x, trial, mask, zero, work;
		PetscCall(VecDuplicate(x, &trial));
		PetscCall(VecDuplicate(x, &mask));
		PetscCall(VecDuplicate(x, &zero));
		PetscCall(VecDuplicate(x, &work));
		PetscCall(VecSet(zero, 0));
		PetscCall(VecSet(mask, 1));
		PetscInt nrows = p.nfixed;
		PetscInt *rows = alloc((size_t)(p.nfixed + h->means), sizeof(PetscInt));
		memcpy(rows, p.fixed, (size_t)p.nfixed * sizeof(PetscInt));
		for (int64_t k = 0; k < h->means; ++k) {
			PetscInt lo, hi;
			PetscCall(VecGetOwnershipRange(x, &lo, &hi));
			if (p.means[k].pin >= lo && p.means[k].pin < hi) {
				rows[nrows++] = p.means[k].pin;
			}
		}
		for (PetscInt i = 0; i < nrows; ++i) {
			PetscCall(VecSetValue(mask, rows[i], 0, INSERT_VALUES));
		}
		PetscCall(VecAssemblyBegin(mask));
		PetscCall(VecAssemblyEnd(mask));
		for (int64_t k = 0; k < h->means; ++k) {
			PetscCall(shift(&p.means[k], u));
		}
		t0 = now();
		PetscCall(assemble_at(&p, &gh, u, A, b));
		t[T_ASSEMBLY] += now() - t0;
		PetscCall(MatGetInfo(A, MAT_GLOBAL_SUM, &info));
		mallocs = info.mallocs;
		unneeded = info.nz_unneeded;
		nonzeros = info.nz_used;
		PetscCall(is_symmetric(A, h->sym_tol, &sym));
		double r0, r;
		PetscCall(masked_norm(b, mask, work, &r0));
		r = r0;
		hist[nhist++] = (struct newton_step){.iter = 0, .residual = r0, .relative = 1};
		int done = r0 == 0 || r0 <= h->newton_atol;
		if (!isfinite(r0)) {
			newton_failed = 1;
			snprintf(newton_reason, sizeof newton_reason, "the residual at the initial iterate is not finite");
			done = 1;
		}
		for (int it = 1; it <= maxit && !done; ++it) {
			t0 = now();
			if (sym) {
				PetscCall(MatZeroRowsColumns(A, nrows, rows, 1.0, zero, b));
				PetscCall(MatSetOption(A, MAT_SYMMETRIC, PETSC_TRUE));
			} else {
				PetscCall(MatZeroRows(A, nrows, rows, 1.0, zero, b));
			}
			t[T_CONSTRAIN] += now() - t0;
			t0 = now();
			PetscCall(KSPSetOperators(ksp, A, A));
			if (it == 1) {
				PetscCall(setup_solver(ksp, &p, sym, &direct, why, sizeof why));
			}
			PetscCall(KSPSetUp(ksp));
			t[T_PCSETUP] += now() - t0;
			t0 = now();
			PetscCall(VecSet(du, 0));
			PetscCall(KSPSolve(ksp, b, du));
			PetscCall(KSPGetConvergedReason(ksp, &reason));
			PetscCall(KSPGetIterationNumber(ksp, &its));
			total_its += its;
			double rn;
			PetscCall(MatMult(A, du, work));
			PetscCall(VecAYPX(work, -1.0, b));
			PetscCall(VecNorm(work, NORM_2, &rn));
			PetscCall(VecNorm(b, NORM_2, &bnorm));
			residual = bnorm > 0 ? rn / bnorm : rn;
			t[T_SOLVE] += now() - t0;
			struct newton_step st = {.iter = it, .linear_its = its, .linear_residual = residual};
			if (reason < 0) {
				converged = 0;
				newton_failed = 1;
				snprintf(newton_reason, sizeof newton_reason, "the linear system of iteration %d could not be solved", it);
				break;
			}
			double un, dn;
			PetscCall(VecNorm(u, NORM_2, &un));
			PetscCall(VecNorm(du, NORM_2, &dn));
			int full = dn <= steptol * PetscMax(un, 1e-300);
			double lambda = damping, rt = 0;
			for (;;) {
				PetscCall(VecWAXPY(trial, lambda, du, u));
				for (int64_t k = 0; k < h->means; ++k) {
					PetscCall(shift(&p.means[k], trial));
				}
				t0 = now();
				PetscCall(assemble_at(&p, &gh, trial, A, b));
				t[T_ASSEMBLY] += now() - t0;
				PetscCall(masked_norm(b, mask, work, &rt));
				int finite = isfinite(rt);
				if (h->newton_no_search || full || (finite && rt <= (1 - 1e-4 * lambda) * r)) {
					if (!finite) {
						st.residual = rt, st.relative = r0 > 0 ? rt / r0 : 0, st.step = lambda;
						hist[nhist++] = st;
						newton_failed = 1;
						snprintf(newton_reason, sizeof newton_reason, "the residual is not finite (the iteration diverged)");
					}
					break;
				}
				st.backtracks++;
				lambda /= 2;
				if (lambda < minstep) {
					st.residual = rt, st.relative = r0 > 0 ? rt / r0 : 0, st.step = lambda * 2;
					hist[nhist++] = st;
					newton_failed = 1;
					snprintf(newton_reason, sizeof newton_reason, "the line search stalled: no step length down to %.2g reduced ||F||", minstep);
					break;
				}
			}
			if (newton_failed) {
				break;
			}
			r = rt;
			PetscCall(VecCopy(trial, u));
			double nu;
			PetscCall(VecNorm(u, NORM_2, &nu));
			st.residual = r, st.relative = r0 > 0 ? r / r0 : 0, st.step = lambda;
			st.update = lambda * dn / PetscMax(nu, 1e-300);
			hist[nhist++] = st;
			done = r <= rtol * r0 || r <= h->newton_atol || full;
		}
		if (!done && !newton_failed) {
			newton_failed = 1;
			snprintf(newton_reason, sizeof newton_reason, "the iteration limit was reached");
		}
		/* The equations the mean pins replaced: |F_pin| / ||F_0||. */
		mean_residual = 0;
		for (int64_t k = 0; k < h->means; ++k) {
			PetscInt lo, hi;
			double v = 0, all;
			PetscCall(VecGetOwnershipRange(b, &lo, &hi));
			if (p.means[k].pin >= lo && p.means[k].pin < hi) {
				PetscCall(VecGetValues(b, 1, &p.means[k].pin, &v));
			}
			v = PetscAbsScalar(v) / PetscMax(r0, 1e-300);
			PetscCallMPI(MPI_Allreduce(&v, &all, 1, MPI_DOUBLE, MPI_MAX, PETSC_COMM_WORLD));
			mean_residual = PetscMax(mean_residual, all);
		}
		PetscCall(VecCopy(u, x));
		free(rows);
		PetscCall(VecDestroy(&trial));
		PetscCall(VecDestroy(&mask));
		PetscCall(VecDestroy(&zero));
		PetscCall(VecDestroy(&work));
	}
	for (picard = 1; !h->newton && picard <= max_picard; ++picard) {
		t0 = now();
		const PetscScalar *pl = NULL;
		if (prev) {
			PetscCall(VecScatterBegin(gh.scatter, prev, gh.local, INSERT_VALUES, SCATTER_FORWARD));
			PetscCall(VecScatterEnd(gh.scatter, prev, gh.local, INSERT_VALUES, SCATTER_FORWARD));
			PetscCall(VecGetArrayRead(gh.local, &pl));
		}
		PetscCall(assemble(&p, &gh, pl, A, b));
		if (prev) {
			PetscCall(VecRestoreArrayRead(gh.local, &pl));
		}
		t[T_ASSEMBLY] += now() - t0;
		if (picard == 1) {
			/* Exact preallocation: no allocation during assembly and
			 * no preallocated entry left unused. */
			PetscCall(MatGetInfo(A, MAT_GLOBAL_SUM, &info));
			mallocs = info.mallocs;
			unneeded = info.nz_unneeded;
			nonzeros = info.nz_used;
		}
		t0 = now();
		for (int64_t k = 0; k < h->means; ++k) {
			PetscCall(keep_row(A, b, p.means[k].pin, &pins[k]));
		}
		if (picard == 1) {
			PetscCall(is_symmetric(A, h->sym_tol, &sym));
		}
		/* Mean conditions pin their dof at 0 (runtime/problem.Solve). */
		PetscInt nrows = p.nfixed;
		PetscInt *rows = alloc((size_t)(p.nfixed + h->means), sizeof(PetscInt));
		memcpy(rows, p.fixed, (size_t)p.nfixed * sizeof(PetscInt));
		for (int64_t k = 0; k < h->means; ++k) {
			if (pins[k].owned) {
				rows[nrows++] = p.means[k].pin;
				PetscCall(VecSetValue(g, p.means[k].pin, 0, INSERT_VALUES));
			}
		}
		PetscCall(VecAssemblyBegin(g));
		PetscCall(VecAssemblyEnd(g));
		/* Row elimination as runtime/assemble.Constrain: the fixed
		 * columns too when A is symmetric, so it stays symmetric. */
		if (sym) {
			PetscCall(MatZeroRowsColumns(A, nrows, rows, 1.0, g, b));
		} else {
			PetscCall(MatZeroRows(A, nrows, rows, 1.0, g, b));
		}
		free(rows);
		if (sym) {
			PetscCall(MatSetOption(A, MAT_SYMMETRIC, PETSC_TRUE));
		}
		t[T_CONSTRAIN] += now() - t0;

		t0 = now();
		PetscCall(KSPSetOperators(ksp, A, A));
		if (picard == 1) {
			PetscCall(setup_solver(ksp, &p, sym, &direct, why, sizeof why));
		}
		PetscBool preonly;
		PetscCall(PetscObjectTypeCompare((PetscObject)ksp, KSPPREONLY, &preonly));
		if (prev && !preonly) {
			/* Start from the previous iterate (with its values on the
			 * fixed dofs), as runtime/problem does. */
			PetscCall(VecCopy(prev, x));
			PetscCall(KSPSetInitialGuessNonzero(ksp, PETSC_TRUE));
		}
		PetscCall(KSPSetUp(ksp));
		t[T_PCSETUP] += now() - t0;
		t0 = now();
		PetscCall(KSPSolve(ksp, b, x));
		PetscCall(KSPGetConvergedReason(ksp, &reason));
		PetscCall(KSPGetIterationNumber(ksp, &its));
		total_its += its;
		/* The explicit residual of the constrained system. */
		PetscCall(MatMult(A, x, r));
		PetscCall(VecAYPX(r, -1.0, b));
		double rn;
		PetscCall(VecNorm(r, NORM_2, &rn));
		PetscCall(VecNorm(b, NORM_2, &bnorm));
		residual = bnorm > 0 ? rn / bnorm : rn;
		t[T_SOLVE] += now() - t0;
		if (reason < 0) {
			converged = 0;
			break;
		}
		mean_residual = 0;
		for (int64_t k = 0; k < h->means; ++k) {
			double rr = 0;
			PetscCall(row_residual(&pins[k], x, &rr));
			mean_residual = PetscMax(mean_residual, rr);
			PetscCall(shift(&p.means[k], x));
			free(pins[k].cols);
			free(pins[k].vals);
		}
		if (!prev) {
			break;
		}
		/* Picard: the relative change, under-relaxation, next iterate. */
		double dn, xn;
		PetscCall(VecAXPY(prev, -1.0, x)); /* prev <- prev - x */
		PetscCall(VecNorm(prev, NORM_2, &dn));
		PetscCall(VecNorm(x, NORM_2, &xn));
		change = dn / PetscMax(xn, 1e-300);
		if (h->relax > 0 && h->relax < 1) {
			/* x <- prev_old + w (x - prev_old) = x + (1 - w)(prev_old - x) */
			PetscCall(VecAXPY(x, 1.0 - h->relax, prev));
		}
		PetscCall(VecCopy(x, prev));
		if (change <= h->picard_tol) {
			break;
		}
		if (picard == max_picard) {
			picard_failed = 1;
			break;
		}
	}
	if (h->newton) {
		picard = nhist - 1;
	} else if (picard > max_picard) {
		picard = (int)max_picard;
	}

	PetscCall(write_x(dir, x, &p));
	double tmax[T_COUNT];
	PetscCallMPI(MPI_Reduce(t, tmax, T_COUNT, MPI_DOUBLE, MPI_MAX, 0, PETSC_COMM_WORLD));
	struct rusage ru;
	getrusage(RUSAGE_SELF, &ru);
	long rss = ru.ru_maxrss; /* kilobytes on Linux */
	long *rss_all = alloc((size_t)size, sizeof(long)), *rss0_all = alloc((size_t)size, sizeof(long));
	PetscCallMPI(MPI_Gather(&rss, 1, MPI_LONG, rss_all, 1, MPI_LONG, 0, PETSC_COMM_WORLD));
	PetscCallMPI(MPI_Gather(&rss0, 1, MPI_LONG, rss0_all, 1, MPI_LONG, 0, PETSC_COMM_WORLD));
	if (rank == 0) {
		char path[4096];
		snprintf(path, sizeof path, "%s/result", dir);
		FILE *f = fopen(path, "w");
		if (f == NULL) {
			die(EXIT_INPUT, "cannot write %s", path);
		}
		KSPType kt;
		PCType pt;
		PC pc;
		PetscCall(KSPGetType(ksp, &kt));
		PetscCall(KSPGetPC(ksp, &pc));
		PetscCall(PCGetType(pc, &pt));
		fprintf(f, "petsc %d.%d.%d\n", PETSC_VERSION_MAJOR, PETSC_VERSION_MINOR, PETSC_VERSION_SUBMINOR);
		fprintf(f, "ksp %s\n", kt);
		fprintf(f, "pc %s\n", pt);
		if (pt && (strcmp(pt, PCLU) == 0 || strcmp(pt, PCCHOLESKY) == 0)) {
			MatSolverType st;
			PetscCall(PCFactorGetMatSolverType(pc, &st));
			fprintf(f, "factor %s\n", st ? st : "petsc");
		}
		if (pt && strcmp(pt, PCHYPRE) == 0) {
			fprintf(f, "factor boomeramg\n");
		}
		fprintf(f, "direct %d\n", direct);
		fprintf(f, "symmetric %d\n", (int)sym);
		fprintf(f, "converged %d\n", converged);
		fprintf(f, "reason %s\n", KSPConvergedReasons[reason]);
		fprintf(f, "iterations %d\n", (int)its);
		fprintf(f, "total_iterations %d\n", (int)total_its);
		fprintf(f, "residual %.17g\n", residual);
		fprintf(f, "rhs_norm %.17g\n", bnorm);
		fprintf(f, "picard %d\n", picard);
		fprintf(f, "picard_failed %d\n", picard_failed);
		fprintf(f, "picard_change %.17g\n", change);
		fprintf(f, "mean_residual %.17g\n", mean_residual);
		fprintf(f, "nonzeros %.0f\n", nonzeros);
		fprintf(f, "mallocs %.0f\n", mallocs);
		fprintf(f, "unneeded %.0f\n", unneeded);
		for (int k = 0; k < T_COUNT; ++k) {
			fprintf(f, "time_%s %.9f\n", phase_names[k], tmax[k]);
		}
		fprintf(f, "maxrss_kb");
		for (int k = 0; k < size; ++k) {
			fprintf(f, " %ld", rss_all[k]);
		}
		fprintf(f, "\nbaseline_kb");
		for (int k = 0; k < size; ++k) {
			fprintf(f, " %ld", rss0_all[k]);
		}
		fprintf(f, "\nchoice %s\n", why);
		if (h->newton) {
			fprintf(f, "newton_failed %d\n", newton_failed);
			fprintf(f, "newton_reason %s\n", newton_reason);
			for (int k = 0; k < nhist; ++k) {
				const struct newton_step *st = &hist[k];
				fprintf(f, "newton_step %d %.17g %.17g %.17g %.17g %d %d %.17g\n", st->iter, st->residual, st->relative, st->step, st->update,
				        st->backtracks, st->linear_its, st->linear_residual);
			}
		}
		if (fclose(f) != 0) {
			die(EXIT_INPUT, "cannot write %s", path);
		}
	}
	free(rss_all);
	free(rss0_all);
	free(hist);
	free(pins);
	PetscCall(KSPDestroy(&ksp));
	PetscCall(MatDestroy(&A));
	PetscCall(VecDestroy(&x));
	PetscCall(VecDestroy(&b));
	PetscCall(VecDestroy(&r));
	PetscCall(VecDestroy(&g));
	if (prev) {
		PetscCall(VecDestroy(&prev));
		PetscCall(VecDestroy(&gh.local));
		PetscCall(VecScatterDestroy(&gh.scatter));
		free(gh.where);
	}
	PetscFunctionReturn(0);
}

int main(int argc, char **argv)
{
	PetscErrorCode ierr = PetscInitialize(&argc, &argv, NULL, NULL);
	if (ierr) {
		fprintf(stderr, "formwright-driver: PETSc did not start\n");
		return EXIT_PETSC;
	}
	MPI_Comm_rank(PETSC_COMM_WORLD, &rank);
	MPI_Comm_size(PETSC_COMM_WORLD, &size);
	if (argc < 2 || argv[1][0] == '-') {
		die(EXIT_INPUT, "usage: driver RUNDIR [PETSc options]");
	}
	ierr = run(argv[1]);
	if (ierr) {
		fprintf(stderr, "formwright-driver: rank %d: PETSc error %d\n", (int)rank, (int)ierr);
		fflush(stderr);
		MPI_Abort(MPI_COMM_WORLD, EXIT_PETSC);
		return EXIT_PETSC;
	}
	PetscFinalize();
	return 0;
}
