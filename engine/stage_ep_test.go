package engine

import (
	"strings"
	"testing"
)

// The normal mean and sd from five readings with a 1/s prior (the
// reference case normal_sd_n5): EP has one factor of (m, s) per reading.
// With s fitted on its bounded scale the tilted distributions are cut off
// at s = 0 and the quadrature warning names s and the log scale; on the log
// scale EP converges with a quadrature error below the warning's 1e-4.
func TestEPBoundedScaleHint(t *testing.T) {
	src := "y = [4.1, 5.3, 4.8, 5.9, 5.0]\nparam m\nparam s in [0, inf]\n-log(s) + sum(ld_normal(y, m, s))\n"
	warned := func(res *Result) *Diagnostic {
		for i, d := range res.Diagnostics {
			if d.Code == CodeEPQuadrature && d.Severity == SeverityWarning {
				return &res.Diagnostics[i]
			}
		}
		return nil
	}
	res := analyseSource(t, src, Options{})
	d := warned(res)
	if d == nil {
		t.Fatalf("no EP quadrature warning on the bounded scale: %+v", res.Diagnostics)
	}
	if !strings.Contains(d.Message, "With s fitted on its bounded scale") || !strings.Contains(d.Message, "log or logit scale") {
		t.Errorf("the warning does not point to the log scale: %q", d.Message)
	}
	res = analyseSource(t, src, Options{Params: []ParamOptions{{}, {Scale: Log}}})
	if d := warned(res); d != nil {
		t.Errorf("EP warned on the log scale: %q", d.Message)
	}
	if res.Fits[EP] == nil {
		t.Errorf("no EP fit on the log scale: %+v", res.Diagnostics)
	}
}
