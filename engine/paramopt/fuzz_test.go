package paramopt

import (
	"errors"
	"reflect"
	"strings"
	"testing"

	"bellcheck/engine/model"
)

// FuzzLines checks that reading setting lines never panics, that an error
// is an *Error on a line of the text, and that settings read from a valid
// model give options that Write turns into lines reading back the same.
func FuzzLines(f *testing.F) {
	for _, s := range []string{
		"#@ scale s=log\nparam s in [0, inf]\n-s",
		"#@ points x=101 y=33\n#@ box x=-1:2, y=:4\n-x^2-y^2",
		"  #@ box σ=0.5:\nparam σ in [0, 1]\nld_beta(σ, 2, 2)",
		"#@\n-x^2", "#@ scal x=1\n-x^2", "#@ box x=1:0\n-x^2", "#@ points x=1e9\n-x^2",
		"#@ scale x=logit\nparam x in [0, 1]\r\n-x", "\uFEFF#@ box x=-1e308:1e308\n-x^2",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, src string) {
		settings, err := Lines(src)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.Line < 1 || e.Line > strings.Count(src, "\n")+1 || e.Col < 1 || e.Msg == "" {
				t.Fatalf("error %v (%T)", err, err)
			}
			return
		}
		m, err := model.Parse(src)
		if err != nil {
			return
		}
		opts, err := Options(m, settings)
		if err != nil {
			return
		}
		names := make([]string, len(m.Params))
		for i, p := range m.Params {
			names[i] = p.Name
		}
		back, err := Lines(Write(names, opts))
		if err != nil {
			t.Fatalf("Write's lines do not read: %v\n%s", err, Write(names, opts))
		}
		again, err := Options(m, back)
		if err != nil {
			t.Fatalf("Write's lines do not fit the model: %v\n%s", err, Write(names, opts))
		}
		if !reflect.DeepEqual(again, opts) {
			t.Fatalf("options %+v read back as %+v", opts, again)
		}
	})
}
