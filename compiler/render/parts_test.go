package render

import (
	"bytes"
	"encoding/json"
	"testing"

	"github.com/formwright/formwright/compiler"
)

// TestJSONParts: the JSON derivation lists the boundary parts a model
// defines, with the set in set notation (∩ for cap, ∖ for minus, ≤ for
// <=; the defined part inlined, as the checker resolves it).
func TestJSONParts(t *testing.T) {
	m := mustModel(t, `model p
dimension 2
unknown u: scalar P1
part inlet = bottom cap {x <= 1/2}
part rest = all minus inlet
equation for u: -lap(u) = 1
at inlet: u = 0
at rest: flux(u) = 0
`)
	d, err := compiler.Derive(m, nil)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := WriteJSON(&b, d); err != nil {
		t.Fatal(err)
	}
	var out struct {
		Parts []struct{ Name, Text, TeX string } `json:"parts"`
	}
	if err := json.Unmarshal(b.Bytes(), &out); err != nil {
		t.Fatal(err)
	}
	want := map[string]string{"inlet": "bottom ∩ {x ≤ (1/2)}", "rest": "∂Ω ∖ (bottom ∩ {x ≤ (1/2)})"}
	if len(out.Parts) != len(want) {
		t.Fatalf("parts %+v, want %v", out.Parts, want)
	}
	for _, p := range out.Parts {
		if p.Text != want[p.Name] {
			t.Errorf("part %s: %q, want %q (tex %q)", p.Name, p.Text, want[p.Name], p.TeX)
		}
	}
}
