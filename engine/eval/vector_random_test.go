package eval

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/num/hyperdual"
)

// randVecTree is a random elementwise expression over two data vectors and
// the parameters (leaves: data, parameters, numbers), built from the
// operations the kernels fuse and some others.
func randVecTree(r *rand.Rand, depth, dim int) *rtree {
	if depth == 0 || r.IntN(4) == 0 {
		switch r.IntN(3) {
		case 0:
			return &rtree{op: "num", val: math.Round((r.Float64()*4-2)*100) / 100}
		case 1:
			return &rtree{op: "param", param: r.IntN(dim)}
		}
		return &rtree{op: "data", param: r.IntN(2)}
	}
	ops := []string{"+", "-", "*", "/", "sq", "+", "-", "*", "sq", "exp", "log1pexp", "neg", "sin", "atan", "abs",
		"logexp", "loglogistic", "log1mlogistic"}
	op := ops[r.IntN(len(ops))]
	switch op {
	case "+", "-", "*", "/":
		return &rtree{op: op, args: []*rtree{randVecTree(r, depth-1, dim), randVecTree(r, depth-1, dim)}}
	}
	return &rtree{op: op, args: []*rtree{randVecTree(r, depth-1, dim)}}
}

func TestRandomVectorModels(t *testing.T) {
	// Sums (and sums of squares, log-sum-exp, maxima) of random elementwise
	// expressions over 300-element data vectors (longer than a chunk) and
	// 12-element ones (evaluated in blocks by the flat tape): the value
	// against the sum of the tree evaluated element by element, the
	// derivatives against hyperdual numbers, the fused kernels against
	// unfused ones (the same numbers exactly), and block evaluation against
	// point evaluation (exactly).
	for _, n := range []int{300, 12} {
		randomVectorModels(t, n)
	}
}

func randomVectorModels(t *testing.T, n int) {
	dt := make([]float64, n)
	dy := make([]float64, n)
	for i := range dt {
		dt[i] = float64(i)/float64(n) - 0.4
		dy[i] = math.Cos(float64(5*i)) * 1.5
	}
	data := [][]float64{dt, dy}
	header := "dt = " + vectorLiteral(dt) + "\ndy = " + vectorLiteral(dy) + "\n"
	r := rand.New(rand.NewPCG(5, 6))
	compared := 0
	for trial := 0; trial < 120; trial++ {
		dim := 1 + trial%3
		tree := randVecTree(r, 4, dim)
		reduce := []string{"sum", "sumsq", "logsumexp", "max"}[trial%4]
		src := header
		for k := 0; k < dim; k++ {
			src += "param " + paramNames[k] + "\n"
		}
		body := tree.String()
		// (The + 0*dt makes every body a vector.)
		if reduce == "sumsq" {
			src += "sum((" + body + " + 0*dt)^2)\n"
		} else {
			src += reduce + "(" + body + " + 0*dt)\n"
		}
		ev := compileSrc(t, src)
		fuseKernels = false
		plain := compileSrc(t, src)
		fuseKernels = true
		x := make([]float64, dim)
		for k := range x {
			x[k] = 0.2 + 0.3*float64(k) + 0.1*r.Float64()
		}
		// Block evaluation (the flat tape, for these short loops) equals
		// point evaluation, at this point and others.
		if ev.prog.flat == nil && n <= chunkLen && len(ev.prog.loops) > 0 {
			t.Errorf("%s: no flat block tape", body)
		}
		bp := [][]float64{x}
		for p := 0; p < 300; p++ {
			y := make([]float64, dim)
			for k := range y {
				y[k] = 2*r.Float64() - 0.5
			}
			bp = append(bp, y)
		}
		blockMatches(t, body, ev, bp)
		got, want := ev.LogDensity(x), plain.LogDensity(x)
		if !(got == want || math.IsNaN(got) && math.IsNaN(want)) {
			t.Errorf("%s: fused kernels give %v, unfused %v", body, got, want)
		}
		// The reference: reduce the tree's hyperdual values over the data.
		ref := func(i, j int) hyperdual.Number {
			hx := make([]hyperdual.Number, dim)
			for k := range hx {
				hx[k] = hyperdual.Number{Real: x[k]}
			}
			if i >= 0 {
				hx[i].E1mag = 1
			}
			if j >= 0 {
				hx[j].E2mag = 1
			}
			var acc hyperdual.Number
			best := math.Inf(-1)
			for e := 0; e < n; e++ {
				v := tree.evalAt(hx, data, e)
				switch reduce {
				case "sum":
					acc = hyperdual.Add(acc, v)
				case "sumsq":
					acc = hyperdual.Add(acc, hyperdual.Mul(v, v))
				case "max":
					if v.Real > best || e == 0 {
						best, acc = v.Real, v
					}
				case "logsumexp":
					if e == 0 {
						acc = v
					} else {
						acc = (&rtree{op: "logsumexp", args: []*rtree{{op: "param", param: 0}, {op: "param", param: 1}}}).eval([]hyperdual.Number{acc, v})
					}
				}
			}
			return acc
		}
		w := ref(-1, -1).Real
		if !finite(w) {
			continue
		}
		if !near(got, w, 1e-10, 1) {
			t.Errorf("%s(%s) at %v = %.16g, element by element %.16g", reduce, body, x, got, w)
			continue
		}
		_, g, h := derivs(ev, x)
		ok := true
		for i := 0; i < dim && ok; i++ {
			for j := i; j < dim; j++ {
				rf := ref(i, j)
				if !finite(rf.E1mag) || !finite(rf.E1E2mag) {
					ok = false
					break
				}
				if !near(g[i], rf.E1mag, 1e-8, 1) || !near(h[i][j], rf.E1E2mag, 1e-8, 1) {
					t.Errorf("%s(%s) at %v: gradient[%d] %v Hessian[%d][%d] %v, hyperdual %v %v", reduce, body, x, i, g[i], i, j, h[i][j], rf.E1mag, rf.E1E2mag)
					ok = false
					break
				}
			}
		}
		if ok {
			compared++
		}
	}
	if compared < 60 {
		t.Errorf("only %d of 120 random vector models compared", compared)
	}
	t.Logf("%d vector models compared", compared)
}
