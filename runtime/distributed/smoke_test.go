package distributed

import (
	"os"
	"testing"

	"github.com/formwright/formwright/runtime/problem"
)

func TestSmoke(t *testing.T) {
	needEngine(t)
	m := model(t, "adr")
	lf, k := lower(t, m, "supg")
	msh := mustMesh(t, "rect:0,1,0,1:16x16:tri")
	ref, err := problem.Solve(lf, msh, problem.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, ranks := range []int{1, 2} {
		sol, rep, err := Solve(lf, msh, k, Options{Ranks: ranks, Log: os.Stderr, CacheDir: t.TempDir()})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%d ranks: %+v", ranks, rep)
		t.Logf("diff %g", relDiff(sol.X, ref.X))
	}
}
