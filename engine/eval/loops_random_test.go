package eval

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestRandomLoopsOfDifferentLengths: a model that adds two reductions (sum,
// logsumexp, max, min or mean) of random elementwise expressions over data
// of different lengths, reading the same parameters, must give the sum of
// the two models that each hold one of them (an identity): value, gradient
// and Hessian, in derivative mode and in value mode. Before 47568c3 the second loop took the first one's
// broadcast of a shared scalar, and the sum came out wrong or NaN.
func TestRandomLoopsOfDifferentLengths(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	data := func(n int, a, b string) string {
		u := make([]float64, n)
		v := make([]float64, n)
		for i := range u {
			u[i] = float64(i)/float64(n) - 0.3
			v[i] = math.Sin(float64(3*i+1)) * 1.2
		}
		return a + " = " + vectorLiteral(u) + "\n" + b + " = " + vectorLiteral(v) + "\n"
	}
	compared := 0
	for trial := 0; trial < 80; trial++ {
		dim := 1 + trial%3
		n1, n2 := []int{12, 300, 5, 70}[trial%4], []int{3, 17, 130, 1}[trial%4]
		head := data(n1, "dt", "dy") + data(n2, "et", "ey")
		for k := 0; k < dim; k++ {
			head += "param " + paramNames[k] + "\n"
		}
		// Each body also raises data to a parameter's power (a vector
		// base, a scalar exponent: the shape of a Weibull's terms).
		p := paramNames[trial%dim]
		b1 := randVecTree(r, 3, dim).String() + " + (abs(dt) + 1)^" + p
		b2 := strings.NewReplacer("dt", "et", "dy", "ey").Replace(randVecTree(r, 3, dim).String()) + " + (abs(et) + 1)^" + p
		red := []string{"sum", "logsumexp", "max", "min", "mean"}[trial%5]
		both := compileSrc(t, head+red+"("+b1+") + "+red+"("+b2+")\n")
		one := compileSrc(t, head+red+"("+b1+")\n")
		two := compileSrc(t, head+red+"("+b2+")\n")
		x := make([]float64, dim)
		for k := range x {
			x[k] = 0.3 + 0.25*float64(k) + 0.1*r.Float64()
		}
		v, g, h := derivs(both, x)
		v1, g1, h1 := derivs(one, x)
		v2, g2, h2 := derivs(two, x)
		if math.IsNaN(v1+v2) || math.IsInf(v1+v2, 0) {
			continue
		}
		compared++
		label := red + "(" + b1 + ") + " + red + "(" + b2 + ")"
		if !near(v, v1+v2, 1e-12, 1) || !near(both.LogDensity(x), v1+v2, 1e-12, 1) {
			t.Errorf("%s (lengths %d, %d): value %v (alone %v), parts %v", label, n1, n2, v, both.LogDensity(x), v1+v2)
			continue
		}
		for i := 0; i < dim; i++ {
			if !near(g[i], g1[i]+g2[i], 1e-12, 1) {
				t.Errorf("%s (lengths %d, %d): gradient[%d] %v, parts %v", label, n1, n2, i, g[i], g1[i]+g2[i])
			}
			for j := 0; j < dim; j++ {
				if !near(h[i][j], h1[i][j]+h2[i][j], 1e-12, 1) {
					t.Errorf("%s (lengths %d, %d): Hessian[%d][%d] %v, parts %v", label, n1, n2, i, j, h[i][j], h1[i][j]+h2[i][j])
				}
			}
		}
	}
	if compared < 40 {
		t.Errorf("only %d of 80 models compared (the rest not finite at the point)", compared)
	}
}
