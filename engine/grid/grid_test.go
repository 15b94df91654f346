package grid

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"bellcheck/engine/internal/targettest"
)

var ctx = context.Background()

// Correlated Gaussian targets in 1 to 4 dimensions: log Z is the log of the
// scale we multiplied by, the moments are the parameters, the quantiles
// those of the normal marginals (gonum's distuv.Normal).
func TestGaussianTargets(t *testing.T) {
	cases := []struct {
		name    string
		mean    []float64
		cov     [][]float64
		tolLogZ float64
		tolMom  float64 // relative to the sd
		tolQ    float64 // in sds
	}{
		{"1-D", []float64{1.5}, [][]float64{{4}}, 1e-9, 1e-9, 1e-6},
		{"2-D", []float64{-1, 2}, [][]float64{{1, 0.8}, {0.8, 2}}, 1e-9, 1e-9, 1e-4},
		{"3-D", []float64{0, 1, -2}, [][]float64{{1, 0.5, 0.2}, {0.5, 2, -0.3}, {0.2, -0.3, 0.5}}, 1e-8, 1e-8, 2e-3},
		{"4-D", []float64{0, 1, -2, 3}, [][]float64{{1, 0.5, 0.2, 0}, {0.5, 2, -0.3, 0.1}, {0.2, -0.3, 0.5, 0}, {0, 0.1, 0, 1.5}}, 1e-8, 1e-8, 1e-2},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d := len(c.mean)
			sd := make([]float64, d)
			for i := range sd {
				sd[i] = math.Sqrt(c.cov[i][i])
			}
			p := gaussian(c.mean, c.cov, 3.25)
			g, err := Evaluate(ctx, p, boxAround(c.mean, sd, 7.5), Settings{})
			if err != nil {
				t.Fatal(err)
			}
			st := g.Stats
			if !close(st.LogZ, 3.25, c.tolLogZ) {
				t.Errorf("log Z %.12g, want 3.25", st.LogZ)
			}
			if st.LogZErr > 1e-6 {
				t.Errorf("log Z error estimate %g", st.LogZErr)
			}
			for i := 0; i < d; i++ {
				if !close(st.Fitting.Mean[i], c.mean[i], c.tolMom*sd[i]) {
					t.Errorf("mean[%d] %.12g, want %g", i, st.Fitting.Mean[i], c.mean[i])
				}
				for j := 0; j < d; j++ {
					if !close(st.Fitting.Cov[i][j], c.cov[i][j], c.tolMom*sd[i]*sd[j]) {
						t.Errorf("cov[%d][%d] %.12g, want %g", i, j, st.Fitting.Cov[i][j], c.cov[i][j])
					}
				}
				n := distuv.Normal{Mu: c.mean[i], Sigma: sd[i]}
				for q, pr := range []float64{0.025, 0.5, 0.975} {
					if want := n.Quantile(pr); !close(st.Fitting.Quantiles[i][q], want, c.tolQ*sd[i]) {
						t.Errorf("quantile %g of %d: %.8g, want %.8g", pr, i, st.Fitting.Quantiles[i][q], want)
					}
				}
				// A normal marginal has no skewness or excess kurtosis.
				if math.Abs(st.Fitting.Skewness[i]) > 1e-6 || math.Abs(st.Fitting.ExcessKurtosis[i]) > 1e-6 {
					t.Errorf("skewness %g, excess kurtosis %g", st.Fitting.Skewness[i], st.Fitting.ExcessKurtosis[i])
				}
				if st.EdgeMass[i][0] > 1e-10 || st.EdgeMass[i][1] > 1e-10 {
					t.Errorf("edge mass %v at 7.5 sd", st.EdgeMass[i])
				}
			}
			// Entropy of the normal: d/2 log(2 pi e) + 1/2 log det.
			_ = st.ExpectedLogP
		})
	}
}

