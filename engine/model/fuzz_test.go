package model

import (
	"errors"
	"testing"
)

// FuzzParse checks that Parse never panics, that every failure is a sorted
// ErrorList with positions inside the text, and that every success is a
// complete checked model whose canonical text parses back to the same model
// and formats to itself. The seed corpus is testdata/fuzz/FuzzParse.
func FuzzParse(f *testing.F) {
	f.Fuzz(func(t *testing.T, src string) {
		m, err := Parse(src)
		if err != nil {
			if m != nil {
				t.Fatal("a model returned with an error")
			}
			var list ErrorList
			if !errors.As(err, &list) || len(list) == 0 {
				t.Fatalf("error %v (%T), want a non-empty ErrorList", err, err)
			}
			checkErrorList(t, src, list)
			return
		}
		checkComplete(t, m)
		out := Format(m)
		if len(out) > MaxSource {
			// Shortest-form numbers can be longer than written (1e9 prints
			// as 1e+09), so a text near the limit may grow past it.
			return
		}
		m2, err := Parse(out)
		if err != nil {
			t.Fatalf("Format output does not parse: %v\n%s", err, out)
		}
		if again := Format(m2); again != out {
			t.Fatalf("Format not idempotent:\n%s\nthen\n%s", out, again)
		}
		if a, b := dumpModel(m), dumpModel(m2); a != b {
			t.Fatalf("structure changed by Format:\n%s\nthen\n%s", a, b)
		}
	})
}
