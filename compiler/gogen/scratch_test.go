package gogen

import (
	"os"
	"testing"
)

func TestScratch(t *testing.T) {
	for _, mc := range modelCases(t) {
		forms := lowerAll(t, mc.file, []byte(mc.src))
		out, err := Generate(forms, Options{Package: mc.name, ModelFile: mc.file, CommandLine: "gen x"})
		if err != nil { t.Fatal(err) }
		os.WriteFile("/tmp/gg/"+mc.name+".go", out, 0o644)
	}
}
