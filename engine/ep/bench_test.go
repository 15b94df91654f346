package ep

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"bellcheck/engine/eval"
	"bellcheck/engine/model"
)

// logistic200 is a 2-D logistic regression on 200 invented observations:
// x evenly spaced on [-3, 3], y drawn with P(y = 1) = logistic(0.3 + 1.2 x)
// from a fixed random stream, N(0, 5^2) priors.
func logistic200() string {
	r := rand.New(rand.NewPCG(14, 200))
	var xs, ys []string
	for i := 0; i < 200; i++ {
		x := -3 + 6*float64(i)/199
		y := 0
		if r.Float64() < 1/(1+math.Exp(-(0.3+1.2*x))) {
			y = 1
		}
		xs = append(xs, fmt.Sprintf("%.4f", x))
		ys = append(ys, fmt.Sprint(y))
	}
	return "x = [" + strings.Join(xs, ", ") + "]\ny = [" + strings.Join(ys, ", ") + "]\n" +
		"ld_normal(a, 0, 5) + ld_normal(b, 0, 5) + sum(ld_binomial(y, 1, logistic(a + b*x)))"
}

// BenchmarkEPLogistic200 runs EP on the factors of the 200-observation
// logistic regression (target: 20 ms natively).
func BenchmarkEPLogistic200(b *testing.B) {
	fs, _ := splitModel(b, logistic200())
	for b.Loop() {
		res, err := Run(context.Background(), fs, nil)
		if err != nil || !res.Converged {
			b.Fatalf("ep: %v %v", err, res)
		}
	}
}

// BenchmarkEPLogistic200Split also splits the model into its factors.
func BenchmarkEPLogistic200Split(b *testing.B) {
	m, err := model.Parse(logistic200())
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		fs, err := eval.SplitFactors(m)
		if err != nil {
			b.Fatal(err)
		}
		res, err := Run(context.Background(), fs, nil)
		if err != nil || !res.Converged {
			b.Fatalf("ep: %v %v", err, res)
		}
	}
}

// TestLogistic200 checks the benchmark's run: converged, one rank-one site
// per observation, and the fixed point's moment gap small.
func TestLogistic200(t *testing.T) {
	fs, _ := splitModel(t, logistic200())
	res := run(t, fs, nil)
	t.Logf("%d sites (%d one-dimensional), %d exact, %d sweeps, change %.2g, gap %.2g, quadrature error %.2g, mean %v",
		len(res.Sites), res.OneDim, res.Exact, res.Sweeps, res.Change, res.MomentGap, res.QuadratureError, res.Mean)
	if !res.Converged || len(res.Sites) != 200 || res.OneDim != 200 || res.MomentGap > 1e-8 {
		t.Errorf("converged %v, %d sites, %d one-dimensional, gap %g", res.Converged, len(res.Sites), res.OneDim, res.MomentGap)
	}
}
