package paramopt

import (
	"strings"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// addVary checks a vary setting against the model (a scalar constant,
// model.Model.Constant) and adds it to the options; a later setting for
// the same constant replaces an earlier one.
func addVary(o *engine.Options, m *model.Model, s Setting) error {
	if _, err := m.Constant(s.Param); err != nil {
		return s.errorf("%s=%s: %s", s.Param, s.Value, strings.TrimPrefix(err.Error(), "model: "))
	}
	v := engine.Vary{Name: s.Param, Lo: *s.Lo, Hi: *s.Hi}
	for i := range o.Vary {
		if o.Vary[i].Name == v.Name {
			o.Vary[i] = v
			return nil
		}
	}
	o.Vary = append(o.Vary, v)
	return nil
}
