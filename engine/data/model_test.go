package data

import (
	"math"
	"testing"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// TestTableInModel pastes two columns, attaches them to a model and
// evaluates its log-density against the closed form of the Poisson
// log-likelihood, sum_i (k_i log(r t_i) - r t_i - lgamma(k_i + 1)), computed
// with Go's math.Lgamma.
func TestTableInModel(t *testing.T) {
	tb, err := Parse("k\tt\n3\t1\n5\t2.5\n0\t0.5\n7\t2\n")
	if err != nil {
		t.Fatal(err)
	}
	m, err := model.ParseWith("param r in [0, inf]\nsum(ld_poisson(k, r * t))", tb.Vectors())
	if err != nil {
		t.Fatal(model.Detail(err, ""))
	}
	ev, err := eval.Compile(m)
	if err != nil {
		t.Fatal(err)
	}
	k := []float64{3, 5, 0, 7}
	tt := []float64{1, 2.5, 0.5, 2}
	for _, r := range []float64{0.3, 1.7, 4} {
		want := 0.0
		for i := range k {
			lg, _ := math.Lgamma(k[i] + 1)
			want += k[i]*math.Log(r*tt[i]) - r*tt[i] - lg
		}
		if got := ev.LogDensity([]float64{r}); math.Abs(got-want) > 1e-12*math.Abs(want) {
			t.Errorf("r=%g: log-density %.15g, want %.15g", r, got, want)
		}
	}
}
