package eval

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/model"
)

// valueOf compiles MODEL followed by the density EXPR and returns its
// value at x: a way to read one element of a trajectory.
func valueOf(t *testing.T, model, expr string, x []float64) float64 {
	t.Helper()
	return compileSrc(t, model+"\n"+expr).LogDensity(x)
}

// The logistic map x <- r x (1 - x), twelve steps, against a plain Go loop
// (the map's definition).
func TestLogisticMapAgainstLoop(t *testing.T) {
	obs := []float64{0.31, 0.62, 0.7, 0.5, 0.81, 0.42, 0.9, 0.3, 0.66, 0.71, 0.58, 0.77}
	src := fmt.Sprintf(`obs = [%s]
repeat 12
  x = x0 then r*x*(1 - x)
end
cost sum((x - obs)^2)/0.02`, joinFloats(obs))
	ev := compileSrc(t, src)
	for _, p := range [][]float64{{0.2, 3.7}, {0.5, 2.9}, {0.91, 3.99}} {
		x, r := p[0], p[1]
		want := 0.0
		for k := 0; k < 12; k++ {
			x = r * x * (1 - x)
			want += (x - obs[k]) * (x - obs[k])
		}
		want = -want / 0.02
		if got := ev.LogDensity(p); !near(got, want, 1e-13, 1) {
			t.Errorf("logistic map at %v: %v, loop %v", p, got, want)
		}
	}
}

// A recurrence that uses data at the current step and the step number,
// with a quantity of the step, against a plain Go loop.
func TestRecurrenceAgainstLoop(t *testing.T) {
	u := []float64{1, 0, -1, 2, 0.5, 0.25, -0.5, 1.5, 0, 1}
	y := []float64{0.9, 1.2, 0.4, 1.9, 1.7, 1.3, 0.6, 1.6, 1.1, 1.5}
	src := fmt.Sprintf(`u = [%s]
y = [%s]
repeat 10 as k
  gain = b/(1 + 0.1*k)
  s = a then 0.8*s + gain*u[k]
  c = 0 then c + s^2
end
sum(ld_normal(y, s, 0.3)) - c[10]/100`, joinFloats(u), joinFloats(y))
	ev := compileSrc(t, src)
	for _, p := range [][]float64{{0.5, 1.1}, {-1, 0.3}} {
		a, b := p[0], p[1]
		s, c, want := a, 0.0, 0.0
		for k := 1; k <= 10; k++ {
			gain := b / (1 + 0.1*float64(k))
			s, c = 0.8*s+gain*u[k-1], c+s*s // both from the previous state
			z := (y[k-1] - s) / 0.3
			want += -z*z/2 - math.Log(0.3) - math.Log(2*math.Pi)/2
		}
		want -= c / 100
		if got := ev.LogDensity(p); !near(got, want, 1e-12, 1) {
			t.Errorf("recurrence at %v: %v, loop %v", p, got, want)
		}
	}
}

// Indexing and functions: elements, vectors of positions, slices and an
// expanded function against the same sums in Go.
func TestIndexingAndFunctions(t *testing.T) {
	src := `y = [2, 3, 5, 7, 11]
idx = [1, 3, 5]
sq(u) = u^2
dev(u, m) = sq(u - m)
-sum(dev(y[idx], a)) + y[2]*b - sum(y[2:4])*a + y[len(y)]`
	ev := compileSrc(t, src)
	a, b := 1.5, -0.5
	want := -((2-a)*(2-a) + (5-a)*(5-a) + (11-a)*(11-a)) + 3*b - (3+5+7)*a + 11
	if got := ev.LogDensity([]float64{a, b}); !near(got, want, 1e-14, 1) {
		t.Errorf("got %v, want %v", got, want)
	}
	fdCheck(t, "indexing", ev, []float64{a, b}, 1e-6)
}

// A linear system dx/dt = A x (a damped oscillator) integrated by the ode
// block, against the closed form x(t) = exp(A t) x(0) with gonum's mat.Exp
// as the independent reference.
func TestLinearODEAgainstMatrixExponential(t *testing.T) {
	times := []float64{0.5, 1, 1.7, 2.5, 4}
	model := fmt.Sprintf(`tobs = [%s]
param w
param z
ode tobs from 0 substeps 40
  x = 1 rate v
  v = 0.5 rate -w^2*x - 2*z*w*v
end`, joinFloats(times))
	w, z := 1.3, 0.2
	A := mat.NewDense(2, 2, []float64{0, 1, -w * w, -2 * z * w})
	for j, tj := range times {
		var At, E mat.Dense
		At.Scale(tj, A)
		E.Exp(&At)
		wantX := E.At(0, 0)*1 + E.At(0, 1)*0.5
		wantV := E.At(1, 0)*1 + E.At(1, 1)*0.5
		gotX := valueOf(t, model, fmt.Sprintf("x[%d] + 0*w*z", j+1), []float64{w, z})
		gotV := valueOf(t, model, fmt.Sprintf("v[%d] + 0*w*z", j+1), []float64{w, z})
		// RK4 with h = t/40 (at most 0.1) has a global error near 1e-6 here.
		if !near(gotX, wantX, 1e-6, 1) || !near(gotV, wantV, 1e-6, 1) {
			t.Errorf("t = %g: (%v, %v), matrix exponential (%v, %v)", tj, gotX, gotV, wantX, wantV)
		}
	}
}

