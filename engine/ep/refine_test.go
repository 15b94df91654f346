package ep

import (
	"math"
	"testing"
)

// TestSlowRefinementStops: a gamma density (shape 3, rate 2) on its own
// scale [0, inf]: the factor 2 log x is cut off at the bound, where every
// tilted distribution has a kink, so Gauss-Hermite converges slowly and
// the tilted moments' error estimate falls by less than slowRefinement per
// doubling (0.029, 0.0059, 0.010 at 64, 128 and 256 nodes). The run stops
// refining after the first doubling that gains too little, not at the
// largest order (512, three doublings), and what the last doubling would
// have given is within the error it reports: a run started at 512 nodes
// lands within a few times that error (in sds) of it.
func TestSlowRefinementStops(t *testing.T) {
	fs, _ := splitModel(t, "param x in [0, inf]\n2*log(x) - 2*x\n")
	// As the engine runs it: from the mode, x = 1, with tolerances of 1e-7
	// (the sweeps) and 1e-4 (the tilted moments).
	const quadTol = 1e-4
	res := run(t, fs, &Settings{Start: []float64{1}, Tol: 1e-7, QuadTol: quadTol})
	if res.Refinements >= 3 || !(res.QuadratureError > quadTol) {
		t.Fatalf("%d refinements, quadrature error %g: want a stop before the largest order, the error still above QuadTol", res.Refinements, res.QuadratureError)
	}
	fine := run(t, fs, &Settings{Start: []float64{1}, Tol: 1e-7, QuadTol: quadTol, Nodes1D: maxNodes1D})
	sd := math.Sqrt(fine.Cov[0])
	t.Logf("stopped after %d refinements at %d nodes: mean %.6f sd %.6f (error %.2g); at %d nodes: mean %.6f sd %.6f (error %.2g)",
		res.Refinements, res.Nodes1D, res.Mean[0], math.Sqrt(res.Cov[0]), res.QuadratureError, fine.Nodes1D, fine.Mean[0], sd, fine.QuadratureError)
	if d := math.Abs(res.Mean[0]-fine.Mean[0]) / sd; d > 3*res.QuadratureError {
		t.Errorf("mean %.6f against %.6f at the largest order: %.2g sd, over 3 times the reported error %.2g", res.Mean[0], fine.Mean[0], d, res.QuadratureError)
	}
	if d := math.Abs(math.Sqrt(res.Cov[0])/sd - 1); d > 3*res.QuadratureError {
		t.Errorf("sd %.6f against %.6f at the largest order: off by %.2g, over 3 times the reported error %.2g", math.Sqrt(res.Cov[0]), sd, d, res.QuadratureError)
	}
}
