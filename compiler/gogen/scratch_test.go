package gogen

import (
	"fmt"
	"testing"
	"strings"

	"github.com/formwright/formwright/compiler"
	"github.com/formwright/formwright/compiler/ir"
	"github.com/formwright/formwright/compiler/render"
	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

func TestScratch(t *testing.T) {
	name, src, _ := stdlib.Model("adr")
	f, errs := lang.Parse(name, src)
	m, cerrs := compiler.Check(f, compiler.CheckOptions{Load: stdlib.Module})
	errs = append(errs, cerrs...)
	if len(errs) > 0 { var b strings.Builder; errs.Format(&b, m.Sources); t.Fatal(b.String()) }
	d, err := compiler.Derive(m, nil)
	if err != nil { t.Fatal(err) }
	for _, meth := range []compiler.Method{compiler.SUPG} {
		lf, err := d.Lower(meth)
		if err != nil { t.Fatal(err) }
		for _, in := range lf.Integrals {
			fmt.Println("side", in.Domain.Side)
			for _, tm := range in.Bilinear {
				fmt.Println(" B", render.Expr(tm.Test, render.Text, render.Names{}), render.Expr(tm.Trial, render.Text, render.Names{}), "|", render.Expr(tm.Coef, render.Syntax, render.Names{}), tm.Coef.Pos())
			}
			for _, tm := range in.Linear {
				fmt.Println(" L", render.Expr(tm.Test, render.Text, render.Names{}), "|", render.Expr(tm.Coef, render.Syntax, render.Names{}))
			}
		}
		fmt.Println(ir.Debug(lf.Integrals[0].Bilinear[0].Coef))
	}
}
