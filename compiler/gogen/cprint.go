package gogen

import (
	"fmt"
	"path"
	"regexp"
	"strconv"
	"strings"
	"unicode"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
)

// The C printer: it spells a kernel description as a C99 header and
// source file that also compile as C++11 (no designated initialisers, no
// variable-length arrays, no compound literals), need only <math.h>,
// allocate nothing and keep no global state (the tables are static
// const). The ABI is documented in the header it writes (cABI) and in the
// package documentation.

// COptions control GenerateC.
type COptions struct {
	// Name is the base name of the two files, Name.h and Name.c; the source
	// includes the header by this name. Letters, digits, '_', '-' and '.';
	// empty: Prefix + "_kernels".
	Name string
	// Prefix starts every identifier the files declare (functions, static
	// tables): letters and digits, single underscores between them,
	// starting with a letter, not a keyword. Empty: CPrefix of the model
	// file's base name.
	Prefix string
	// ModelFile, CommandLine, Methods and Derived are as in Options.
	ModelFile   string
	CommandLine string
	Methods     []string
	Derived     map[string]Derived

	// loopAbove is Options.loopAbove.
	loopAbove int
}

// cABIVersion is the version of the shared types; the header guards them
// with FW_KERNEL_ABI_<version>, so headers of several models can be
// included together.
const cABIVersion = 2

