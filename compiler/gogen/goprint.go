package gogen

import (
	"bytes"
	"fmt"
	"go/ast"
	"go/printer"
	"go/token"
	"strconv"
	"strings"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
)

// The Go printer: it spells a kernel description as a go/ast file and
// prints it with go/printer. Every statement, declaration and comment line
// gets a position on a line of its own in a synthetic file of goLineWidth
// offsets per line, so that go/printer keeps the intended layout and
// places each comment above the code it belongs to; the printed source is
// then parsed and formatted once more by go/format, which checks it.

const goLineWidth = 1 << 12

// goNames are the file-wide identifiers of the Go kernels.
type goNames struct {
	prefix   string // exported prefix
	internal string // unexported prefix: fw + prefix
}

func (n goNames) fillNaN() string { return n.internal + "FillNaN" }
func (n goNames) sign() string    { return n.internal + "Sign" }

// kernelType is the cell-kernel type of a form; facetType that of a side.
func (n goNames) kernelType(fp *formPlan) string {
	return n.prefix + fp.ident + "Kernel" + fp.suffix
}

func (n goNames) facetType(fp *formPlan, side string) string {
	return n.prefix + fp.ident + "FacetKernel" + fp.suffix + "_" + Mangle(side)
}

func (n goNames) layoutVar(fp *formPlan) string {
	return n.internal + fp.ident + fp.suffix + "Layout"
}

func (n goNames) table(fp *formPlan, t *table) string {
	return n.internal + fp.ident + fp.suffix + t.name
}

// goWriter builds the syntax tree and hands out positions.
type goWriter struct {
	names    goNames
	fp       *formPlan // the form being written
	line     int
	comments []*ast.CommentGroup
}

// pos is the start of a new line.
func (w *goWriter) pos() token.Pos {
	w.line++
	return w.at(0)
}

// at is offset off on the current line.
func (w *goWriter) at(off int) token.Pos { return token.Pos(1 + (w.line-1)*goLineWidth + off) }

// blank leaves an empty line.
func (w *goWriter) blank() { w.line++ }

// comment records comment lines (the text after "//"), one per line.
func (w *goWriter) comment(lines []string) *ast.CommentGroup {
	if len(lines) == 0 {
		return nil
	}
	g := &ast.CommentGroup{}
	for _, l := range lines {
		g.List = append(g.List, &ast.Comment{Slash: w.pos(), Text: "//" + clip(l)})
	}
	w.comments = append(w.comments, g)
	return g
}

// trailing records a comment at the end of the current line.
func (w *goWriter) trailing(text string) {
	w.comments = append(w.comments, &ast.CommentGroup{List: []*ast.Comment{{Slash: w.at(goLineWidth / 2), Text: "// " + clip(text)}}})
}

// clip keeps a comment line inside its synthetic line.
func clip(s string) string {
	if len(s) < goLineWidth/4 {
		return s
	}
	cut := goLineWidth / 4
	for cut > 0 && s[cut]&0xC0 == 0x80 {
		cut--
	}
	return s[:cut] + "…"
}

// doc is a doc comment from paragraph text.
func (w *goWriter) doc(text string) *ast.CommentGroup { return w.comment(paragraph(text)) }

func id(name string) *ast.Ident                   { return &ast.Ident{Name: name} }
func idAt(name string, p token.Pos) *ast.Ident    { return &ast.Ident{NamePos: p, Name: name} }
func sel(x, name string) *ast.SelectorExpr        { return &ast.SelectorExpr{X: id(x), Sel: id(name)} }
func str(s string) *ast.BasicLit                  { return &ast.BasicLit{Kind: token.STRING, Value: strconv.Quote(s)} }
func intLitGo(n int) *ast.BasicLit                { return &ast.BasicLit{Kind: token.INT, Value: strconv.Itoa(n)} }
func index(x ast.Expr, i ast.Expr) *ast.IndexExpr { return &ast.IndexExpr{X: x, Index: i} }

