package ui

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"bellcheck/engine"
)

func TestPushforwardLogIsLogNormal(t *testing.T) {
	// Closed-form moments of the log-normal, checked against gonum's distuv.
	for _, c := range []struct{ m, s float64 }{{0, 0.3}, {1.2, 0.8}, {-2, 0.05}} {
		ln := distuv.LogNormal{Mu: c.m, Sigma: c.s}
		mean, sd := Pushforward(engine.Log, 0, math.Inf(1), c.m, c.s)
		if math.Abs(mean-ln.Mean()) > 1e-12*ln.Mean() || math.Abs(sd-ln.StdDev()) > 1e-10*ln.StdDev() {
			t.Errorf("m=%g s=%g: got %g, %g; distuv %g, %g", c.m, c.s, mean, sd, ln.Mean(), ln.StdDev())
		}
		// A lower bound shifts the mean only.
		m2, sd2 := Pushforward(engine.Log, 3, math.Inf(1), c.m, c.s)
		if math.Abs(m2-3-mean) > 1e-12 || math.Abs(sd2-sd) > 1e-12 {
			t.Errorf("shifted support changed more than the mean")
		}
	}
}

func TestPushforwardLogitSymmetry(t *testing.T) {
	// The logistic-normal with m = 0 is symmetric about 1/2 (identity of the
	// logistic function, 1 - L(u) = L(-u)); on [2, 6] its mean is 4.
	mean, sd := Pushforward(engine.Logit, 2, 6, 0, 1.3)
	if math.Abs(mean-4) > 1e-12 {
		t.Errorf("mean %g, want 4", mean)
	}
	// For small s the delta method gives sd ~ (hi-lo) L'(m) s.
	_, sd = Pushforward(engine.Logit, 0, 1, 0.7, 1e-3)
	l := 1 / (1 + math.Exp(-0.7))
	if want := l * (1 - l) * 1e-3; math.Abs(sd-want) > 1e-3*want {
		t.Errorf("small-s sd %g, want %g", sd, want)
	}
	if sd <= 0 {
		t.Error("sd not positive")
	}
}
