package notation

import (
	"strings"
	"unicode/utf8"
)

// Notes and other running text of a derivation are written once, in a
// small subset of LaTeX: prose with the escapes \_ \& \% \# and the
// accents \'e \"o, and inline mathematics between dollar signs using the
// commands in mathText. The LaTeX writer sets that source as it is; Plain
// turns it into the Unicode text of the terminal and JSON outputs, so the
// two never drift apart.

// mathText maps the math-mode commands notes may use to Unicode.
var mathText = map[string]string{
	`\tau`: "τ", `\sigma`: "σ", `\kappa`: "κ", `\nu`: "ν", `\varepsilon`: "ε", `\epsilon`: "ε",
	`\delta`: "δ", `\lambda`: "λ", `\alpha`: "α", `\beta`: "β", `\mu`: "μ", `\rho`: "ρ", `\omega`: "ω", `\varphi`: "φ",
	`\Omega`: "Ω", `\Delta`: "Δ", `\Sigma`: "Σ", `\Gamma`: "Γ", `\nabla`: "∇", `\partial`: "∂",
	`\cdot`: "·", `\approx`: "≈", `\neq`: "≠", `\le`: "≤", `\ge`: "≥", `\pm`: "±", `\otimes`: "⊗",
	`\int`: "∫", `\sum`: "Σ", `\ldots`: "…", `\lVert`: "‖", `\rVert`: "‖", `\|`: "‖", `\to`: "→",
	`\infty`: "∞", `\times`: "×", `\in`: "∈", `\quad`: " ", `\,`: " ", `\;`: " ", `\!`: "",
	`\lvert`: "|", `\rvert`: "|", `\{`: "{", `\}`: "}", `\_`: "_", `\left`: "", `\right`: "",
	`\bigl`: "", `\bigr`: "", `\cup`: "∪", `\cap`: "∩", `\setminus`: "∖",
}

// prefixOperators are the math commands whose following spaces the text
// drops, as it sets their operand against them: \nabla v → ∇v.
var prefixOperators = map[string]bool{`\nabla`: true, `\partial`: true, `\Delta`: true, `\lVert`: true, `\delta`: true}

// textEscapes are the escapes and accents of prose.
var textEscapes = map[string]string{
	`\_`: "_", `\&`: "&", `\%`: "%", `\#`: "#", `\$`: "$", `\ldots`: "…", `\{`: "{", `\}`: "}",
	`\textbackslash`: `\`, `\^`: "^", `\~`: "~",
	`\'e`: "é", `\"o`: "ö", `\"a`: "ä", `\"u`: "ü", `\'a`: "á", `\` + "`e": "è",
}

// Superscript and subscript forms of the characters that have them.
var (
	superscripts = map[rune]rune{'0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹',
		'+': '⁺', '-': '⁻', '(': '⁽', ')': '⁾', 'n': 'ⁿ', 'i': 'ⁱ'}
	subscripts = map[rune]rune{'0': '₀', '1': '₁', '2': '₂', '3': '₃', '4': '₄', '5': '₅', '6': '₆', '7': '₇', '8': '₈', '9': '₉',
		'+': '₊', '-': '₋', '(': '₍', ')': '₎', 't': 'ₜ'}
)