// Generate writes one Go source file with the element kernels of forms:
// for each form a cell-kernel type and one facet-kernel type per boundary
// side, and an init function that registers them with runtime/compiled
// under ir.FormHash of the form. The output is gofmt'ed and deterministic.
func Generate(forms []*ir.LoweredForm, opts Options) ([]byte, error) {
	if !token.IsIdentifier(opts.Package) || opts.Package == "_" {
		return nil, fmt.Errorf("gogen: package name %q is not a Go identifier", opts.Package)
	}
	if opts.Prefix != "" && !token.IsIdentifier(opts.Prefix) {
		return nil, fmt.Errorf("gogen: prefix %q is not a Go identifier", opts.Prefix)
	}
	kf, err := planFile(forms, plan{methods: opts.Methods, derived: opts.Derived, loopAbove: opts.loopAbove})
	if err != nil {
		return nil, err
	}
	w := &goWriter{names: goNames{prefix: opts.Prefix, internal: "fw" + opts.Prefix}}
	file, err := w.file(kf, opts)
	if err != nil {
		return nil, err
	}
	fset := token.NewFileSet()
	tf := fset.AddFile("kernels.go", -1, (w.line+2)*goLineWidth)
	lines := make([]int, w.line+2)
	for i := range lines {
		lines[i] = i * goLineWidth
	}
	tf.SetLines(lines)
	var buf bytes.Buffer
	cfg := printer.Config{Mode: printer.RawFormat | printer.UseSpaces | printer.TabIndent, Tabwidth: 8}
	if err := cfg.Fprint(&buf, fset, file); err != nil {
		return nil, &BrokenError{Err: err}
	}
	return formatSource(buf.Bytes(), opts.Output)
}

// file is the whole kernel file.
func (w *goWriter) file(kf *kernelFile, opts Options) (*ast.File, error) {
	w.comment([]string{" Code generated by formwright gen from " + sanitize(opts.ModelFile) + ". DO NOT EDIT.",
		" formwright " + sanitize(opts.CommandLine)})
	w.blank()
	f := &ast.File{Package: w.pos(), Name: id(opts.Package)}
	w.blank()
	imp := &ast.GenDecl{TokPos: w.pos(), Tok: token.IMPORT, Lparen: w.at(10)}
	imp.Specs = append(imp.Specs, &ast.ImportSpec{Path: &ast.BasicLit{ValuePos: w.pos(), Kind: token.STRING, Value: `"math"`}})
	w.blank()
	for _, p := range []string{"cell", "compiled", "element", "kernel"} {
		imp.Specs = append(imp.Specs, &ast.ImportSpec{Path: &ast.BasicLit{ValuePos: w.pos(), Kind: token.STRING, Value: strconv.Quote("github.com/formwright/formwright/runtime/" + p)}})
	}
	imp.Rparen = w.pos()
	f.Decls = append(f.Decls, imp)
	w.blank()
	f.Decls = append(f.Decls, w.register(kf))
	typeNames := map[string]bool{}
	for _, fp := range kf.forms {
		w.fp = fp
		ds, err := w.form(fp, typeNames)
		if err != nil {
			return nil, err
		}
		f.Decls = append(f.Decls, ds...)
	}
	w.fp = nil
	f.Decls = append(f.Decls, w.helpers(kf)...)
	if d := w.tables(kf); d != nil {
		f.Decls = append(f.Decls, d)
	}
	f.Comments = w.comments
	return f, nil
}

// register is the init function that registers every kernel.
func (w *goWriter) register(kf *kernelFile) ast.Decl {
	fd := &ast.FuncDecl{Name: id("init"), Type: &ast.FuncType{Func: w.pos(), Params: &ast.FieldList{}}}
	body := &ast.BlockStmt{Lbrace: w.at(20)}
	for _, fp := range kf.forms {
		call := &ast.CallExpr{Fun: &ast.SelectorExpr{X: idAt("compiled", w.pos()), Sel: id("Register")}}
		lit := &ast.CompositeLit{Type: sel("compiled", "Kernels"), Lbrace: w.at(60)}
		kv := func(k string, v ast.Expr) {
			lit.Elts = append(lit.Elts, &ast.KeyValueExpr{Key: idAt(k, w.pos()), Value: v})
		}
		kv("Method", str(fp.method))
		kv("Cell", sel("cell", cellIdent(fp.cell)))
		kv("Degree", intLitGo(fp.degree))
		kv("NewCell", &ast.FuncLit{Type: &ast.FuncType{Params: &ast.FieldList{}, Results: fields(sel("kernel", "Kernel"))},
			Body: &ast.BlockStmt{Lbrace: w.at(100), List: []ast.Stmt{&ast.ReturnStmt{Return: w.at(101), Results: []ast.Expr{&ast.CompositeLit{Type: id(w.names.kernelType(fp))}}}}, Rbrace: w.at(200)}})
		if len(fp.sides) > 0 {
			var elts []ast.Expr
			for _, s := range fp.sides {
				elts = append(elts, &ast.CompositeLit{Type: id(w.names.facetType(fp, s.name))})
			}
			key := idAt("NewFacets", w.pos())
			fl := &ast.FuncLit{Type: &ast.FuncType{Params: &ast.FieldList{}, Results: fields(&ast.ArrayType{Elt: sel("kernel", "FacetKernel")})}}
			fl.Body = &ast.BlockStmt{Lbrace: w.at(40)}
			fl.Body.List = []ast.Stmt{&ast.ReturnStmt{Return: w.pos(), Results: []ast.Expr{&ast.CompositeLit{Type: &ast.ArrayType{Elt: sel("kernel", "FacetKernel")}, Elts: elts}}}}
			fl.Body.Rbrace = w.pos()
			lit.Elts = append(lit.Elts, &ast.KeyValueExpr{Key: key, Value: fl})
		}
		lit.Rbrace = w.pos()
		call.Args = []ast.Expr{str(fp.hash), lit}
		body.List = append(body.List, &ast.ExprStmt{X: call})
	}
	body.Rbrace = w.pos()
	fd.Body = body
	w.blank()
	return fd
}

