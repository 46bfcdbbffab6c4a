package notation

import "testing"

// The Unicode text of the markup notes are written in.
func TestPlain(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{`fine scales modelled as $u' \approx -\tau R(u_h)$, $R(u_h) = L u_h - f$`, "fine scales modelled as u′ ≈ −τ R(u_h), R(u_h) = L u_h − f"},
		{`$B_D(u', v_h) = 0$ for the $H^1_0$ projector`, "B_D(u′, v_h) = 0 for the H¹₀ projector"},
		{`$\frac{1}{|\Omega|} \int_\Omega \mathrm{p\_0}\,\mathrm{d}x = 0$`, "(1/|Ω|) ∫_Ω p_0 dx = 0"},
		{`$\partial_t u$ and $u^{n-1}$, $L'^*$, $\lVert a\rVert$`, "∂ₜu and uⁿ⁻¹, L′*, ‖a‖"},
		{`$\tau_{\mathrm{vel}}$ and $x^{ab}$`, "τ_vel and x^(ab)"},
		{`block-diagonal, P\'eclet, M\"obius, 50\%, a\_b, pages 1--2, \textbackslash{}`, `block-diagonal, Péclet, Möbius, 50%, a_b, pages 1–2, \`},
		{`$\sum_K (\tau R, a \cdot \nabla v)_K$`, "Σ_K (τ R, a · ∇v)_K"},
		{`$\partial_i\partial_j u_h$ and $\partial_t u$`, "∂_i∂_j u_h and ∂ₜu"},
		{"the statement ``mean u = 0'', $\\nabla\\cdot u$, $f|_{\\varepsilon=0}$", "the statement “mean u = 0”, ∇·u, f|ε=0"},
	} {
		if got := Plain(c.in); got != c.want {
			t.Errorf("Plain(%q)\n got %q\nwant %q", c.in, got, c.want)
		}
	}
}
