package model

import (
	"strings"
	"testing"
)

func TestLookalikeNames(t *testing.T) {
	cases := []struct {
		name, src, want string // want "" for a valid model
	}{
		// U+0445 is CYRILLIC SMALL LETTER HA, drawn like the Latin x (the
		// Unicode code charts).
		{"cyrillic and latin x", "param x\nparam \u0445\n-x^2 - \u0445^2", "2:7: name \u0445 looks the same as x (line 1, column 7) but is spelt with other characters (Cyrillic \u0445 U+0445)"},
		// U+03BF is GREEK SMALL LETTER OMICRON, drawn like o.
		{"greek omicron against a definition", "mo = 1\nparam m\u03bf\n-(m\u03bf - mo)^2", "looks the same as mo"},
		// Fullwidth x (U+FF58) is x at another width.
		{"fullwidth", "param x\n-x^2 - \uff58^2", "looks the same as x"},
		{"greek letters of their own are fine", "param \u03c3 in [0, inf]\nparam \u03bc\nld_normal(1, \u03bc, \u03c3)", ""},
		{"a lone cyrillic name is fine", "param \u0445\n-\u0445^2", ""},
		// U+202E RIGHT-TO-LEFT OVERRIDE inside a comment (the scanner
		// refuses it elsewhere).
		{"bidi override in a comment", "param x\n-x^2 # \u202e hidden\n", "2:8: bidirectional control character U+202E"},
	}
	for _, c := range cases {
		_, err := Parse(c.src)
		if c.want == "" {
			if err != nil {
				t.Errorf("%s: %v", c.name, err)
			}
			continue
		}
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
	}
}

func TestVisible(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"plain text\twith a tab\n", "plain text\twith a tab\n"},
		{"a\u202eb", "a<U+202E>b"},                 // right-to-left override
		{"x\u200by", "x<U+200B>y"},                 // zero-width space
		{"\ufeffstart", "<U+FEFF>start"},           // byte-order mark
		{"bell\a", "bell<U+0007>"},                 // a control character
		{"nb\u00a0sp", "nb<U+00A0>sp"},             // no-break space
		{"\u0445 and \u03c3", "\u0445 and \u03c3"}, // letters stay
	} {
		if got := Visible(c.in); got != c.want {
			t.Errorf("Visible(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}
