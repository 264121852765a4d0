package activity

import (
	"strings"
	"testing"
	"unicode/utf8"
)

func TestVisibleText(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"HD 166435", "HD 166435"},
		{"τ Ceti é", "τ Ceti é"},                             // letters of any script stay
		{"gnp\u202Eexe.png", `gnp\u{202E}exe.png`},           // right-to-left override (display spoofing)
		{"a\u2066b\u2069c", `a\u{2066}b\u{2069}c`},           // isolates
		{"x\u200By", `x\u{200B}y`},                           // zero-width space
		{"line\nbreak\ttab", `line\u{000A}break\u{0009}tab`}, // controls
		{"bad\xffbyte", `bad\xFFbyte`},                       // invalid UTF-8
		{"nul\x00", `nul\u{0000}`},
		{"\u0085next", `\u{0085}next`}, // C1 control
	} {
		got := VisibleText(c.in)
		if got != c.want {
			t.Errorf("VisibleText(%q) = %q, want %q", c.in, got, c.want)
		}
		if !utf8.ValidString(got) {
			t.Errorf("VisibleText(%q) is not valid UTF-8", c.in)
		}
		for _, r := range got {
			if hiddenRune(r) {
				t.Errorf("VisibleText(%q) keeps hidden rune %U", c.in, r)
			}
		}
	}
	if strings.Contains(VisibleText("\u202E"), "\u202E") {
		t.Error("override kept")
	}
}
