package model

import (
	"fmt"
	"sort"
	"strings"
	"unicode"
)

// Characters a reader cannot see or cannot tell apart: the checker rejects
// bidirectional controls (they can make a line display in another order
// than it is read, even inside a comment) and names that look the same as
// another name but are spelt with other characters (a Cyrillic х beside a
// Latin x); Visible shows invisible characters in messages.

// bidiControl reports the bidirectional embedding, override and isolate
// controls (Unicode's Bidi_Control property, without the plain marks LRM
// and RLM).
func bidiControl(r rune) bool {
	return (r >= '\u202A' && r <= '\u202E') || (r >= '\u2066' && r <= '\u2069')
}

// invisible reports a character that shows nothing or moves text: format
// characters (bidirectional controls and marks, zero-width spaces and
// joiners, the byte-order mark), control characters other than tab and line
// feed, and separators other than the plain space.
func invisible(r rune) bool {
	switch r {
	case '\n', '\t', ' ':
		return false
	}
	return unicode.Is(unicode.Cf, r) || unicode.IsControl(r) || unicode.Is(unicode.Zl, r) || unicode.Is(unicode.Zp, r) ||
		(unicode.Is(unicode.Zs, r) && r != ' ')
}

// Visible returns s with every invisible character (see above) written as
// <U+XXXX>, so a message never carries a character that reorders or hides
// the text around it.
func Visible(s string) string {
	if strings.IndexFunc(s, invisible) < 0 {
		return s
	}
	var b strings.Builder
	for _, r := range s {
		if invisible(r) {
			fmt.Fprintf(&b, "<U+%04X>", r)
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}

// lookalike maps letters that look like a Latin letter in common fonts
// (Cyrillic and Greek homoglyphs, fullwidth Latin) to that letter. The
// pairs are the plain visual matches of the Cyrillic and Greek alphabets
// (from the code charts; common practice in lookalike checks, not a
// complete list).
var lookalike = map[rune]rune{
	// Cyrillic small
	'а': 'a', 'в': 'b', 'е': 'e', 'к': 'k', 'м': 'm', 'н': 'h', 'о': 'o', 'р': 'p', 'с': 'c', 'т': 't',
	'у': 'y', 'х': 'x', 'ѕ': 's', 'і': 'i', 'ј': 'j', 'ԁ': 'd', 'һ': 'h', 'ԛ': 'q', 'ԝ': 'w', 'ӏ': 'l',
	// Cyrillic capital
	'А': 'A', 'В': 'B', 'Е': 'E', 'К': 'K', 'М': 'M', 'Н': 'H', 'О': 'O', 'Р': 'P', 'С': 'C', 'Т': 'T',
	'У': 'Y', 'Х': 'X', 'Ѕ': 'S', 'І': 'I', 'Ј': 'J', 'Ԛ': 'Q', 'Ԝ': 'W',
	// Greek small and capital
	'ο': 'o', 'ν': 'v', 'ρ': 'p', 'ι': 'i', 'κ': 'k', 'α': 'a', 'υ': 'u',
	'Α': 'A', 'Β': 'B', 'Ε': 'E', 'Ζ': 'Z', 'Η': 'H', 'Ι': 'I', 'Κ': 'K', 'Μ': 'M', 'Ν': 'N', 'Ο': 'O',
	'Ρ': 'P', 'Τ': 'T', 'Υ': 'Y', 'Χ': 'X',
}

// skeleton is what a name looks like: each lookalike and fullwidth letter
// replaced by its Latin letter.
func skeleton(name string) string {
	return strings.Map(func(r rune) rune {
		if l, ok := lookalike[r]; ok {
			return l
		}
		if r >= '\uFF21' && r <= '\uFF5A' && unicode.IsLetter(r) { // fullwidth Latin
			return r - '\uFF21' + 'A'
		}
		return r
	}, name)
}

// foreignLetters describes the letters of name that stand in for Latin
// ones: "Cyrillic х U+0445".
func foreignLetters(name string) string {
	var parts []string
	for _, r := range name {
		if r < 0x80 {
			continue
		}
		script := "non-Latin"
		for _, s := range []struct {
			name  string
			table *unicode.RangeTable
		}{{"Cyrillic", unicode.Cyrillic}, {"Greek", unicode.Greek}, {"fullwidth Latin", unicode.Latin}} {
			if unicode.Is(s.table, r) {
				script = s.name
				break
			}
		}
		parts = append(parts, fmt.Sprintf("%s %c U+%04X", script, r, r))
	}
	return strings.Join(parts, ", ")
}

// lookalikes reports bidirectional controls in the text (only comments can
// hold them: the scanner rejects them elsewhere) and names of parameters
// and definitions that look the same as an earlier one.
func (c *checker) lookalikes() {
	for off, r := range c.m.Source {
		if bidiControl(r) {
			c.errs.add(posAt(c.m.Source, off), "delete it: it can make the line display in another order than bellcheck reads it",
				"bidirectional control character U+%04X", r)
		}
	}
	type named struct {
		name string
		at   Pos
	}
	var names []named
	for _, p := range c.m.Params {
		names = append(names, named{p.Name, p.At})
	}
	for n, at := range c.defAt {
		names = append(names, named{n, at})
	}
	sort.Slice(names, func(i, j int) bool {
		a, b := names[i].at, names[j].at
		return a.Line < b.Line || a.Line == b.Line && a.Col < b.Col
	})
	first := map[string]named{}
	for _, n := range names {
		sk := skeleton(n.name)
		prev, seen := first[sk]
		if !seen {
			first[sk] = n
			continue
		}
		if prev.name == n.name {
			continue // the same name: reported elsewhere if it is an error
		}
		odd := foreignLetters(n.name)
		if odd == "" {
			odd = foreignLetters(prev.name)
		}
		c.errs.add(n.at, "retype the name with the letters of one alphabet, or choose names that differ visibly",
			"name %s looks the same as %s (line %d, column %d) but is spelt with other characters (%s)",
			n.name, prev.name, prev.at.Line, prev.at.Col, odd)
	}
}
