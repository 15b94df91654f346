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

// TestDefinitionsSameAsAttached checks that the table written as model text
// gives the model the same vectors as attaching it (identity), values bit
// for bit, including ones that need all 17 digits.
func TestDefinitionsSameAsAttached(t *testing.T) {
	src := "a,b\n0.1,1e-300\n-2.5,0.30000000000000004\n3,\n4,\n5,\n6,\n7,\n8,\n9,\n10,\n11,\n"
	tb, err := Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	text := tb.Definitions()
	const body = "-sum((a - m)^2) - sum(b)"
	inline, err := model.Parse(text + body)
	if err != nil {
		t.Fatalf("%v\n%s", err, text)
	}
	attached, err := model.ParseWith(body, tb.Vectors())
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range tb.Columns {
		vec, ok := inline.Defs[i].Value.(*model.Vector)
		if !ok || inline.Defs[i].Name != c.Name || len(vec.Elems) != len(c.Values) {
			t.Fatalf("definition %d: %s is not the column %s", i, inline.Defs[i].Name, c.Name)
		}
		att := attached.Defs[i].Value.(*model.Vector)
		for j, e := range vec.Elems {
			sign := 1.0
			if u, neg := e.(*model.Unary); neg && u.Op == '-' {
				sign, e = -1, u.X
			}
			v := sign * e.(*model.Number).Value
			w := att.Elems[j].(*model.Number).Value
			if math.Float64bits(v) != math.Float64bits(c.Values[j]) || math.Float64bits(w) != math.Float64bits(v) {
				t.Errorf("%s[%d]: text %v, attached %v, read %v", c.Name, j, v, w, c.Values[j])
			}
		}
	}
}