func fields(types ...ast.Expr) *ast.FieldList {
	fl := &ast.FieldList{}
	for _, t := range types {
		fl.List = append(fl.List, &ast.Field{Type: t})
	}
	return fl
}

func param(name string, t ast.Expr) *ast.Field {
	return &ast.Field{Names: []*ast.Ident{id(name)}, Type: t}
}

// oneLiner is a method whose body is a single return on the same line.
func (w *goWriter) oneLiner(doc, recv, name string, results ast.Expr, ret ast.Expr) *ast.FuncDecl {
	d := w.doc(doc)
	p := w.pos()
	fd := &ast.FuncDecl{Doc: d, Recv: fields(id(recv)), Name: id(name),
		Type: &ast.FuncType{Func: p, Params: &ast.FieldList{}, Results: fields(results)},
		Body: &ast.BlockStmt{Lbrace: w.at(100), List: []ast.Stmt{&ast.ReturnStmt{Return: w.at(101), Results: []ast.Expr{ret}}}, Rbrace: w.at(200)}}
	w.blank()
	return fd
}

// form is the declarations of one form's kernels.
func (w *goWriter) form(fp *formPlan, typeNames map[string]bool) ([]ast.Decl, error) {
	n := w.names
	typ := n.kernelType(fp)
	if typeNames[typ] {
		return nil, fmt.Errorf("gogen: duplicate kernel name %s", typ)
	}
	typeNames[typ] = true
	var ds []ast.Decl
	c := fp.cell
	cellSel := func() ast.Expr { return sel("cell", cellIdent(c)) }
	lagrange := func(deg int) ast.Expr {
		return &ast.CallExpr{Fun: sel("element", "MustLagrange"), Args: []ast.Expr{cellSel(), intLitGo(deg)}}
	}

	// Layout.
	lv := n.layoutVar(fp)
	doc := w.doc(fmt.Sprintf("%s is the element layout of the %s kernels: %s cells, fields in local dof order (field-major, then component, then element node); %d local dofs.", lv, fp.method, c, fp.n))
	vs := &ast.ValueSpec{Names: []*ast.Ident{id(lv)}}
	decl := &ast.GenDecl{Doc: doc, TokPos: w.pos(), Tok: token.VAR, Specs: []ast.Spec{vs}}
	lit := &ast.CompositeLit{Type: sel("kernel", "Layout"), Lbrace: w.at(60)}
	lit.Elts = append(lit.Elts, &ast.KeyValueExpr{Key: idAt("Cell", w.pos()), Value: cellSel()})
	lit.Elts = append(lit.Elts, &ast.KeyValueExpr{Key: idAt("Geometry", w.pos()), Value: lagrange(1)})
	fl := &ast.CompositeLit{Type: &ast.ArrayType{Elt: sel("kernel", "FieldLayout")}}
	lit.Elts = append(lit.Elts, &ast.KeyValueExpr{Key: idAt("Fields", w.pos()), Value: fl})
	fl.Lbrace = w.at(60)
	for i, f := range fp.fields {
		u := fp.lf.Unknowns[i]
		fl.Elts = append(fl.Elts, &ast.CompositeLit{Lbrace: w.pos(), Elts: []ast.Expr{
			&ast.KeyValueExpr{Key: id("Element"), Value: lagrange(f.elem.Degree)},
			&ast.KeyValueExpr{Key: id("Components"), Value: intLitGo(f.comps)}}})
		w.trailing(sanitize(u.Name + " " + u.Element.String()))
	}
	fl.Rbrace = w.pos()
	lit.Rbrace = w.pos()
	vs.Values = []ast.Expr{lit}
	ds = append(ds, decl)
	w.blank()

	// Cell kernel.
	kdoc := fmt.Sprintf("%s is the generated cell kernel of the %s form on %v cells, quadrature degree %d (%s). It implements kernel.Kernel, keeps no state and does not allocate.",
		typ, fp.method, c, fp.degree, points(fp.cellK.points))
	if fp.cellK.sym {
		kdoc += " The form is symmetric; only the upper triangle is computed."
	}
	ds = append(ds, w.typeDecl(kdoc, typ), w.assertion("Kernel", typ))
	ds = append(ds, w.oneLiner("Layout implements kernel.Kernel.", typ, "Layout", sel("kernel", "Layout"), id(lv)))
	ds = append(ds, w.oneLiner("Degree is the quadrature degree the kernel integrates with.", typ, "Degree", id("int"), intLitGo(fp.degree)))
	ds = append(ds, w.method("Cell implements kernel.Kernel. On a cell with a non-positive Jacobian determinant it fills A and b with NaN.",
		"", typ, "Cell", sel("kernel", "CellInput"), fp.cellK))

	// Facet kernels, one per side.
	for _, s := range fp.sides {
		ft := n.facetType(fp, s.name)
		if typeNames[ft] {
			return nil, fmt.Errorf("gogen: duplicate facet kernel name %s", ft)
		}
		typeNames[ft] = true
		ds = append(ds, w.typeDecl(fmt.Sprintf("%s is the generated kernel of the %s form's integral over the boundary side %s. It implements kernel.FacetKernel and does not allocate.",
			ft, fp.method, strconv.Quote(sanitize(s.name))), ft), w.assertion("FacetKernel", ft))
		ds = append(ds, w.oneLiner("Side implements kernel.FacetKernel.", ft, "Side", id("string"), str(s.name)))
		ds = append(ds, w.oneLiner("Layout is the layout of the element matrix (that of the cell kernel).", ft, "Layout", sel("kernel", "Layout"), id(lv)))
		ds = append(ds, w.facetSwitch(ft, s))
		for _, b := range s.facets {
			ds = append(ds, w.method(fmt.Sprintf("facet%d integrates over local facet %d (%s).", b.facet, b.facet, points(b.points)),
				"", ft, fmt.Sprintf("facet%d", b.facet), sel("kernel", "CellInput"), b))
		}
	}
	return ds, nil
}

