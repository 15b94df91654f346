package engine

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// The methods' keys are the JSON contract of the command line (README,
// "JSON output"): each key names one method, in display order, and the
// Result's fits and plots carry one member per key in that order.
func TestMethodKeys(t *testing.T) {
	want := []string{"laplace", "reverse_kl", "mean_field", "forward_kl"}
	if len(Methods) != len(want) || NumMethods != len(want) {
		t.Fatalf("%d methods, want %d", len(Methods), len(want))
	}
	labels := map[string]bool{}
	for i, m := range Methods {
		if m.Key() != want[i] {
			t.Errorf("method %d has key %q, want %q", i, m.Key(), want[i])
		}
		if got, ok := MethodOf(m.Key()); !ok || got != m {
			t.Errorf("MethodOf(%q) = %v, %v", m.Key(), got, ok)
		}
		if labels[m.Label()] || m.Label() == "" || m.Description() == "" {
			t.Errorf("method %q: label %q repeated or empty, or no description", m.Key(), m.Label())
		}
		labels[m.Label()] = true
	}
	if _, ok := MethodOf("exact"); ok {
		t.Error("MethodOf(exact) found a method")
	}
	if m := Method(NumMethods); m.Valid() || m.Key() == "" || m.Label() == "" {
		t.Errorf("method %d: valid %v, key %q, label %q", int(m), m.Valid(), m.Key(), m.Label())
	}

	var fits Fits
	fits[MeanField] = &Fit{KLqp: math.Inf(1), Converged: true}
	raw, err := json.Marshal(fits)
	if err != nil {
		t.Fatal(err)
	}
	if s := string(raw); !strings.HasPrefix(s, `{"laplace":null,"reverse_kl":null,"mean_field":{`) ||
		!strings.HasSuffix(s, `,"forward_kl":null}`) || !strings.Contains(s, `"kl_q_p":null`) {
		t.Errorf("fits JSON %s", s)
	}
	m1 := Marginal1D{Param: 1, X: []float64{0}, Exact: []float64{math.NaN()}}
	m1.Fits[ReverseKL] = []float64{0.5}
	raw, err = json.Marshal(m1)
	if err != nil {
		t.Fatal(err)
	}
	if s := string(raw); s != `{"param":1,"x":[0],"exact":[null],"laplace":null,"reverse_kl":[0.5],"mean_field":null,"forward_kl":null}` {
		t.Errorf("marginal JSON %s", s)
	}
	raw, err = json.Marshal(Ellipses{ReverseKL: {}, ForwardKL: {}})
	if err != nil {
		t.Fatal(err)
	}
	if s := string(raw); s != `{"forward_kl":[null,null,null],"reverse_kl":[null,null,null]}` {
		t.Errorf("ellipses JSON %s (members sorted by key, as encoding/json sorts a map's)", s)
	}
}

// The record keeps the first reason, and an absence as a whole covers
// every parameter and pair.
func TestAvailabilityRecord(t *testing.T) {
	var av availability
	if !av.present(QuantityMean) || !av.presentAt(QuantityMean, 0) || av.whyAt(QuantityMean, 0) != "" {
		t.Error("an empty record has absences")
	}
	av.dropAt(QuantityMean, 1, CodeNoMean)
	av.dropAt(QuantityMean, 1, CodeOverflow)
	if av.presentAt(QuantityMean, 1) || !av.presentAt(QuantityMean, 0) || av.whyAt(QuantityMean, 1) != CodeNoMean {
		t.Errorf("mean 1: present %v, reason %q", av.presentAt(QuantityMean, 1), av.whyAt(QuantityMean, 1))
	}
	av.dropPair(QuantityCovariance, 0, 2, CodeOverflow)
	if av.presentPair(QuantityCovariance, 2, 0) || !av.presentPair(QuantityCovariance, 0, 1) {
		t.Error("a pair's absence is not symmetric")
	}
	av.dropUnresolved()
	if av.resolved() || av.presentAt(QuantityMean, 0) || av.whyAt(QuantityMean, 1) != CodeUnresolved || av.presentPair(QuantityVariance, 0, 1) {
		t.Error("an unresolved reference leaves moments present")
	}
	for q, codes := range absentReasons {
		if len(codes) == 0 {
			t.Errorf("%s has no reason", q)
		}
	}
}
