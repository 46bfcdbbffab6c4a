package gogen

import (
	"fmt"
	"strconv"

	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/runtime/cell"
	"github.com/formwright/formwright/runtime/element"
	"github.com/formwright/formwright/runtime/quadrature"
)

// plan is what the generator needs besides the forms, whatever the
// target language.
type plan struct {
	methods   []string
	derived   map[string]Derived
	loopAbove int
}

// planFile runs the generator on the selected forms: the kernel
// description that the printers spell.
func planFile(forms []*ir.LoweredForm, p plan) (*kernelFile, error) {
	sel, err := selectForms(forms, p.methods)
	if err != nil {
		return nil, err
	}
	if p.loopAbove <= 0 {
		p.loopAbove = 8
	}
	kf := &kernelFile{}
	seen := map[string]bool{}
	for fi, lf := range sel {
		fp, err := planForm(lf, fi, seen, p)
		if err != nil {
			return nil, fmt.Errorf("method %s: %w", lf.Method, err)
		}
		for _, b := range fp.bodies() {
			kf.usesSign = kf.usesSign || b.usesSign
			kf.usesMin = kf.usesMin || b.usesMin
			kf.usesMax = kf.usesMax || b.usesMax
		}
		kf.forms = append(kf.forms, fp)
	}
	return kf, nil
}

// bodies lists the cell body and every facet body of a form.
func (fp *formPlan) bodies() []*bodyPlan {
	out := []*bodyPlan{fp.cellK}
	for _, s := range fp.sides {
		out = append(out, s.facets...)
	}
	return out
}

var methodIdents = map[string]string{"galerkin": "Galerkin", "supg": "SUPG", "gls": "GLS", "vms": "VMS"}

func planForm(lf *ir.LoweredForm, fi int, seen map[string]bool, p plan) (*formPlan, error) {
	c, err := cellFor(lf)
	if err != nil {
		return nil, err
	}
	fp := &formPlan{lf: lf, method: lf.Method, cell: c, degree: lf.QuadratureDegree(), hash: ir.FormHash(lf)}
	fp.ident = methodIdents[lf.Method]
	if fp.ident == "" {
		fp.ident = "Method" + Mangle(lf.Method)
	}
	// A second form of the same method in one file gets its index.
	if seen[fp.ident] {
		fp.suffix = strconv.Itoa(fi)
	}
	seen[fp.ident] = true

	var elems []*element.Element
	for _, u := range lf.Unknowns {
		fe, err := element.Lagrange(c, u.Element.Degree)
		if err != nil {
			return nil, err
		}
		ei := -1
		for j, e := range elems {
			if e.Degree == fe.Degree {
				ei = j
			}
		}
		if ei < 0 {
			ei = len(elems)
			elems = append(elems, fe)
		}
		fp.fields = append(fp.fields, fieldInfo{elem: fe, ei: ei, comps: u.Components(lf.Dim), off: fp.n})
		fp.n += fe.NumNodes() * u.Components(lf.Dim)
	}
	fp.geom = element.MustLagrange(c, 1)
	loop := false
	for _, e := range elems {
		loop = loop || e.NumNodes() > p.loopAbove
	}
	var derived *Derived
	if d, ok := p.derived[lf.Method]; ok {
		derived = &d
	}
	cm := newCommenter(lf, derived)
	build := func(pts, wts []float64, fg *facetGeom, scope, side string, bil, lin []ir.Term) (*bodyPlan, error) {
		g := &bodyGen{c: c, dim: c.Dim(), n: fp.n, fields: fp.fields, elems: elems, geom: fp.geom,
			pts: pts, wts: wts, facet: fg, affine: c.IsSimplex(), loop: loop, scope: scope}
		g.init()
		gs, err := g.groups(bil, lin)
		if err != nil {
			return nil, err
		}
		b, err := g.body(gs, symmetric(gs), cm, side)
		if err != nil {
			return nil, err
		}
		fp.prev = fp.prev || b.prev
		return b, nil
	}

	rule := quadrature.For(c, fp.degree)
	bil, lin := splitIntegrals(lf, "")
	if fp.cellK, err = build(rule.Points, rule.Weights, nil, "Cell", "", bil, lin); err != nil {
		return nil, err
	}
	for si, side := range lf.Sides() {
		sp := &sidePlan{name: side}
		fbil, flin := splitIntegrals(lf, side)
		for f := 0; f < c.NumFacets(); f++ {
			pts, wts, fg := facetRule(c, f, fp.degree)
			b, err := build(pts, wts, fg, fmt.Sprintf("Side%dFacet%d", si, f), side, fbil, flin)
			if err != nil {
				return nil, fmt.Errorf("side %q: %w", side, err)
			}
			b.facet = f
			sp.facets = append(sp.facets, b)
		}
		fp.sides = append(fp.sides, sp)
	}
	return fp, nil
}

func selectForms(forms []*ir.LoweredForm, methods []string) ([]*ir.LoweredForm, error) {
	if len(forms) == 0 {
		return nil, fmt.Errorf("gogen: no forms to generate")
	}
	if len(methods) == 0 {
		return forms, nil
	}
	var out []*ir.LoweredForm
	seen := map[string]bool{}
	for _, m := range methods {
		if seen[m] {
			continue
		}
		seen[m] = true
		found := false
		for _, f := range forms {
			if f.Method == m {
				out = append(out, f)
				found = true
			}
		}
		if !found {
			return nil, fmt.Errorf("gogen: no form for method %q", m)
		}
	}
	return out, nil
}

// cellFor picks the cell type of a form's elements: P on simplices, Q on
// quadrilaterals and hexahedra, both on the interval (as runtime/interp).
func cellFor(lf *ir.LoweredForm) (cell.Type, error) {
	if len(lf.Unknowns) == 0 {
		return 0, fmt.Errorf("gogen: form has no unknowns")
	}
	if err := lf.Validate(); err != nil {
		return 0, fmt.Errorf("gogen: %w", err)
	}
	return cell.Of(lf.Dim, lf.Family() == ir.TensorProduct), nil
}

// facetRule is the quadrature the facet kernels use on local facet f
// (element.NewReferenceFacet, shared so both paths integrate alike).
func facetRule(c cell.Type, f, deg int) (pts, wts []float64, fg *facetGeom) {
	rf := element.NewReferenceFacet(c, f, deg)
	return rf.Rule.Points, rf.Rule.Weights, &facetGeom{tang: rf.Tangents, nref: rf.Normal}
}

func splitIntegrals(lf *ir.LoweredForm, side string) (bil, lin []ir.Term) {
	for _, in := range lf.Integrals {
		if in.Domain.Side == side {
			bil = append(bil, in.Bilinear...)
			lin = append(lin, in.Linear...)
		}
	}
	return bil, lin
}