func (w *goWriter) typeDecl(doc, name string) ast.Decl {
	d := w.doc(doc)
	p := w.pos()
	st := &ast.StructType{Struct: w.at(100), Fields: &ast.FieldList{Opening: w.at(107), Closing: w.at(108)}}
	decl := &ast.GenDecl{Doc: d, TokPos: p, Tok: token.TYPE, Specs: []ast.Spec{&ast.TypeSpec{Name: id(name), Type: st}}}
	w.blank()
	return decl
}

// assertion is var _ kernel.<iface> = T{}.
func (w *goWriter) assertion(iface, typ string) ast.Decl {
	decl := &ast.GenDecl{TokPos: w.pos(), Tok: token.VAR, Specs: []ast.Spec{&ast.ValueSpec{Names: []*ast.Ident{id("_")},
		Type: sel("kernel", iface), Values: []ast.Expr{&ast.CompositeLit{Type: id(typ)}}}}}
	w.blank()
	return decl
}

// facetSwitch is the Facet method, which dispatches on the local facet.
func (w *goWriter) facetSwitch(ft string, s *sidePlan) ast.Decl {
	d := w.doc("Facet implements kernel.FacetKernel.")
	fd := &ast.FuncDecl{Doc: d, Recv: &ast.FieldList{List: []*ast.Field{param("k", id(ft))}}, Name: id("Facet"),
		Type: &ast.FuncType{Func: w.pos(), Params: &ast.FieldList{List: []*ast.Field{param("in", &ast.StarExpr{X: sel("kernel", "FacetInput")}),
			{Names: []*ast.Ident{id("A"), id("b")}, Type: &ast.ArrayType{Elt: id("float64")}}}}}}
	fd.Body = &ast.BlockStmt{Lbrace: w.at(100)}
	sw := &ast.SwitchStmt{Switch: w.pos(), Tag: sel("in", "Facet"), Body: &ast.BlockStmt{Lbrace: w.at(100)}}
	for _, b := range s.facets {
		cc := &ast.CaseClause{Case: w.pos(), List: []ast.Expr{intLitGo(b.facet)}, Colon: w.at(100)}
		cc.Body = []ast.Stmt{&ast.ExprStmt{X: &ast.CallExpr{Fun: &ast.SelectorExpr{X: idAt("k", w.pos()), Sel: id(fmt.Sprintf("facet%d", b.facet))},
			Args: []ast.Expr{&ast.UnaryExpr{Op: token.AND, X: sel("in", "CellInput")}, id("A"), id("b")}}}}
		sw.Body.List = append(sw.Body.List, cc)
	}
	def := &ast.CaseClause{Case: w.pos(), Colon: w.at(100)}
	def.Body = []ast.Stmt{&ast.ExprStmt{X: &ast.CallExpr{Fun: idAt("panic", w.pos()), Args: []ast.Expr{str("generated kernel: facet index out of range")}}}}
	sw.Body.List = append(sw.Body.List, def)
	sw.Body.Rbrace = w.pos()
	fd.Body.List = []ast.Stmt{sw}
	fd.Body.Rbrace = w.pos()
	w.blank()
	return fd
}

