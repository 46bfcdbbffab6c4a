package lang

import (
	"fmt"
	"math/rand"
	"strings"
	"testing"
)

var sinkFile *File

// synthModel builds a model of n given statements with random arithmetic
// of modest depth, seeded so runs are comparable.
func synthModel(n int) []byte {
	r := rand.New(rand.NewSource(1))
	var b strings.Builder
	b.WriteString("model synth\ndimension 2\nunknown u: scalar P1\n")
	var expr func(depth int) string
	expr = func(depth int) string {
		if depth == 0 || r.Intn(3) == 0 {
			switch r.Intn(3) {
			case 0:
				return fmt.Sprintf("%d.%d", r.Intn(100), r.Intn(100))
			case 1:
				return fmt.Sprintf("g%d", r.Intn(n+1))
			}
			return fmt.Sprintf("sin(x*%d)", r.Intn(9)+1)
		}
		ops := []string{" + ", " - ", "*", "/", "^"}
		return "(" + expr(depth-1) + ops[r.Intn(len(ops))] + expr(depth-1) + ")"
	}
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "given g%d = %s\n", i, expr(4))
	}
	b.WriteString("equation for u: -div(grad(u)) = g0\n")
	return []byte(b.String())
}

func benchParse(b *testing.B, n int) {
	src := synthModel(n)
	b.SetBytes(int64(len(src)))
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		f, errs := Parse("synth.fw", src)
		if len(errs) != 0 {
			b.Fatal(errs)
		}
		sinkFile = f
	}
}

func BenchmarkParse10(b *testing.B)   { benchParse(b, 10) }
func BenchmarkParse100(b *testing.B)  { benchParse(b, 100) }
func BenchmarkParse1000(b *testing.B) { benchParse(b, 1000) }
