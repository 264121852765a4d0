package activity

import (
	"fmt"
	"strings"
	"unicode"
	"unicode/utf8"
)

// VisibleText returns s as text that displays as exactly what it holds, for
// labels taken from inputs (star, file, instrument and column names) shown
// in reports, index pages and figure titles: bytes that are not valid UTF-8
// become \xNN; control characters, bidirectional embedding, override and
// isolate controls, zero-width and other invisible format characters and
// line or paragraph separators become \u{XXXX}. Such characters could
// otherwise reorder or hide what a reader sees (a right-to-left override
// makes "gnp.exe" look like "exe.png"). The result is plain text: HTML
// escaping is still the template's job.
func VisibleText(s string) string {
	if isPlainText(s) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		r, n := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && n <= 1:
			fmt.Fprintf(&b, `\x%02X`, s[i])
		case hiddenRune(r):
			fmt.Fprintf(&b, `\u{%04X}`, r)
		default:
			b.WriteRune(r)
		}
		i += n
	}
	return b.String()
}

// isPlainText reports whether s is valid UTF-8 without hidden runes.
func isPlainText(s string) bool {
	if !utf8.ValidString(s) {
		return false
	}
	for _, r := range s {
		if hiddenRune(r) {
			return false
		}
	}
	return true
}

// hiddenRune reports runes that do not display as themselves: controls
// (C0, DEL, C1), format characters (category Cf: the bidirectional
// controls U+061C, U+200E–U+200F, U+202A–U+202E, U+2066–U+2069, zero-width
// characters, the byte-order mark...), line and paragraph separators,
// private-use and unassigned code points.
func hiddenRune(r rune) bool {
	return unicode.IsControl(r) || unicode.In(r, unicode.Cf, unicode.Zl, unicode.Zp, unicode.Co, unicode.Cs) ||
		!unicode.IsPrint(r) && r != ' '
}