// method is a kernel method that computes one body.
func (w *goWriter) method(doc, recvName, recv, name string, in ast.Expr, b *bodyPlan) ast.Decl {
	d := w.doc(doc)
	recvField := &ast.Field{Type: id(recv)}
	if recvName != "" {
		recvField.Names = []*ast.Ident{id(recvName)}
	}
	fd := &ast.FuncDecl{Doc: d, Recv: &ast.FieldList{List: []*ast.Field{recvField}}, Name: id(name),
		Type: &ast.FuncType{Func: w.pos(), Params: &ast.FieldList{List: []*ast.Field{param("in", &ast.StarExpr{X: in}),
			{Names: []*ast.Ident{id("A"), id("b")}, Type: &ast.ArrayType{Elt: id("float64")}}}}}}
	fd.Body = &ast.BlockStmt{Lbrace: w.at(200)}
	n := w.fp.n
	ng := w.fp.geom.NumNodes() * w.fp.cell.Dim()
	reslice := func(x ast.Expr, k int) ast.Expr {
		return &ast.SliceExpr{X: x, High: intLitGo(k), Max: intLitGo(k), Slice3: true}
	}
	fd.Body.List = append(fd.Body.List,
		&ast.AssignStmt{Lhs: []ast.Expr{idAt("A", w.pos())}, Tok: token.ASSIGN, Rhs: []ast.Expr{reslice(id("A"), n*n)}},
		&ast.AssignStmt{Lhs: []ast.Expr{idAt("b", w.pos())}, Tok: token.ASSIGN, Rhs: []ast.Expr{reslice(id("b"), n)}},
		&ast.AssignStmt{Lhs: []ast.Expr{idAt("x", w.pos())}, Tok: token.DEFINE, Rhs: []ast.Expr{reslice(sel("in", "Coords"), ng)}})
	fd.Body.List = append(fd.Body.List, w.stmts(b.stmts)...)
	fd.Body.Rbrace = w.pos()
	w.blank()
	return fd
}

// stmts spells statements.
func (w *goWriter) stmts(list []stmt) []ast.Stmt {
	var out []ast.Stmt
	for _, s := range list {
		out = append(out, w.stmt(s)...)
	}
	return out
}

func (w *goWriter) block(list []stmt) *ast.BlockStmt {
	b := &ast.BlockStmt{Lbrace: w.at(goLineWidth / 2)}
	b.List = w.stmts(list)
	b.Rbrace = w.pos()
	return b
}

