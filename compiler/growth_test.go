package compiler

import (
	"fmt"
	"strings"
	"testing"

	"github.com/formwright/formwright/lang"
	"github.com/formwright/formwright/stdlib"
)

// Models whose size grows along one axis, for the growth benchmarks and
// the no-blow-up test: a chain of coefficients or formulas that each use
// the previous one twice (as trees they grow like 2^n), one long sum, and
// many coefficients.
func chainGivens(n int) string {
	var b strings.Builder
	b.WriteString("model chain\ndimension 1\nunknown u: scalar P1\ngiven a0 = x\n")
	for i := 1; i <= n; i++ {
		fmt.Fprintf(&b, "given a%d = sin(a%d) + cos(a%d)\n", i, i-1, i-1)
	}
	fmt.Fprintf(&b, "equation for u: -lap(u) + a%d*u = 1\nat all: u = 0\n", n)
	return b.String()
}

func chainFormulas(n int) string {
	var b strings.Builder
	b.WriteString("model chain\ndimension 1\nunknown u: scalar P1\nformula f0(s) = s + 1\n")
	for i := 1; i <= n; i++ {
		fmt.Fprintf(&b, "formula f%d(s) = sin(f%d(s)) + cos(f%d(s))\n", i, i-1, i-1)
	}
	fmt.Fprintf(&b, "equation for u: -lap(u) + f%d(x)*u = 1\nat all: u = 0\n", n)
	return b.String()
}

func longSum(n int) string {
	var b strings.Builder
	b.WriteString("model sum\ndimension 1\nunknown u: scalar P1\ngiven a = 0")
	for i := 1; i <= n; i++ {
		fmt.Fprintf(&b, " + %d*x^%d", i, i%7)
	}
	b.WriteString("\nequation for u: -lap(u) = a\nat all: u = 0\n")
	return b.String()
}

func wideModel(n int) string {
	var b strings.Builder
	b.WriteString("model wide\ndimension 1\nunknown u: scalar P1\n")
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "given g%d = %d*x + 1\n", i, i)
	}
	b.WriteString("equation for u: -lap(u) + g0*u = 1\nat all: u = 0\n")
	return b.String()
}

// throughLowering parses, checks, derives and lowers a model.
func throughLowering(tb testing.TB, src string) {
	f, errs := lang.Parse("g.fw", []byte(src))
	m, cerrs := Check(f, CheckOptions{Load: stdlib.Module})
	if len(errs)+len(cerrs) > 0 {
		tb.Fatal(errs, cerrs)
	}
	d, err := Derive(m, nil)
	if err != nil {
		tb.Fatal(err)
	}
	if _, err := d.Lower(Galerkin); err != nil {
		tb.Fatal(err)
	}
}

// TestNoSymbolicBlowUp: chains of 60 coefficients or formulas, each using
// the previous one twice, unfold to trees of 2^60 nodes; shared
// subexpressions keep checking, deriving and lowering them linear in the
// model's size, so they finish (a tree-walking pass would not, in any
// time). The sizes are common practice, no source.
func TestNoSymbolicBlowUp(t *testing.T) {
	for name, src := range map[string]string{"givens": chainGivens(60), "formulas": chainFormulas(60)} {
		t.Run(name, func(t *testing.T) { throughLowering(t, src) })
	}
}

func benchModel(b *testing.B, src string) {
	b.ReportAllocs()
	for b.Loop() {
		throughLowering(b, src)
	}
}

func BenchmarkChainGivens10(b *testing.B)   { benchModel(b, chainGivens(10)) }
func BenchmarkChainGivens40(b *testing.B)   { benchModel(b, chainGivens(40)) }
func BenchmarkChainGivens160(b *testing.B)  { benchModel(b, chainGivens(160)) }
func BenchmarkChainFormulas10(b *testing.B) { benchModel(b, chainFormulas(10)) }
func BenchmarkChainFormulas40(b *testing.B) { benchModel(b, chainFormulas(40)) }
func BenchmarkChainFormulas160(b *testing.B) {
	benchModel(b, chainFormulas(160))
}
func BenchmarkLongSum1000(b *testing.B)  { benchModel(b, longSum(1000)) }
func BenchmarkLongSum4000(b *testing.B)  { benchModel(b, longSum(4000)) }
func BenchmarkLongSum16000(b *testing.B) { benchModel(b, longSum(16000)) }
func BenchmarkWide1000(b *testing.B)     { benchModel(b, wideModel(1000)) }
func BenchmarkWide4000(b *testing.B)     { benchModel(b, wideModel(4000)) }
func BenchmarkWide16000(b *testing.B)    { benchModel(b, wideModel(16000)) }
