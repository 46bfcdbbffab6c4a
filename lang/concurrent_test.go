package lang

import (
	"os"
	"sync"
	"testing"
)

// Parse keeps no state between calls, so files can be parsed in parallel
// (run with -race to check).
func TestParseConcurrent(t *testing.T) {
	src, err := os.ReadFile("testdata/tank_dye.fw")
	if err != nil {
		t.Fatal(err)
	}
	bad, err := os.ReadFile("testdata/bad/syntax.fw")
	if err != nil {
		t.Fatal(err)
	}
	want, _ := Parse("t.fw", src)
	wantBad, wantErrs := Parse("b.fw", bad)
	var wg sync.WaitGroup
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; i < 5; i++ {
				f, errs := Parse("t.fw", src)
				if len(errs) != 0 || dump(f) != dump(want) {
					t.Error("concurrent parse differs")
				}
				fb, errsB := Parse("b.fw", bad)
				if dump(fb) != dump(wantBad) || errsB.Error() != wantErrs.Error() {
					t.Error("concurrent parse of the bad file differs")
				}
			}
		}()
	}
	wg.Wait()
}