func (w *goWriter) stmt(s stmt) []ast.Stmt {
	switch s := s.(type) {
	case commentStmt:
		w.comment(s.lines)
		return nil
	case defStmt:
		return []ast.Stmt{&ast.AssignStmt{Lhs: []ast.Expr{idAt(s.name, w.pos())}, Tok: token.DEFINE, Rhs: []ast.Expr{w.expr(s.x, 0)}}}
	case setStmt:
		tok := token.ASSIGN
		if s.add {
			tok = token.ADD_ASSIGN
		}
		lhs := index(idAt(s.lhs.array, w.pos()), w.expr(s.lhs.index, 0))
		return []ast.Stmt{&ast.AssignStmt{Lhs: []ast.Expr{lhs}, Tok: tok, Rhs: []ast.Expr{w.expr(s.x, 0)}}}
	case arrayStmt:
		return []ast.Stmt{&ast.DeclStmt{Decl: &ast.GenDecl{TokPos: w.pos(), Tok: token.VAR, Specs: []ast.Spec{&ast.ValueSpec{
			Names: []*ast.Ident{id(s.name)}, Type: &ast.ArrayType{Len: intLitGo(s.n), Elt: id("float64")}}}}}}
	case forStmt:
		return []ast.Stmt{w.loop(s.v, w.expr(s.from, 0), intLitGo(s.n), s.body)}
	case rowStmt:
		// row := acc[base : base+n : base+n]; for j := from; j < len(row); j++ { row[j] += x }
		hi := w.expr(idxAdd(s.base, intLit{s.n}), 0)
		def := &ast.AssignStmt{Lhs: []ast.Expr{idAt("row", w.pos())}, Tok: token.DEFINE,
			Rhs: []ast.Expr{&ast.SliceExpr{X: id(s.array), Low: w.expr(s.base, 0), High: hi, Max: w.expr(idxAdd(s.base, intLit{s.n}), 0), Slice3: true}}}
		body := []stmt{setStmt{lhs: arrayRef{"row", varRef{s.j}}, add: true, x: s.x}}
		lp := w.loop(s.j, w.expr(s.from, 0), &ast.CallExpr{Fun: id("len"), Args: []ast.Expr{id("row")}}, body)
		return []ast.Stmt{def, lp}
	case guardStmt:
		p := w.pos()
		cond := &ast.UnaryExpr{Op: token.NOT, X: &ast.ParenExpr{X: &ast.BinaryExpr{X: w.expr(s.det, 0), Op: token.GTR, Y: intLitGo(0)}}}
		body := &ast.BlockStmt{Lbrace: w.at(200)}
		body.List = []ast.Stmt{
			&ast.ExprStmt{X: &ast.CallExpr{Fun: idAt(w.names.fillNaN(), w.pos()), Args: []ast.Expr{id("A"), id("b")}}},
			&ast.ReturnStmt{Return: w.pos()}}
		body.Rbrace = w.pos()
		return []ast.Stmt{&ast.IfStmt{If: p, Cond: cond, Body: body}}
	case zeroStmt:
		return []ast.Stmt{&ast.ExprStmt{X: &ast.CallExpr{Fun: idAt("clear", w.pos()), Args: []ast.Expr{id(s.array)}}}}
	case copyStmt:
		return []ast.Stmt{&ast.ExprStmt{X: &ast.CallExpr{Fun: idAt("copy", w.pos()), Args: []ast.Expr{id(s.dst), &ast.SliceExpr{X: id(s.src)}}}}}
	case previousStmt:
		// var zero [n]float64; pv := zero[:]; if in.Previous != nil { pv = in.Previous[:n:n] }
		decl := &ast.DeclStmt{Decl: &ast.GenDecl{TokPos: w.pos(), Tok: token.VAR, Specs: []ast.Spec{&ast.ValueSpec{
			Names: []*ast.Ident{id("zero")}, Type: &ast.ArrayType{Len: intLitGo(s.n), Elt: id("float64")}}}}}
		def := &ast.AssignStmt{Lhs: []ast.Expr{idAt("pv", w.pos())}, Tok: token.DEFINE, Rhs: []ast.Expr{&ast.SliceExpr{X: id("zero")}}}
		p := w.pos()
		body := &ast.BlockStmt{Lbrace: w.at(200)}
		body.List = []ast.Stmt{&ast.AssignStmt{Lhs: []ast.Expr{idAt("pv", w.pos())}, Tok: token.ASSIGN,
			Rhs: []ast.Expr{&ast.SliceExpr{X: sel("in", "Previous"), High: intLitGo(s.n), Max: intLitGo(s.n), Slice3: true}}}}
		body.Rbrace = w.pos()
		iff := &ast.IfStmt{If: p, Cond: &ast.BinaryExpr{X: sel("in", "Previous"), Op: token.NEQ, Y: id("nil")}, Body: body}
		return []ast.Stmt{decl, def, iff}
	}
	panic(fmt.Sprintf("gogen: no Go for statement %T", s))
}

// loop is for v := from; v < to; v++ { body }.
func (w *goWriter) loop(v string, from, to ast.Expr, body []stmt) *ast.ForStmt {
	p := w.pos()
	return &ast.ForStmt{For: p,
		Init: &ast.AssignStmt{Lhs: []ast.Expr{id(v)}, Tok: token.DEFINE, Rhs: []ast.Expr{from}},
		Cond: &ast.BinaryExpr{X: id(v), Op: token.LSS, Y: to},
		Post: &ast.IncDecStmt{X: id(v), Tok: token.INC},
		Body: w.block(body)}
}

// Precedences of the expression printers (as in Go and C).
const (
	precSum  = 1 // + −
	precProd = 2 // * /
	precUnit = 3 // operands
)