var (
	cPrefixRE = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9]*(_[A-Za-z0-9]+)*$`)
	cNameRE   = regexp.MustCompile(`^[A-Za-z0-9_][A-Za-z0-9_.-]*$`)
)

// GenerateC writes the element kernels of forms as a C header and source
// file: per form a cell kernel <prefix>_<method>_cell, a facet kernel
// <prefix>_<method>_facet and a layout function <prefix>_<method>_layout.
// The output is deterministic.
func GenerateC(forms []*ir.LoweredForm, opts COptions) (header, source []byte, err error) {
	if opts.Prefix == "" {
		opts.Prefix = CPrefix(opts.ModelFile)
	}
	if !cPrefixRE.MatchString(opts.Prefix) || reservedWord(opts.Prefix) || strings.HasPrefix(opts.Prefix, "fw_") {
		return nil, nil, fmt.Errorf("gogen: C prefix %q is not an identifier of letters and digits joined by single underscores (and not fw_...)", opts.Prefix)
	}
	if opts.Name == "" {
		opts.Name = opts.Prefix + "_kernels"
	}
	if !cNameRE.MatchString(opts.Name) {
		return nil, nil, fmt.Errorf("gogen: C file name %q: use letters, digits, '_', '-' and '.'", opts.Name)
	}
	kf, err := planFile(forms, plan{methods: opts.Methods, derived: opts.Derived, loopAbove: opts.loopAbove})
	if err != nil {
		return nil, nil, err
	}
	seen := map[string]bool{}
	for _, fp := range kf.forms {
		base := cBase(opts.Prefix, fp)
		if seen[base] {
			return nil, nil, fmt.Errorf("gogen: duplicate C kernel name %s", base)
		}
		seen[base] = true
	}
	w := &cWriter{prefix: opts.Prefix}
	w.header(kf, opts)
	header = []byte(w.b.String())
	w = &cWriter{prefix: opts.Prefix}
	w.source(kf, opts)
	return header, []byte(w.b.String()), nil
}

// CPrefix reduces a model name, or a model file's base name without its
// .fw, to a valid COptions.Prefix: lower case, runs of other characters
// as one underscore, "model_" in front when the result would not start
// with a letter or would be a keyword.
func CPrefix(file string) string {
	base := strings.TrimSuffix(path.Base(strings.ReplaceAll(file, "\\", "/")), ".fw")
	var b strings.Builder
	for _, r := range strings.ToLower(base) {
		if r < unicode.MaxASCII && (unicode.IsLetter(r) || unicode.IsDigit(r)) {
			b.WriteRune(r)
		} else if b.Len() > 0 && !strings.HasSuffix(b.String(), "_") {
			b.WriteByte('_')
		}
	}
	s := strings.TrimSuffix(b.String(), "_")
	if s == "" || !unicode.IsLetter(rune(s[0])) || reservedWord(s) || strings.HasPrefix(s, "fw_") {
		s = "model_" + s
		s = strings.TrimSuffix(s, "_")
	}
	return s
}

// cBase is the identifier stem of a form's kernels: adr_supg.
func cBase(prefix string, fp *formPlan) string {
	return prefix + "_" + strings.ToLower(fp.ident) + fp.suffix
}

// snake turns a table name (CellBasis1Grad) into cell_basis1_grad.
func snake(s string) string {
	var b strings.Builder
	for i, r := range s {
		if unicode.IsUpper(r) && i > 0 {
			b.WriteByte('_')
		}
		b.WriteRune(unicode.ToLower(r))
	}
	return b.String()
}

// cString is s as a C string literal: printable ASCII as itself except
// '"', '\\' and '?' (which could start a trigraph), everything else as a
// three-digit octal escape, so no byte of s can end the literal or reach
// the compiler as anything but data.
func cString(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == '"' || c == '\\' || c == '?':
			b.WriteByte('\\')
			b.WriteByte(c)
		case c >= 0x20 && c < 0x7f:
			b.WriteByte(c)
		default:
			fmt.Fprintf(&b, "\\%03o", c)
		}
	}
	b.WriteByte('"')
	return b.String()
}

type cWriter struct {
	b      strings.Builder
	indent int
	prefix string
	fp     *formPlan
	base   string // identifier stem of the current form
}

func (w *cWriter) line(format string, a ...any) {
	s := fmt.Sprintf(format, a...)
	if s != "" {
		w.b.WriteString(strings.Repeat("\t", w.indent))
	}
	w.b.WriteString(s)
	w.b.WriteByte('\n')
}

// comment writes comment lines (the text after "//") as C99 // comments.
func (w *cWriter) comment(lines []string) {
	for _, l := range lines {
		w.line("//%s", l)
	}
}

// block writes a /* */ comment of paragraph text, one " * " per line.
func (w *cWriter) block(paras ...string) {
	w.line("/*")
	for i, p := range paras {
		if i > 0 {
			w.line(" *")
		}
		for _, l := range cParagraph(p) {
			w.line(" *%s", l)
		}
	}
	w.line(" */")
}

// cParagraph is paragraph for C block comments: lines that start with a
// tab keep their layout (as code), the rest is filled.
func cParagraph(p string) []string {
	var out []string
	var text []string
	flush := func() {
		if len(text) > 0 {
			out = append(out, paragraph(strings.Join(text, " "))...)
			text = nil
		}
	}
	for _, l := range strings.Split(p, "\n") {
		if strings.HasPrefix(l, "\t") {
			flush()
			out = append(out, "   "+sanitize(strings.TrimPrefix(l, "\t")))
			continue
		}
		text = append(text, l)
	}
	flush()
	return out
}

// header writes the .h file.
func (w *cWriter) header(kf *kernelFile, opts COptions) {
	w.line("// Code generated by formwright gen from %s. DO NOT EDIT.", sanitize(opts.ModelFile))
	w.line("// formwright %s", sanitize(opts.CommandLine))
	w.line("")
	w.block(cABI(kf, opts)...)
	guard := "FW_" + strings.ToUpper(regexp.MustCompile(`[^A-Za-z0-9]`).ReplaceAllString(opts.Name, "_")) + "_H"
	w.line("#ifndef %s", guard)
	w.line("#define %s", guard)
	w.line("")
	w.line("#ifdef __cplusplus")
	w.line("extern \"C\" {")
	w.line("#endif")
	w.line("")
	w.line("#ifndef FW_KERNEL_ABI_%d", cABIVersion)
	w.line("#define FW_KERNEL_ABI_%d", cABIVersion)
	w.line("")
	w.line("/* What a kernel reads for one cell (see above). */")
	w.line("struct fw_kernel_input {")
	w.line("\tconst double *coords;   /* vertex coordinates, coords[k*dim + i] */")
	w.line("\tconst double *previous; /* previous iterate, local dofs; NULL: zeros */")
	w.line("\tdouble time;            /* the time t */")
	w.line("\tdouble step;            /* the time step of a stepped form */")
	w.line("\tconst double *recovered; /* recovered gradient, recovered[l*dim + i]; NULL: zeros */")
	w.line("};")
	w.line("")
	w.line("/* One unknown field of a kernel's element. */")
	w.line("struct fw_kernel_field {")
	w.line("\tconst char *name;    /* the unknown's model name */")
	w.line("\tconst char *element; /* P1, P2, Q1 or Q2 */")
	w.line("\tint components;      /* 1 for a scalar, dim for a vector */")
	w.line("\tint nodes;           /* element nodes per component */")
	w.line("\tint offset;          /* its first local dof */")
	w.line("};")
	w.line("")
	w.line("/* The layout of a form's element matrix and what its kernels need. */")
	w.line("struct fw_kernel_layout {")
	w.line("\tconst char *method;             /* galerkin, supg, gls or vms */")
	w.line("\tconst char *cell;               /* interval, triangle, tetrahedron, quadrilateral or hexahedron */")
	w.line("\tint dim;                        /* space dimension */")
	w.line("\tint vertices;                   /* vertices per cell: coords holds vertices*dim numbers */")
	w.line("\tint dofs;                       /* N: A is N*N, b is N */")
	w.line("\tint degree;                     /* quadrature degree */")
	w.line("\tint points;                     /* quadrature points of the cell integral */")
	w.line("\tint num_fields;")
	w.line("\tconst struct fw_kernel_field *fields;")
	w.line("\tint num_sides;                  /* boundary sides with a facet integral */")
	w.line("\tconst char *const *sides;       /* their names, by side index (NULL if none) */")
	w.line("\tint num_facets;                 /* local facets per cell */")
	w.line("\tint needs_previous;             /* 1: the kernels read in->previous */")
	w.line("\tint needs_recovered;            /* 1: the kernels read in->recovered */")
	w.line("\tint symmetric;                  /* 1: the cell kernel's A is symmetric */")
	w.line("};")
	w.line("")
	w.line("/* What a kernel returns. */")
	w.line("enum fw_kernel_status {")
	w.line("\tFW_KERNEL_OK = 0,")
	w.line("\tFW_KERNEL_DEGENERATE = 1, /* det J <= 0: A and b are NaN */")
	w.line("\tFW_KERNEL_BAD_INDEX = 2   /* side or facet out of range: nothing written */")
	w.line("};")
	w.line("")
	w.line("#endif /* FW_KERNEL_ABI_%d */", cABIVersion)
	for _, fp := range kf.forms {
		base := cBase(w.prefix, fp)
		w.line("")
		w.line("/* The %s form on %v cells: %d local dofs, quadrature degree %d (%s). */", sanitize(fp.method), fp.cell, fp.n, fp.degree, points(fp.cellK.points))
		w.line("int %s_cell(const struct fw_kernel_input *in, double *A, double *b);", base)
		w.line("int %s_facet(const struct fw_kernel_input *in, int side, int facet, double *A, double *b);", base)
		w.line("const struct fw_kernel_layout *%s_layout(void);", base)
	}
	w.line("")
	w.line("#ifdef __cplusplus")
	w.line("}")
	w.line("#endif")
	w.line("")
	w.line("#endif /* %s */", guard)
}

// cABI is the leading comment of the header: the ABI of this file.
func cABI(kf *kernelFile, opts COptions) []string {
	base := cBase(opts.Prefix, kf.forms[0])
	paras := []string{
		"Element kernels of " + baseName(opts.ModelFile) + " for C and C++ codes: per form (method) a cell kernel, a facet kernel for the integrals over boundary sides and a layout function. C99, also valid C++11; they need only <math.h> (link with -lm), allocate nothing, keep no global state and may be called from several threads at once. A kernel keeps its accumulators on the stack, 8*(N*N + N) bytes and a little more.",
		"\tstruct fw_kernel_input in;\n\tin.coords = x; in.previous = NULL; in.time = t; in.step = dt; in.recovered = NULL;\n\tint status = " + base + "_cell(&in, A, b);",
		"A cell kernel reads",
		"\tin->coords    the vertex coordinates of the cell: coords[k*dim + i] is\n\t              coordinate i of vertex k, the vertices in the reference\n\t              order below, with a positive Jacobian determinant\n" +
			"\tin->previous  the local dofs of the previous iterate (dof order below),\n\t              or NULL for zeros; read only if the layout's needs_previous\n" +
			"\tin->time      the time t of time-dependent data\n" +
			"\tin->step      the time step of the kernels of one backward Euler\n\t              step of a transient form\n" +
			"\tin->recovered the recovered gradient of the previous iterate at the\n\t              local dofs: recovered[l*dim + i] is its derivative along\n\t              axis i at the node of local dof l; NULL for zeros; read\n\t              only if the layout's needs_recovered",
		"and writes every entry of",
		"\tA  the N*N element matrix, row-major: A[i*N + j] couples test dof i\n\t   (row) with trial dof j (column)\n\tb  the element vector, N entries",
		"It returns FW_KERNEL_OK, or FW_KERNEL_DEGENERATE after filling A and b with NaN when det J <= 0.",
		"A facet kernel also takes a side index (into the layout's sides) and a local facet index (below); it integrates over that facet of the cell, which the caller knows to lie on that boundary side, and writes the facet integral's own A and b, which the caller adds to the cell's. It returns FW_KERNEL_BAD_INDEX and writes nothing when either index is out of range.",
		"Local dofs are numbered field by field, then component by component, then element node by node: dof offset + c*nodes + k is node k of component c of a field (struct fw_kernel_field). The layout function reports N, the cell, the fields, the sides, the quadrature degree and whether the form reads the previous iterate and its recovered gradient.",
		"A form whose layout has needs_recovered (stabilised methods on P1 in 2D and 3D, derived with the recovery on, the default of gen) rebuilds the second derivatives its strong residual loses on linear elements from a continuous gradient of the previous iterate that the caller computes before each assembly, as formwright's runtime does: at each node not on the boundary the lumped-mass L2 projection g(x_a) = (sum over the cells K around node a of |K| grad u_h|K) / (sum of |K|), and at a boundary node a least-squares linear fit to the projected values of nearby interior nodes (Jansen, Collis, Whiting & Shakib 1999, CMAME 174, for the method). With in->recovered NULL the kernels read zeros, the plain P1 residual. Derive with --recover=false for kernels that read no recovered gradient.",
	}
	cells := map[cell.Type][]*formPlan{}
	var order []cell.Type
	for _, fp := range kf.forms {
		if cells[fp.cell] == nil {
			order = append(order, fp.cell)
		}
		cells[fp.cell] = append(cells[fp.cell], fp)
	}
	for _, c := range order {
		paras = append(paras, cellDoc(c, cells[c]))
	}
	var forms strings.Builder
	forms.WriteString("The forms:")
	for _, fp := range kf.forms {
		fmt.Fprintf(&forms, "\n\t%s_*: %s, %d dofs (", cBase(opts.Prefix, fp), sanitize(fp.method), fp.n)
		for i, f := range fp.fields {
			if i > 0 {
				forms.WriteString(", ")
			}
			u := fp.lf.Unknowns[i]
			fmt.Fprintf(&forms, "%s %v from dof %d", sanitize(u.Name), u.Element, f.off)
			if f.comps > 1 {
				fmt.Fprintf(&forms, " x%d", f.comps)
			}
		}
		fmt.Fprintf(&forms, "), quadrature degree %d", fp.degree)
		if len(fp.sides) > 0 {
			forms.WriteString(", sides")
			for i, s := range fp.sides {
				fmt.Fprintf(&forms, " %d %s", i, quoteText(sanitize(s.name)))
			}
		}
	}
	return append(paras, forms.String())
}

// cellDoc documents the reference cell c and the node order of the
// elements of forms on it, from runtime/cell and runtime/element.
func cellDoc(c cell.Type, forms []*formPlan) string {
	d := c.Dim()
	point := func(x []float64) string {
		parts := make([]string, len(x))
		for i, v := range x {
			parts[i] = strconv.FormatFloat(v, 'g', -1, 64)
		}
		if len(parts) == 1 {
			return parts[0]
		}
		return "(" + strings.Join(parts, ", ") + ")"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%s cells: reference vertices", strings.ToUpper(c.String()[:1])+c.String()[1:])
	v := c.Vertices()
	for k := 0; k < c.NumVertices(); k++ {
		fmt.Fprintf(&b, " %d at %s", k, point(v[k*d:(k+1)*d]))
		if k+1 < c.NumVertices() {
			b.WriteString(",")
		}
	}
	b.WriteString("; local facets")
	for f, vs := range c.Facets() {
		fmt.Fprintf(&b, " %d (vertices", f)
		for _, k := range vs {
			fmt.Fprintf(&b, " %d", k)
		}
		b.WriteString(")")
		if f+1 < c.NumFacets() {
			b.WriteString(",")
		}
	}
	b.WriteString(".")
	seen := map[int]bool{}
	for _, fp := range forms {
		for _, f := range fp.fields {
			if seen[f.elem.Degree] || f.elem.Degree == 1 {
				continue
			}
			seen[f.elem.Degree] = true
			e := element.MustLagrange(c, f.elem.Degree)
			nodes := e.RefNodes()
			fmt.Fprintf(&b, " Nodes of the degree-%d element:", f.elem.Degree)
			for k := 0; k < e.NumNodes(); k++ {
				fmt.Fprintf(&b, " %d at %s", k, point(nodes[k*d:(k+1)*d]))
				if k+1 < e.NumNodes() {
					b.WriteString(",")
				}
			}
			b.WriteString(".")
		}
	}
	b.WriteString(" The nodes of degree-1 elements are the vertices.")
	return b.String()
}

// source writes the .c file.
func (w *cWriter) source(kf *kernelFile, opts COptions) {
	w.line("// Code generated by formwright gen from %s. DO NOT EDIT.", sanitize(opts.ModelFile))
	w.line("// formwright %s", sanitize(opts.CommandLine))
	w.line("")
	w.line("#include <math.h>")
	w.line("#include <stddef.h>")
	w.line("")
	w.line("#include %s", cString(opts.Name+".h"))
	w.helpers(kf)
	for _, fp := range kf.forms {
		w.fp, w.base = fp, cBase(w.prefix, fp)
		w.tables(fp)
		w.layout(fp)
		w.line("")
		w.line("// %s_cell: the cell kernel of the %s form (see %s.h).", w.base, sanitize(fp.method), opts.Name)
		w.body("int "+w.base+"_cell", fp.cellK)
		for si, s := range fp.sides {
			for _, b := range s.facets {
				w.line("")
				w.line("// The integral over side %d (%s), local facet %d (%s).", si, sanitize(quoteText(s.name)), b.facet, points(b.points))
				w.body(fmt.Sprintf("static int %s_side%d_facet%d", w.base, si, b.facet), b)
			}
		}
		w.facetDispatch(fp)
	}
}

func (w *cWriter) helpers(kf *kernelFile) {
	p := w.prefix
	w.line("")
	w.line("// %s_fill_nan fills A and b with NaN: the cell has a non-positive", p)
	w.line("// Jacobian determinant.")
	w.line("static void %s_fill_nan(double *A, int na, double *b, int nb)", p)
	w.line("{")
	w.line("\tfor (int k = 0; k < na; ++k) {")
	w.line("\t\tA[k] = NAN;")
	w.line("\t}")
	w.line("\tfor (int k = 0; k < nb; ++k) {")
	w.line("\t\tb[k] = NAN;")
	w.line("\t}")
	w.line("}")
	if kf.usesSign {
		w.line("")
		w.line("// %s_sign is the sign of x: 1, -1, or x itself for +-0 and NaN.", p)
		w.line("static double %s_sign(double x)", p)
		w.line("{")
		w.line("\treturn x > 0 ? 1.0 : x < 0 ? -1.0 : x;")
		w.line("}")
	}
	for _, h := range []struct {
		used      bool
		name, cmp string
		zero      string
	}{{kf.usesMin, "min", "<", "signbit(a) ? a : b"}, {kf.usesMax, "max", ">", "signbit(a) ? b : a"}} {
		if !h.used {
			continue
		}
		w.line("")
		w.line("// %s_%s is %s(a, b) with the rules of Go's %s, as the interpreted", p, h.name, h.name, h.name)
		w.line("// kernels: NaN if a or b is NaN (C's f%s would return the other),", h.name)
		w.line("// and -0 below +0.")
		w.line("static double %s_%s(double a, double b)", p, h.name)
		w.line("{")
		w.line("\tif (isnan(a) || isnan(b)) {")
		w.line("\t\treturn NAN;")
		w.line("\t}")
		w.line("\tif (a == b) {")
		w.line("\t\treturn %s;", h.zero)
		w.line("\t}")
		w.line("\treturn a %s b ? a : b;", h.cmp)
		w.line("}")
	}
}

func (w *cWriter) tableName(t *table) string { return w.base + "_" + snake(t.name) }

// tables writes a form's tabulated reference data.
func (w *cWriter) tables(fp *formPlan) {
	for _, b := range fp.bodies() {
		for _, t := range b.tables {
			w.line("")
			if t.vec != nil {
				w.line("static const double %s[%d] = {%s};", w.tableName(t), len(t.vec), cRow(t.vec))
				continue
			}
			w.line("static const double %s[%d][%d] = {", w.tableName(t), len(t.rows), len(t.rows[0]))
			for _, r := range t.rows {
				w.line("\t{%s},", cRow(r))
			}
			w.line("};")
		}
	}
}

func cRow(r []float64) string {
	parts := make([]string, len(r))
	for i, v := range r {
		parts[i] = cNumber(v, false)
	}
	return strings.Join(parts, ", ")
}

// layout writes a form's layout data and function.
func (w *cWriter) layout(fp *formPlan) {
	w.line("")
	w.line("static const struct fw_kernel_field %s_fields[%d] = {", w.base, len(fp.fields))
	for i, f := range fp.fields {
		u := fp.lf.Unknowns[i]
		w.line("\t{%s, %s, %d, %d, %d},", cString(u.Name), cString(u.Element.String()), f.comps, f.elem.NumNodes(), f.off)
	}
	w.line("};")
	sides := "NULL"
	if len(fp.sides) > 0 {
		var names []string
		for _, s := range fp.sides {
			names = append(names, cString(s.name))
		}
		w.line("")
		w.line("static const char *const %s_sides[%d] = {%s};", w.base, len(fp.sides), strings.Join(names, ", "))
		sides = w.base + "_sides"
	}
	b2i := func(b bool) int {
		if b {
			return 1
		}
		return 0
	}
	w.line("")
	w.line("static const struct fw_kernel_layout %s_layout_data = {", w.base)
	w.line("\t%s, %s, %d, %d, %d, %d, %d,", cString(fp.method), cString(fp.cell.String()), fp.cell.Dim(), fp.cell.NumVertices(), fp.n, fp.degree, fp.cellK.points)
	w.line("\t%d, %s_fields, %d, %s, %d, %d, %d, %d", len(fp.fields), w.base, len(fp.sides), sides, fp.cell.NumFacets(), b2i(fp.prev), b2i(fp.lf.ReadsRecovered()), b2i(fp.cellK.sym))
	w.line("};")
	w.line("")
	w.line("const struct fw_kernel_layout *%s_layout(void)", w.base)
	w.line("{")
	w.line("\treturn &%s_layout_data;", w.base)
	w.line("}")
}

// facetDispatch writes the facet kernel of a form.
func (w *cWriter) facetDispatch(fp *formPlan) {
	w.line("")
	w.line("int %s_facet(const struct fw_kernel_input *in, int side, int facet, double *A, double *b)", w.base)
	w.line("{")
	if len(fp.sides) == 0 {
		w.line("\t// The form has no boundary integrals.")
		w.line("\t(void)in;")
		w.line("\t(void)side;")
		w.line("\t(void)facet;")
		w.line("\t(void)A;")
		w.line("\t(void)b;")
		w.line("\treturn FW_KERNEL_BAD_INDEX;")
		w.line("}")
		return
	}
	w.line("\tswitch (side) {")
	for si, s := range fp.sides {
		w.line("\tcase %d:", si)
		w.line("\t\tswitch (facet) {")
		for _, b := range s.facets {
			w.line("\t\tcase %d:", b.facet)
			w.line("\t\t\treturn %s_side%d_facet%d(in, A, b);", w.base, si, b.facet)
		}
		w.line("\t\tdefault:")
		w.line("\t\t\treturn FW_KERNEL_BAD_INDEX;")
		w.line("\t\t}")
	}
	w.line("\tdefault:")
	w.line("\t\treturn FW_KERNEL_BAD_INDEX;")
	w.line("\t}")
	w.line("}")
}

// body writes one kernel function.
func (w *cWriter) body(signature string, b *bodyPlan) {
	w.line("%s(const struct fw_kernel_input *in, double *A, double *b)", signature)
	w.line("{")
	w.indent++
	w.line("const double *x = in->coords;")
	w.stmts(b.stmts)
	w.line("return FW_KERNEL_OK;")
	w.indent--
	w.line("}")
}

func (w *cWriter) stmts(list []stmt) {
	for _, s := range list {
		w.stmt(s)
	}
}

func (w *cWriter) stmt(s stmt) {
	n := w.fp.n
	switch s := s.(type) {
	case commentStmt:
		w.comment(s.lines)
	case defStmt:
		w.line("const double %s = %s;", s.name, w.expr(s.x, 0))
	case setStmt:
		op := "="
		if s.add {
			op = "+="
		}
		w.line("%s %s %s;", w.expr(s.lhs, 0), op, w.expr(s.x, 0))
	case arrayStmt:
		w.line("double %s[%d] = {0.0};", s.name, s.n)
	case forStmt:
		w.line("for (int %s = %s; %s < %d; ++%s) {", s.v, w.expr(s.from, 0), s.v, s.n, s.v)
		w.indent++
		w.stmts(s.body)
		w.indent--
		w.line("}")
	case rowStmt:
		w.line("double *row = %s + %s;", s.array, w.expr(s.base, precSum+1))
		w.line("for (int %s = %s; %s < %d; ++%s) {", s.j, w.expr(s.from, 0), s.j, s.n, s.j)
		w.indent++
		w.line("row[%s] += %s;", s.j, w.expr(s.x, 0))
		w.indent--
		w.line("}")
	case guardStmt:
		w.line("if (!(%s > 0)) {", w.expr(s.det, 0))
		w.line("\t%s_fill_nan(A, %d, b, %d);", w.prefix, n*n, n)
		w.line("\treturn FW_KERNEL_DEGENERATE;")
		w.line("}")
	case zeroStmt:
		w.line("for (int i = 0; i < %d; ++i) {", s.n)
		w.line("\t%s[i] = 0.0;", s.array)
		w.line("}")
	case copyStmt:
		w.line("for (int i = 0; i < %d; ++i) {", s.n)
		w.line("\t%s[i] = %s[i];", s.dst, s.src)
		w.line("}")
	case previousStmt:
		w.line("static const double zero[%d] = {0.0};", s.n)
		w.line("const double *pv = in->previous != NULL ? in->previous : zero;")
	case recoveredStmt:
		w.line("static const double zeroR[%d] = {0.0};", s.n)
		w.line("const double *rv = in->recovered != NULL ? in->recovered : zeroR;")
	default:
		panic(fmt.Sprintf("gogen: no C for statement %T", s))
	}
}

// expr spells x in C; ctx as in goWriter.expr (the precedences of + − * /
// and unary minus are the same in C and Go).
func (w *cWriter) expr(x expr, ctx int) string {
	switch x := x.(type) {
	case numLit:
		return cNumber(x.v, ctx > 0)
	case intLit:
		s := strconv.Itoa(x.v)
		if x.v < 0 && ctx > 0 {
			s = "(" + s + ")"
		}
		return s
	case varRef:
		return x.name
	case inputRef:
		switch x.kind {
		case leafCoord:
			return "x[" + w.expr(x.index, 0) + "]"
		case leafPrev:
			return "pv[" + w.expr(x.index, 0) + "]"
		case leafRec:
			return "rv[" + w.expr(x.index, 0) + "]"
		case leafTime:
			return "in->time"
		case leafStep:
			return "in->step"
		}
	case tableRef:
		s := w.tableName(x.tab) + "[" + w.expr(x.point, 0) + "]"
		if x.index != nil {
			s += "[" + w.expr(x.index, 0) + "]"
		}
		return s
	case arrayRef:
		return x.array + "[" + w.expr(x.index, 0) + "]"
	case binary:
		prec := precSum
		if x.op == '*' || x.op == '/' {
			prec = precProd
		}
		s := w.expr(x.x, prec) + " " + string(x.op) + " " + w.expr(x.y, prec+1)
		if ctx > prec {
			s = "(" + s + ")"
		}
		return s
	case negate:
		s := "-" + w.expr(x.x, precUnit)
		if ctx > precSum {
			s = "(" + s + ")"
		}
		return s
	case call:
		var fn string
		switch x.op {
		case opMin:
			fn = w.prefix + "_min"
		case opMax:
			fn = w.prefix + "_max"
		case opPow:
			fn = "pow"
		default:
			fn = x.fn.CName()
			if x.fn == ir.Sign {
				fn = w.prefix + "_sign"
			}
		}
		args := make([]string, len(x.args))
		for i, a := range x.args {
			args[i] = w.expr(a, 0)
		}
		return fn + "(" + strings.Join(args, ", ") + ")"
	}
	panic(fmt.Sprintf("gogen: no C for expression %T", x))
}

// cNumber spells a float64 constant in C (literalOf); operand as in
// goNumber.
func cNumber(v float64, operand bool) string {
	l := literalOf(v)
	var s string
	switch l.kind {
	case litNaN:
		return "NAN"
	case litPosInf:
		return "INFINITY"
	case litNegInf:
		s = "-INFINITY"
	case litRational:
		s = strconv.FormatInt(l.p, 10) + ".0 / " + strconv.FormatInt(l.q, 10)
		if l.neg {
			s = "-" + s
		}
	default:
		s = l.text
		if l.neg {
			s = "-" + s
		}
	}
	if operand && (l.neg || l.kind == litRational) {
		s = "(" + s + ")"
	}
	return s
}