// The classical Runge-Kutta method is of order four (Butcher, Numerical
// Methods for Ordinary Differential Equations): on dx/dt = -x cos(t),
// whose solution is x0 exp(-sin t), halving the step divides the error at
// t = 2 by about 2^4 = 16.
func TestRK4FourthOrder(t *testing.T) {
	x0 := 1.2
	want := x0 * math.Exp(-math.Sin(2))
	errAt := func(sub int) float64 {
		src := fmt.Sprintf("ode 2 from 0 substeps %d as t\n  x = a rate -x*cos(t)\nend\nx[1]", sub)
		return math.Abs(compileSrc(t, src).LogDensity([]float64{x0}) - want)
	}
	prev := errAt(8)
	for _, sub := range []int{16, 32, 64} {
		e := errAt(sub)
		ratio := prev / e
		if ratio < 14 || ratio > 18 {
			t.Errorf("substeps %d: error %.3g, ratio %.3g to the previous; fourth order gives about 16", sub, e, ratio)
		}
		prev = e
	}
}

// lorenz is the Lorenz-63 vector field (Lorenz 1963) with sigma 10, rho 28,
// beta 8/3.
func lorenz(s [3]float64) [3]float64 {
	return [3]float64{10 * (s[1] - s[0]), s[0]*(28-s[2]) - s[1], s[0]*s[1] - 8.0/3*s[2]}
}

// rk4Lorenz integrates Lorenz-63 from s over a time span with n classical
// Runge-Kutta steps: an implementation independent of the compiler's.
func rk4Lorenz(s [3]float64, span float64, n int) [3]float64 {
	h := span / float64(n)
	add := func(a, b [3]float64, c float64) [3]float64 {
		return [3]float64{a[0] + c*b[0], a[1] + c*b[1], a[2] + c*b[2]}
	}
	for i := 0; i < n; i++ {
		k1 := lorenz(s)
		k2 := lorenz(add(s, k1, h/2))
		k3 := lorenz(add(s, k2, h/2))
		k4 := lorenz(add(s, k3, h))
		for c := 0; c < 3; c++ {
			s[c] += h / 6 * (k1[c] + 2*k2[c] + 2*k3[c] + k4[c])
		}
	}
	return s
}

const lorenzModel = `ode tobs from 0 substeps %d
  x = x0 rate 10*(y - x)
  y = y0 rate x*(28 - z) - y
  z = z0 rate x*y - 8/3*z
end`

// Lorenz-63 through the ode block against an independent RK4 in the test
// at a step 50 times finer.
func TestLorenzAgainstFineRK4(t *testing.T) {
	times := []float64{0.1, 0.25, 0.4, 0.6, 0.8, 1}
	model := fmt.Sprintf("tobs = [%s]\nparam x0\nparam y0\nparam z0\n", joinFloats(times)) + fmt.Sprintf(lorenzModel, 100)
	start := []float64{1, 1, 20}
	fine := [3]float64{1, 1, 20}
	same := fine
	prev := 0.0
	for j, tj := range times {
		fine = rk4Lorenz(fine, tj-prev, 5000)
		same = rk4Lorenz(same, tj-prev, 100)
		prev = tj
		for c, name := range []string{"x", "y", "z"} {
			got := valueOf(t, model, fmt.Sprintf("%s[%d] + 0*(x0 + y0 + z0)", name, j+1), start)
			// Steps of 0.001 to 0.002 against 50 times finer: RK4's error
			// at the coarser step, amplified by the flow over one time unit.
			if !near(got, fine[c], 1e-6, 1) {
				t.Errorf("t = %g, %s: %v, fine RK4 %v", tj, name, got, fine[c])
			}
			// The same steps: the same numbers up to rounding.
			if !near(got, same[c], 1e-11, 1) {
				t.Errorf("t = %g, %s: %v, RK4 at the same step %v", tj, name, got, same[c])
			}
		}
	}
}

// lorenzWindow is the cost of Lorenz-63 observed in x at n times 0.01
// apart, with a background term; it is what the benchmark evaluates.
func lorenzWindow(n int) string { return lorenzWindowStep(n, 0.01) }

// lorenzWindowStep is lorenzWindow with observations dt apart.
func lorenzWindowStep(n int, dt float64) string {
	times := make([]float64, n)
	obs := make([]float64, n)
	s := [3]float64{1.5, -0.8, 22}
	for i := range times {
		times[i] = dt * float64(i+1)
		s = rk4Lorenz(s, dt, 1)
		obs[i] = s[0] + 0.3*math.Sin(float64(7*i)) // invented observations
	}
	return fmt.Sprintf("tobs = [%s]\nxo = [%s]\nparam x0\nparam y0\nparam z0\n", joinFloats(times), joinFloats(obs)) +
		fmt.Sprintf(lorenzModel, 1) + "\ncost ((x0 - 1)^2 + (y0 + 1)^2 + (z0 - 21)^2)/8 + sum((x - xo)^2)/(2*0.3^2)"
}