// expr spells x; ctx is the precedence the context needs (0: none), the
// right operand of − and / needing more than the operator itself since
// the generated sums are not reassociated.
func (w *goWriter) expr(x expr, ctx int) ast.Expr {
	switch x := x.(type) {
	case numLit:
		return goNumber(x.v, ctx > 0)
	case intLit:
		if x.v < 0 {
			return paren(&ast.UnaryExpr{Op: token.SUB, X: intLitGo(-x.v)}, ctx > 0)
		}
		return intLitGo(x.v)
	case varRef:
		return id(x.name)
	case inputRef:
		switch x.kind {
		case leafCoord:
			return index(id("x"), w.expr(x.index, 0))
		case leafPrev:
			return index(id("pv"), w.expr(x.index, 0))
		case leafTime:
			return sel("in", "Time")
		case leafStep:
			return sel("in", "Step")
		}
	case tableRef:
		t := index(id(w.names.table(w.fp, x.tab)), w.expr(x.point, 0))
		if x.index == nil {
			return t
		}
		return index(t, w.expr(x.index, 0))
	case arrayRef:
		return index(id(x.array), w.expr(x.index, 0))
	case binary:
		prec := precSum
		op := token.ADD
		switch x.op {
		case '-':
			op = token.SUB
		case '*':
			prec, op = precProd, token.MUL
		case '/':
			prec, op = precProd, token.QUO
		}
		e := &ast.BinaryExpr{X: w.expr(x.x, prec), Op: op, Y: w.expr(x.y, prec+1)}
		return paren(e, ctx > prec)
	case negate:
		return paren(&ast.UnaryExpr{Op: token.SUB, X: w.expr(x.x, precUnit)}, ctx > precSum)
	case call:
		var fun ast.Expr
		switch x.op {
		case opMin:
			fun = id("min")
		case opMax:
			fun = id("max")
		case opPow:
			fun = sel("math", "Pow")
		default:
			if x.fn == ir.Sign {
				fun = id(w.names.sign())
			} else {
				pkg, name, _ := strings.Cut(x.fn.GoName(), ".")
				fun = sel(pkg, name)
			}
		}
		var args []ast.Expr
		for _, a := range x.args {
			args = append(args, w.expr(a, 0))
		}
		return &ast.CallExpr{Fun: fun, Args: args}
	}
	panic(fmt.Sprintf("gogen: no Go for expression %T", x))
}

func paren(e ast.Expr, need bool) ast.Expr {
	if need {
		return &ast.ParenExpr{X: e}
	}
	return e
}

// goNumber spells a float64 constant (literalOf); operand says whether it
// is an operand of an operator (negative and rational constants are then
// parenthesised).
func goNumber(v float64, operand bool) ast.Expr {
	l := literalOf(v)
	var e ast.Expr
	switch l.kind {
	case litNaN:
		return &ast.CallExpr{Fun: sel("math", "NaN")}
	case litPosInf, litNegInf:
		s := "1"
		if l.kind == litNegInf {
			s = "-1"
		}
		return &ast.CallExpr{Fun: sel("math", "Inf"), Args: []ast.Expr{&ast.BasicLit{Kind: token.INT, Value: s}}}
	case litRational:
		e = &ast.BinaryExpr{X: &ast.BasicLit{Kind: token.FLOAT, Value: strconv.FormatInt(l.p, 10) + ".0"}, Op: token.QUO,
			Y: &ast.BasicLit{Kind: token.INT, Value: strconv.FormatInt(l.q, 10)}}
		if l.neg {
			e = &ast.UnaryExpr{Op: token.SUB, X: e}
		}
		return paren(e, operand)
	default:
		e = &ast.BasicLit{Kind: token.FLOAT, Value: l.text}
	}
	if l.neg {
		return paren(&ast.UnaryExpr{Op: token.SUB, X: e}, operand)
	}
	return e
}