// Plain renders markup (see above) as Unicode text: the dollar signs
// go, math commands become their symbols, ^{…} and _{…} become Unicode
// superscripts and subscripts where every character has one (u^2 → u²,
// H^1_0 → H¹₀, \partial_t → ∂ₜ) and stay as ^(…) and _… otherwise, a
// hyphen in math becomes a minus sign, and \mathrm{…} or \text{…} its
// content.
func Plain(markup string) string {
	var b strings.Builder
	inMath := false
	afterPrefix := false // just after a prefix operator (and its scripts)
	for i := 0; i < len(markup); {
		c := markup[i]
		wasPrefix := afterPrefix
		afterPrefix = false
		switch {
		case !inMath && (strings.HasPrefix(markup[i:], "``") || strings.HasPrefix(markup[i:], "''")):
			b.WriteString(map[byte]string{'`': "“", '\'': "”"}[c]) // TeX's quotation marks
			i += 2
		case c == '$':
			inMath = !inMath
			i++
		case c == '\\':
			j := commandEnd(markup, i)
			cmd := markup[i:j]
			if !inMath {
				if r, ok := textEscapes[cmd]; ok {
					b.WriteString(r)
					i = j
					if strings.HasPrefix(markup[i:], "{}") {
						i += 2
					}
					continue
				}
				if j < len(markup) && (cmd == `\'` || cmd == `\"` || cmd == "\\`") {
					if r, ok := textEscapes[markup[i:j+1]]; ok {
						b.WriteString(r)
						i = j + 1
						continue
					}
				}
				b.WriteString(cmd)
				i = j
				continue
			}
			switch cmd {
			case `\frac`:
				num, k := group(markup, j)
				den, k := group(markup, k)
				b.WriteString("(" + Plain("$"+num+"$") + "/" + Plain("$"+den+"$") + ")")
				i = k
				continue
			case `\mathrm`, `\text`, `\mathbf`, `\mathit`, `\operatorname`:
				arg, k := group(markup, j)
				b.WriteString(Plain(strings.ReplaceAll(arg, `\_`, "_")))
				i = k
				continue
			}
			if r, ok := mathText[cmd]; ok {
				b.WriteString(r)
			} else {
				b.WriteString(cmd)
			}
			i = j
			if prefixOperators[cmd] || (wasPrefix && cmd == `\cdot`) { // ∇·u
				afterPrefix = true
				for i < len(markup) && markup[i] == ' ' {
					i++
				}
			}
		case inMath && (c == '^' || c == '_'):
			arg, k := group(markup, i+1)
			plain := Plain("$" + arg + "$")
			ascii := false // written as _x or ^x, not as a Unicode script
			if c == '^' && (arg == "*" || arg == "'") {
				b.WriteString(map[string]string{"*": "*", "'": "′"}[arg])
			} else if s, ok := scripted(plain, c == '^'); ok {
				b.WriteString(s)
			} else if c == '^' {
				ascii = true
				if utf8.RuneCountInString(plain) == 1 {
					b.WriteString("^" + plain)
				} else {
					b.WriteString("^(" + plain + ")")
				}
			} else if strings.HasSuffix(b.String(), "|") {
				b.WriteString(plain) // an evaluation bar: f|ε=0
			} else {
				ascii = true
				b.WriteString("_" + plain)
			}
			i = k
			if wasPrefix {
				// ∂ᵢu, but ∂_j u: after an ASCII script the space stays,
				// or the operand would read as part of the script.
				afterPrefix = true
				for !ascii && i < len(markup) && markup[i] == ' ' {
					i++
				}
			}
		case inMath && c == '-':
			b.WriteString("−")
			i++
		case inMath && c == '\'':
			b.WriteString("′")
			i++
		case inMath && (c == '{' || c == '}'):
			i++
		case !inMath && c == '-' && strings.HasPrefix(markup[i:], "--"):
			b.WriteString("–")
			i += 2
		case !inMath && c == '~':
			b.WriteByte(' ')
			i++
		default:
			b.WriteByte(c)
			i++
		}
	}
	return b.String()
}

// commandEnd returns the end of the command starting with the backslash
// at i: a run of letters, or one other character.
func commandEnd(s string, i int) int {
	j := i + 1
	for j < len(s) && (s[j] >= 'a' && s[j] <= 'z' || s[j] >= 'A' && s[j] <= 'Z') {
		j++
	}
	if j == i+1 && j < len(s) {
		j++
	}
	return j
}

// group returns the argument at i: the content of a {…} group (nested
// braces allowed), a command, or one character; and the index after it.
func group(s string, i int) (string, int) {
	if i >= len(s) {
		return "", i
	}
	switch s[i] {
	case '{':
		depth := 0
		for j := i; j < len(s); j++ {
			switch s[j] {
			case '{':
				depth++
			case '}':
				depth--
				if depth == 0 {
					return s[i+1 : j], j + 1
				}
			}
		}
		return s[i+1:], len(s)
	case '\\':
		j := commandEnd(s, i)
		return s[i:j], j
	}
	_, n := utf8.DecodeRuneInString(s[i:])
	return s[i : i+n], i + n
}

// scripted writes s with Unicode superscripts (or subscripts) if every
// character has one.
func scripted(s string, super bool) (string, bool) {
	table := subscripts
	if super {
		table = superscripts
	}
	var b strings.Builder
	for _, r := range strings.ReplaceAll(s, "−", "-") {
		t, ok := table[r]
		if !ok {
			return "", false
		}
		b.WriteRune(t)
	}
	return b.String(), s != ""
}

// TeXName writes a model name (an unknown, a coefficient) for use inside
// markup math as the equations write it: Greek names as letters, a name of
// several letters upright, a trailing _part as a subscript.
func TeXName(name string) string {
	return printer{style: LaTeX}.name(name)
}

// TeXProse escapes a string for the prose of markup (outside math).
func TeXProse(s string) string {
	r := strings.NewReplacer(`\`, `\textbackslash{}`, "_", `\_`, "&", `\&`, "%", `\%`, "#", `\#`, "$", `\$`, "{", `\{`, "}", `\}`, "^", `\^{}`, "~", `\~{}`)
	return r.Replace(s)
}
