package fit

import (
	"context"
	"errors"
	"math"
	"testing"
)

// bimodalRoot solves x = 2 tanh(2x) for x > 0 by bisection: the modes ±x of
// (1/2)N(-2, 1) + (1/2)N(2, 1), where the derivative of
// log(e^{-(x-2)²/2} + e^{-(x+2)²/2}) is -x + 2 tanh(2x) (derived by hand).
func bimodalRoot() float64 {
	lo, hi := 1.0, 3.0
	for i := 0; i < 200; i++ {
		mid := 0.5 * (lo + hi)
		if -mid+2*math.Tanh(2*mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return 0.5 * (lo + hi)
}

func TestFindModesSymmetricBimodal1D(t *testing.T) {
	p := mixture([]float64{0.5, 0.5}, [][]float64{{-2}, {2}}, 1)
	var starts [][]float64
	for x := -4.0; x <= 4; x += 0.5 {
		starts = append(starts, []float64{x}) // includes x = 0, the minimum between the modes
	}
	modes, err := FindModes(context.Background(), p, starts, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 2 {
		t.Fatalf("found %d modes, want 2: %+v", len(modes), modes)
	}
	x0 := bimodalRoot()
	for _, m := range modes {
		if math.Abs(math.Abs(m.X[0])-x0) > 1e-12 {
			t.Errorf("mode at %v, want ±%v", m.X[0], x0)
		}
		if !m.Converged || !m.PositiveDefinite || m.OnBound || m.Flat {
			t.Errorf("mode %+v: want converged, positive definite, interior", m)
		}
	}
	if modes[0].X[0]*modes[1].X[0] >= 0 {
		t.Errorf("modes %v and %v are not on opposite sides", modes[0].X, modes[1].X)
	}
	// Symmetry: equal heights.
	if math.Abs(modes[0].LogDensity-modes[1].LogDensity) > 1e-14 {
		t.Errorf("mode heights %v and %v differ", modes[0].LogDensity, modes[1].LogDensity)
	}

	// A start exactly at the stationary minimum x = 0 leaves along the
	// direction of positive curvature and reaches a mode.
	modes, err = FindModes(context.Background(), p, [][]float64{{0}}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 || math.Abs(math.Abs(modes[0].X[0])-x0) > 1e-12 {
		t.Errorf("from the minimum at 0: %+v, want a mode at ±%v", modes, x0)
	}
}

func TestFindModesSymmetricBimodal2D(t *testing.T) {
	// Mixture of N((-2,-1), 0.8² I) and N((2,1), 0.8² I) with equal weights: by
	// symmetry the modes are at ±x with x on the line through the centres.
	p := mixture([]float64{0.5, 0.5}, [][]float64{{-2, -1}, {2, 1}}, 0.8)
	starts := [][]float64{{-3, -3}, {-1, -2}, {0.5, -2}, {2, -1}, {3, 0}, {-3, 1}, {-1, 2}, {1, 2}, {2.5, 2.5}, {0.1, 0.05}}
	modes, err := FindModes(context.Background(), p, starts, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 2 {
		t.Fatalf("found %d modes from %d starts, want 2: %+v", len(modes), len(starts), modes)
	}
	a, b := modes[0].X, modes[1].X
	if math.Abs(a[0]+b[0]) > 1e-10 || math.Abs(a[1]+b[1]) > 1e-10 {
		t.Errorf("modes %v and %v are not symmetric about 0", a, b)
	}
	if math.Abs(a[0]-2*a[1]) > 1e-10 {
		t.Errorf("mode %v is off the line y = x/2 through the centres", a)
	}
	// From the saddle at the origin (gradient zero by symmetry) the search
	// leaves along the direction of positive curvature and reaches a mode.
	from0, err := FindModes(context.Background(), p, [][]float64{{0, 0}}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(from0) != 1 || !from0[0].PositiveDefinite || math.Abs(math.Abs(from0[0].X[0])-math.Abs(a[0])) > 1e-10 {
		t.Errorf("from the saddle: %+v, want a mode at ±%v", from0, a)
	}
	for _, m := range modes {
		// decrementTol 1e-20 allows |g| up to about 1e-10/sd (sd = 0.8).
		if !m.PositiveDefinite || !m.Converged || m.GradNorm > 1e-9 {
			t.Errorf("mode %+v", m)
		}
	}
}

func TestFindModesBanana(t *testing.T) {
	// The twisted Gaussian -x²/200 - (y + 0.05 x² - 5)²/2 has its one mode at
	// (0, 5), where the Hessian is diag(-1/100, -1) (by hand).
	starts := [][]float64{{-20, -10}, {15, 8}, {0, 0}, {5, -3}, {-8, 4}}
	modes, err := FindModes(context.Background(), banana(0.05), starts, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 {
		t.Fatalf("found %d modes, want 1: %+v", len(modes), modes)
	}
	m := modes[0]
	if math.Abs(m.X[0]) > 1e-8 || math.Abs(m.X[1]-5) > 1e-8 || math.Abs(m.LogDensity) > 1e-14 {
		t.Errorf("mode %v (log p %v), want (0, 5) (0)", m.X, m.LogDensity)
	}
	if math.Abs(m.Hess.At(0, 0)+0.01) > 1e-9 || math.Abs(m.Hess.At(1, 1)+1) > 1e-12 || math.Abs(m.Hess.At(0, 1)) > 1e-9 {
		t.Errorf("Hessian %v, want diag(-0.01, -1)", m.Hess)
	}
}

func TestFindModesOnBound(t *testing.T) {
	// log p = -x on x >= 0: the maximum is pinned at the bound x = 0.
	modes, err := FindModes(context.Background(), expDecay(), [][]float64{{1}, {3.5}, {-2}}, []float64{0}, []float64{math.Inf(1)})
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 {
		t.Fatalf("found %d modes, want 1: %+v", len(modes), modes)
	}
	m := modes[0]
	if m.X[0] != 0 || !m.OnBound || m.PositiveDefinite || m.GradNorm != 0 || !m.Converged {
		t.Errorf("mode %+v: want x = 0 on the bound, not positive definite", m)
	}
	if _, err := Laplace(m); !errors.Is(err, ErrOnBound) {
		t.Errorf("Laplace at a mode on the bound: err = %v, want ErrOnBound", err)
	}

	// 2-D: log p = -x - (y-1)²/2 on the box [0, 5] × [-3, 3]. The mode is
	// (0, 1); only x is pinned, and the free coordinate converges.
	p := newFn(2, func(v, g, h []float64) float64 {
		g[0], g[1] = -1, -(v[1] - 1)
		h[0], h[1], h[2], h[3] = 0, 0, 0, -1
		return -v[0] - (v[1]-1)*(v[1]-1)/2
	})
	modes, err = FindModes(context.Background(), p, [][]float64{{2, -2}, {4, 2.5}}, []float64{0, -3}, []float64{5, 3})
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 || modes[0].X[0] != 0 || math.Abs(modes[0].X[1]-1) > 1e-12 || !modes[0].OnBound {
		t.Errorf("modes %+v, want one at (0, 1) on the bound", modes)
	}

	// A mode near but not on the bound is not flagged: -(x-1)² on [0, 10],
	// also from a start on the bound with the gradient pointing inwards.
	modes, err = FindModes(context.Background(), gaussianTarget([]float64{1}, []float64{2}, 0), [][]float64{{5}, {0}}, []float64{0}, []float64{10})
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 || modes[0].OnBound || math.Abs(modes[0].X[0]-1) > 1e-14 {
		t.Errorf("interior mode %+v flagged on the bound", modes)
	}
}

func TestFindModesFlatQuartic(t *testing.T) {
	// exp(-x^4/4): the mode 0 has zero curvature. Newton creeps towards it;
	// the mode is reported, but not as positive definite.
	modes, err := FindModes(context.Background(), quartic(), [][]float64{{1}, {-0.5}, {2}}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(modes) != 1 {
		t.Fatalf("found %d modes, want 1 (merged): %+v", len(modes), modes)
	}
	m := modes[0]
	if math.Abs(m.X[0]) > 1e-4 || !m.Flat || m.PositiveDefinite {
		t.Errorf("quartic mode %+v: want near 0, flat, not positive definite", m)
	}
}

func TestFindModesErrors(t *testing.T) {
	ctx := context.Background()
	nanAt := oneD(func(x float64) (float64, float64, float64) {
		if x < 0 {
			return math.NaN(), 0, 0
		}
		return -x * x, -2 * x, -2
	})
	if _, err := FindModes(ctx, nanAt, [][]float64{{-1}}, nil, nil); !errors.Is(err, ErrNonFinite) {
		t.Errorf("NaN at the start: err = %v, want ErrNonFinite", err)
	}
	if _, err := FindModes(ctx, powerExp(2), [][]float64{{-1}, {-2}}, nil, nil); !errors.Is(err, ErrNoFiniteStart) {
		t.Errorf("all starts outside the support: err = %v, want ErrNoFiniteStart", err)
	}
	// A start outside the support among good ones is skipped.
	if modes, err := FindModes(ctx, powerExp(2), [][]float64{{-1}, {1}}, nil, nil); err != nil || len(modes) != 1 || math.Abs(modes[0].X[0]-2) > 1e-12 {
		t.Errorf("one start outside the support: %+v, %v; want the mode 2", modes, err)
	}
	bad := []struct {
		name   string
		starts [][]float64
		lo, hi []float64
	}{
		{"no starts", nil, nil, nil},
		{"short start", [][]float64{{}}, nil, nil},
		{"empty box", [][]float64{{1}}, []float64{2}, []float64{1}},
		{"NaN bound", [][]float64{{1}}, []float64{math.NaN()}, nil},
		{"short box", [][]float64{{1}}, []float64{}, nil},
	}
	for _, c := range bad {
		if _, err := FindModes(ctx, quartic(), c.starts, c.lo, c.hi); !errors.Is(err, ErrBadInput) {
			t.Errorf("%s: err = %v, want ErrBadInput", c.name, err)
		}
	}
	if _, err := FindModes(ctx, quartic(), [][]float64{{math.Inf(1)}}, nil, nil); !errors.Is(err, ErrNonFinite) {
		t.Errorf("infinite start: err = %v, want ErrNonFinite", err)
	}
	cancelled, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := FindModes(cancelled, quartic(), [][]float64{{1}}, nil, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: err = %v, want context.Canceled", err)
	}
}
