package gogen

import (
	"fmt"
	"go/token"
	"regexp"
	"slices"
	"strings"
	"unicode"
)

// Names in generated code. Identifiers that come from the model never
// reach the output unchecked:
//
//   - Type names of the Go kernels carry a side name behind a fixed prefix,
//     mangled (Mangle), so distinct sides never collide and no side name
//     can be a keyword.
//   - A model quantity (coefficient, τ, fine-scale velocity) is a local
//     variable named after it (localName): its model name with 1-based
//     component indices (tau_c, a_1, D_1_2) when that is a plain
//     identifier in Go, C and C++ that the generator does not use itself,
//     else "m_" followed by the mangled name. The scheduler gives every
//     node a name of its own, so two quantities never share a variable.
//   - Model text in comments and string literals is sanitised or quoted
//     by the printer of each language.

// Mangle turns a checked model name into a string of identifier
// characters: ASCII letters and digits stay, '_' becomes "__", any other
// rune becomes _uXXXX. The map is injective, so distinct names never
// collide, and the result is always preceded by a fixed prefix in
// generated code, so keywords and predeclared names cannot clash.
func Mangle(name string) string {
	var b strings.Builder
	for _, r := range name {
		switch {
		case r < unicode.MaxASCII && (unicode.IsLetter(r) || unicode.IsDigit(r)):
			b.WriteRune(r)
		case r == '_':
			b.WriteString("__")
		default:
			fmt.Fprintf(&b, "_u%04X", r)
		}
	}
	return b.String()
}

// plainName is a name a model quantity may keep verbatim: letters and
// digits in runs joined by single underscores, starting with a letter.
// Names with a leading underscore or a double underscore are reserved in
// C and C++; all-capital names may be C macros (NAN, INFINITY, HUGE_VAL).
var plainName = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9]*(_[A-Za-z0-9]+)*$`)

// generatorName matches the names the generator gives its own variables.
var generatorName = regexp.MustCompile(`^((c|p|e|a|j|k|x|coef|basis|rowf|normal|metric)[0-9]+|detJ|rdetJ|w|surface|diameter|volume)$`)

// localName is the variable name of component (i, j) of a model quantity
// of the given rank: its plain name when that is safe (see above), and
// its mangled name, which is always safe and differs from every other
// quantity's. The scheduler takes mangled when plain is taken (a scalar
// a_1 and component 1 of a vector a).
func localName(name string, rank, i, j int) (plain, mangled string) {
	suffix := ""
	switch rank {
	case 1:
		suffix = fmt.Sprintf("_%d", i+1)
	case 2:
		suffix = fmt.Sprintf("_%d_%d", i+1, j+1)
	}
	mangled = "m_" + Mangle(name) + suffix
	s := name + suffix
	if plainName.MatchString(s) && strings.ContainsFunc(s, unicode.IsLower) && !strings.HasPrefix(s, "fw") &&
		!strings.HasPrefix(s, "m_") && !generatorName.MatchString(s) && !reservedWord(s) {
		return s, mangled
	}
	return mangled, mangled
}

// reservedWord reports whether s is a keyword or predeclared identifier of
// Go, a keyword or alternative operator spelling of C99, C11 or C++11, or
// a name of the C library the C kernels use.
func reservedWord(s string) bool {
	return token.IsKeyword(s) || reserved[s] || slices.Contains(reservedLocals, s)
}

var reserved = func() map[string]bool {
	m := map[string]bool{}
	for _, list := range []string{
		// Go predeclared identifiers.
		"any bool byte comparable complex64 complex128 error float32 float64 int int8 int16 int32 int64 rune string uint uint8 uint16 uint32 uint64 uintptr true false iota nil append cap clear close complex copy delete imag len make max min new panic print println real recover",
		// C99 and C11 keywords (those with a leading underscore are not plain).
		"auto break case char const continue default do double else enum extern float for goto if inline int long register restrict return short signed sizeof static struct switch typedef union unsigned void volatile while",
		// C++11 keywords and alternative tokens.
		"alignas alignof and and_eq asm bitand bitor bool catch char16_t char32_t class compl const_cast constexpr decltype delete dynamic_cast explicit export false friend mutable namespace new noexcept not not_eq nullptr operator or or_eq private protected public reinterpret_cast static_assert static_cast template this thread_local throw true try typeid typename using virtual wchar_t xor xor_eq",
		// The C library as the C kernels use it.
		"sqrt fabs exp log sin cos tan sinh cosh tanh pow errno math_errhandling",
		// Go packages the Go kernels import.
		"math cell compiled element kernel",
	} {
		for _, w := range strings.Fields(list) {
			m[w] = true
		}
	}
	return m
}()

// sanitize makes text safe for a // comment of Go or C: no line breaks,
// control or format characters (bidirectional overrides), no comment
// delimiters, no backslash (a line splice in C) and no "??" (a trigraph
// in C99).
func sanitize(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r == '\n' || r == '\r' || r == '\u2028' || r == '\u2029' || r == '\u0085':
			b.WriteRune(' ')
		case unicode.IsControl(r) || unicode.Is(unicode.Cf, r) || r == unicode.ReplacementChar:
			b.WriteRune(' ')
		case r == '\\':
			b.WriteRune('⧵')
		default:
			b.WriteRune(r)
		}
	}
	out := strings.ReplaceAll(b.String(), "*/", "* /")
	out = strings.ReplaceAll(out, "/*", "/ *")
	for strings.Contains(out, "??") {
		out = strings.ReplaceAll(out, "??", "? ?")
	}
	return out
}