// A density cut off by a bound of its support, nonzero there: Beta(1, 3)
// on [0, 1] has density 3(1-x)^2; mean 1/4, variance 3/80, normaliser 1/3
// (closed forms of the beta distribution); the end corrections keep the
// rule accurate, and the half-resolution estimate bounds the error.
func TestTruncatedAtBound(t *testing.T) {
	p := &targettest.Func{D: 1, LogP: func(x []float64) float64 {
		if x[0] < 0 || x[0] > 1 {
			return math.Inf(-1)
		}
		return 2 * math.Log1p(-x[0])
	}}
	g, err := Evaluate(ctx, p, Box{Lo: []float64{0}, Hi: []float64{1}}, Settings{Points: []int{101}})
	if err != nil {
		t.Fatal(err)
	}
	st := g.Stats
	if err := math.Abs(st.LogZ - math.Log(1.0/3)); err > 1e-9 || err > st.LogZErr*1.01+1e-15 {
		t.Errorf("log Z %.12g, want %.12g (error estimate %g)", st.LogZ, math.Log(1.0/3), st.LogZErr)
	}
	// The rule is of order h^4 = 1e-8 here; the half-resolution estimate
	// must cover the actual error.
	for _, c := range []struct{ got, want, est float64 }{
		{st.Fitting.Mean[0], 0.25, st.Fitting.MeanErr[0]},
		{st.Fitting.Cov[0][0], 3.0 / 80, st.Fitting.CovErr[0][0]},
	} {
		if e := math.Abs(c.got - c.want); e > 1e-7 || e > c.est {
			t.Errorf("moment %.12g, want %.12g (error estimate %g)", c.got, c.want, c.est)
		}
	}
	// Median of Beta(1,3): 1 - 2^(-1/3).
	if q := st.Fitting.Quantiles[0][1]; !close(q, 1-math.Pow(2, -1.0/3), 1e-6) {
		t.Errorf("median %.9g, want %.9g", q, 1-math.Pow(2, -1.0/3))
	}
	if st.EdgeMass[0][0] < 1e-3 {
		t.Errorf("edge mass at the bound %g, want large", st.EdgeMass[0][0])
	}
}

func TestNonFiniteAndCancel(t *testing.T) {
	p := &targettest.Func{D: 2, LogP: func(x []float64) float64 {
		if x[0] > 0.5 && x[1] > 0.5 {
			return math.NaN()
		}
		return -(x[0]*x[0] + x[1]*x[1]) / 2
	}}
	g, err := Evaluate(ctx, p, Box{Lo: []float64{-8, -8}, Hi: []float64{8, 8}}, Settings{Points: []int{161, 161}})
	if err != nil {
		t.Fatal(err)
	}
	// Nodes with x > 0.5 and y > 0.5: 75 of 161 along each axis.
	if want := 75.0 * 75 / (161 * 161); !close(g.Stats.NonFinite, want, 1e-12) {
		t.Errorf("non-finite fraction %g, want %g", g.Stats.NonFinite, want)
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Evaluate(cctx, p, Box{Lo: []float64{-8, -8}, Hi: []float64{8, 8}}, Settings{}); err != context.Canceled {
		t.Errorf("cancelled: err %v", err)
	}
	if _, err := Evaluate(ctx, p, Box{Lo: []float64{1, -8}, Hi: []float64{1, 8}}, Settings{}); err == nil {
		t.Error("empty box accepted")
	}
}

// The box search's exploration grids keep only log Z and the marginals
// (Settings.marginalsOnly): those must be the full summary's, bit for bit,
// and the marginals must be the normal ones (gonum's distuv.Normal).
func TestMarginalsOnlySummary(t *testing.T) {
	mean := []float64{0, 1, -2}
	cov := [][]float64{{1, 0.5, 0.2}, {0.5, 2, -0.3}, {0.2, -0.3, 0.5}}
	sd := []float64{1, math.Sqrt2, math.Sqrt(0.5)}
	p := gaussian(mean, cov, 0.5)
	box := boxAround(mean, sd, 7.5)
	full, err := Evaluate(ctx, p, box, Settings{})
	if err != nil {
		t.Fatal(err)
	}
	light, err := Evaluate(ctx, p, box, Settings{marginalsOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	if light.Stats.LogZ != full.Stats.LogZ {
		t.Errorf("log Z %.17g, the full summary's %.17g", light.Stats.LogZ, full.Stats.LogZ)
	}
	if !math.IsNaN(light.Stats.LogZErr) {
		t.Errorf("log Z error %g: a light summary has none", light.Stats.LogZErr)
	}
	for k := range mean {
		lm, fm := light.Stats.Marginals[k], full.Stats.Marginals[k]
		n := distuv.Normal{Mu: mean[k], Sigma: sd[k]}
		for i, v := range lm.Density {
			if v != fm.Density[i] || lm.Mass[i] != fm.Mass[i] {
				t.Fatalf("axis %d node %d: density %g mass %g, the full summary's %g %g", k, i, v, lm.Mass[i], fm.Density[i], fm.Mass[i])
			}
			if want := n.Prob(full.Nodes[k][i]); math.Abs(v-want) > 1e-8 {
				t.Errorf("axis %d at %g: density %g, want %g", k, full.Nodes[k][i], v, want)
			}
		}
	}
}