// lorenzCostLoop is lorenzWindow's cost written as a plain Go loop.
func lorenzCostLoop(p []float64, xo []float64) float64 {
	c := ((p[0]-1)*(p[0]-1) + (p[1]+1)*(p[1]+1) + (p[2]-21)*(p[2]-21)) / 8
	s := [3]float64{p[0], p[1], p[2]}
	for i := range xo {
		s = rk4Lorenz(s, 0.01, 1)
		d := s[0] - xo[i]
		c += d * d / (2 * 0.3 * 0.3)
	}
	return -c
}

// Exact gradient and Hessian through 200 steps, against finite differences
// (gonum's diff/fd, in fdCheck); block evaluation equals point evaluation
// and allocates nothing. (Over 200 steps of 0.01 the Lorenz cost bends so
// sharply that central differences at fdCheck's step are off in the fourth
// digit; steps of 0.002 keep them accurate.)
func TestDerivativesThrough200Steps(t *testing.T) {
	evFD := compileSrc(t, lorenzWindowStep(200, 0.002))
	for _, p := range [][]float64{{1.5, -0.8, 22}, {1, -1, 21}} {
		fdCheck(t, "lorenz 200", evFD, p, 2e-5)
	}
	ev := compileSrc(t, lorenzWindow(200))
	osc := `param w in [0, 10]
param c
dt = 0.05
repeat 200 as k
  x = 1 then x + dt*v
  v = 0 then v - dt*(w^2*x + 2*c*v)
end
-sum((x - 0.5)^2) - sum(v^2)/10`
	ev2 := compileSrc(t, osc)
	fdCheck(t, "oscillator 200", ev2, []float64{1.4, 0.1}, 1e-5)
	pts := [][]float64{{1.5, -0.8, 22}, {0, 0, 0}, {math.NaN(), 1, 1}, {1, math.Inf(1), 2}, {-3, 4, 30}}
	blockMatches(t, "lorenz 200", ev, pts)
	cols := [][]float64{{1, 2, 3}, {0, 1, -1}, {20, 21, 22}}
	out := make([]float64, 3)
	if n := testing.AllocsPerRun(5, func() { ev.LogDensityBlock(cols, out) }); n != 0 {
		t.Errorf("block evaluation allocates %v times", n)
	}
	x, g, h := []float64{1, -1, 21}, make([]float64, 3), make([]float64, 9)
	if n := testing.AllocsPerRun(5, func() { ev.LogDensity(x) }); n != 0 {
		t.Errorf("point evaluation allocates %v times", n)
	}
	if n := testing.AllocsPerRun(5, func() { ev.LogDensityDerivs(x, g, h) }); n != 0 {
		t.Errorf("evaluation with derivatives allocates %v times", n)
	}
}

// The compiled cost equals the plain Go loop's.
func TestLorenzCostAgainstLoop(t *testing.T) {
	src := lorenzWindow(50)
	ev := compileSrc(t, src)
	xo := dataVector(t, src, "xo")
	for _, p := range [][]float64{{1.5, -0.8, 22}, {-2, 3, 15}} {
		if got, want := ev.LogDensity(p), lorenzCostLoop(p, xo); !near(got, want, 1e-11, 1) {
			t.Errorf("at %v: %v, loop %v", p, got, want)
		}
	}
}

// dataVector reads back the vector NAME = [...] from a model text.
func dataVector(t testing.TB, src, name string) []float64 {
	t.Helper()
	for _, line := range strings.Split(src, "\n") {
		if rest, ok := strings.CutPrefix(line, name+" = ["); ok {
			var out []float64
			for _, f := range strings.Split(strings.TrimSuffix(rest, "]"), ", ") {
				var v float64
				fmt.Sscan(f, &v)
				out = append(out, v)
			}
			return out
		}
	}
	t.Fatalf("no vector %s", name)
	return nil
}

func joinFloats(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = fmt.Sprint(x)
	}
	return strings.Join(parts, ", ")
}

// Elementwise work on a long unrolled trajectory is bounded too: past
// maxNodes the compiler stops with ErrTooLarge at a position, not with a
// graph that exhausts the memory.
func TestUnrolledGraphBounded(t *testing.T) {
	defer func(n int32) { maxNodes = n }(maxNodes)
	maxNodes = 20000
	src := `repeat 2000
  x = a then x*0.5 + 1
end
sum(sin(x)*cos(x) + tan(x)*atan(x) + sinh(x)*cosh(x) + tanh(x)*exp(x) + log1p(x^2)*erf(x) + erfc(x)*sqrt(x^2 + 1))`
	m, err := model.Parse(src)
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	_, err = Compile(m)
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrTooLarge) || e.Pos.Line == 0 {
		t.Fatalf("error %v, want ErrTooLarge with a position", err)
	}
}