// helpers are the file's NaN filler and, when used, its sign function.
func (w *goWriter) helpers(kf *kernelFile) []ast.Decl {
	n := w.names
	d := w.doc(n.fillNaN() + " fills A and b with NaN: the cell has a non-positive Jacobian determinant (as the interpreted kernels report it).")
	nan := func(v string) ast.Stmt {
		return &ast.RangeStmt{For: w.pos(), Key: id("i"), Tok: token.DEFINE, X: id(v), Body: &ast.BlockStmt{Lbrace: w.at(100),
			List: []ast.Stmt{&ast.AssignStmt{Lhs: []ast.Expr{index(idAt(v, w.pos()), id("i"))}, Tok: token.ASSIGN,
				Rhs: []ast.Expr{&ast.CallExpr{Fun: sel("math", "NaN")}}}}, Rbrace: w.pos()}}
	}
	fd := &ast.FuncDecl{Doc: d, Name: id(n.fillNaN()), Type: &ast.FuncType{Func: w.pos(), Params: &ast.FieldList{List: []*ast.Field{
		{Names: []*ast.Ident{id("A"), id("b")}, Type: &ast.ArrayType{Elt: id("float64")}}}}}}
	fd.Body = &ast.BlockStmt{Lbrace: w.at(100)}
	fd.Body.List = []ast.Stmt{nan("A"), nan("b")}
	fd.Body.Rbrace = w.pos()
	w.blank()
	out := []ast.Decl{fd}
	if kf.usesSign {
		d := w.doc(n.sign() + " is the sign of x: 1, −1, or x itself for ±0 and NaN.")
		fd := &ast.FuncDecl{Doc: d, Name: id(n.sign()), Type: &ast.FuncType{Func: w.pos(),
			Params: &ast.FieldList{List: []*ast.Field{param("x", id("float64"))}}, Results: fields(id("float64"))}}
		fd.Body = &ast.BlockStmt{Lbrace: w.at(100)}
		sw := &ast.SwitchStmt{Switch: w.pos(), Body: &ast.BlockStmt{Lbrace: w.at(100)}}
		for _, c := range []struct {
			op token.Token
			v  string
		}{{token.GTR, "1"}, {token.LSS, "-1"}} {
			cc := &ast.CaseClause{Case: w.pos(), List: []ast.Expr{&ast.BinaryExpr{X: id("x"), Op: c.op, Y: intLitGo(0)}}, Colon: w.at(100)}
			var v ast.Expr = intLitGo(1)
			if c.v == "-1" {
				v = &ast.UnaryExpr{Op: token.SUB, X: intLitGo(1)}
			}
			cc.Body = []ast.Stmt{&ast.ReturnStmt{Return: w.pos(), Results: []ast.Expr{v}}}
			sw.Body.List = append(sw.Body.List, cc)
		}
		sw.Body.Rbrace = w.pos()
		fd.Body.List = []ast.Stmt{sw, &ast.ReturnStmt{Return: w.pos(), Results: []ast.Expr{id("x")}}}
		fd.Body.Rbrace = w.pos()
		w.blank()
		out = append(out, fd)
	}
	return out
}

// tables is the declaration of all tabulated reference data.
func (w *goWriter) tables(kf *kernelFile) ast.Decl {
	count := 0
	for _, fp := range kf.forms {
		for _, b := range fp.bodies() {
			count += len(b.tables)
		}
	}
	if count == 0 {
		return nil
	}
	var specs []ast.Spec
	d := w.doc("Tabulated reference data: basis values, gradients and second derivatives at the quadrature points, and quadrature weights.")
	decl := &ast.GenDecl{Doc: d, TokPos: w.pos(), Tok: token.VAR, Lparen: w.at(100)}
	for _, fp := range kf.forms {
		w.fp = fp
		for _, b := range fp.bodies() {
			for _, t := range b.tables {
				vs := &ast.ValueSpec{Names: []*ast.Ident{idAt(w.names.table(fp, t), w.pos())}}
				row := func(r []float64) []ast.Expr {
					var es []ast.Expr
					for _, v := range r {
						es = append(es, goNumber(v, false))
					}
					return es
				}
				if t.vec != nil {
					vs.Values = []ast.Expr{&ast.CompositeLit{Type: &ast.ArrayType{Len: intLitGo(len(t.vec)), Elt: id("float64")}, Lbrace: w.at(200), Elts: row(t.vec), Rbrace: w.at(300)}}
				} else {
					lit := &ast.CompositeLit{Type: &ast.ArrayType{Len: intLitGo(len(t.rows)), Elt: &ast.ArrayType{Len: intLitGo(len(t.rows[0])), Elt: id("float64")}}, Lbrace: w.at(200)}
					for _, r := range t.rows {
						lit.Elts = append(lit.Elts, &ast.CompositeLit{Lbrace: w.pos(), Elts: row(r)})
					}
					lit.Rbrace = w.pos()
					vs.Values = []ast.Expr{lit}
				}
				specs = append(specs, vs)
			}
		}
	}
	w.fp = nil
	decl.Specs = specs
	decl.Rparen = w.pos()
	return decl
}

func cellIdent(c cell.Type) string {
	switch c {
	case cell.Interval:
		return "Interval"
	case cell.Triangle:
		return "Triangle"
	case cell.Tetrahedron:
		return "Tetrahedron"
	case cell.Quadrilateral:
		return "Quadrilateral"
	case cell.Hexahedron:
		return "Hexahedron"
	}
	panic("gogen: invalid cell type")
}
