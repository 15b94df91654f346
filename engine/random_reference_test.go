package engine

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Random reference tests: seeded random targets whose normaliser and moments
// are known in closed form, run through the whole analysis at its default
// settings. They guard the exact reference on what a fixed gallery cannot:
// scales over six orders of magnitude and correlations up to 0.999.

// randomGaussian is a normal density in d parameters with its closed form:
// the unnormalised log-density -(x-m)' P (x-m) / 2 has
// log Z = (d/2) log 2 pi + (1/2) log det Sigma (the Gaussian integral, e.g.
// Rasmussen and Williams 2006, eq. A.7, from memory), mean m and covariance
// Sigma = P^-1.
type randomGaussian struct {
	mean []float64
	cov  *mat.SymDense
	src  string
	logZ float64
}

// newRandomGaussian draws sds 10^U(-3, 3) (six orders of magnitude across
// cases and within one) and a correlation matrix with correlations up to
// maxCorr in size: an equicorrelation or a chain (AR(1)) structure, whose
// inverses are well known, with random signs by a random sign flip of each
// coordinate (a similarity that keeps the matrix a correlation matrix).
func newRandomGaussian(r *rand.Rand, d int, maxCorr float64) randomGaussian {
	mean := make([]float64, d)
	sd := make([]float64, d)
	sign := make([]float64, d)
	for i := range d {
		sd[i] = math.Pow(10, -3+6*r.Float64())
		mean[i] = sd[i] * (4*r.Float64() - 2) * 3
		sign[i] = 1
		if r.IntN(2) == 0 {
			sign[i] = -1
		}
	}
	rho := maxCorr * r.Float64()
	chain := r.IntN(2) == 0
	corr := func(i, j int) float64 {
		if i == j {
			return 1
		}
		if chain {
			return math.Pow(rho, math.Abs(float64(i-j)))
		}
		return rho
	}
	cov := mat.NewSymDense(d, nil)
	for i := range d {
		for j := i; j < d; j++ {
			cov.SetSym(i, j, sign[i]*sign[j]*corr(i, j)*sd[i]*sd[j])
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(cov) {
		panic("random covariance not positive definite")
	}
	var prec mat.SymDense
	if err := chol.InverseTo(&prec); err != nil {
		panic(err)
	}
	names := []string{"a", "b", "c", "e"}[:d]
	var terms []string
	for i := range d {
		for j := i; j < d; j++ {
			c := prec.At(i, j)
			if i != j {
				c *= 2
			}
			terms = append(terms, fmt.Sprintf("(%.17g)*(%s - (%.17g))*(%s - (%.17g))",
				c, names[i], mean[i], names[j], mean[j]))
		}
	}
	var b strings.Builder
	for _, n := range names {
		fmt.Fprintf(&b, "param %s\n", n)
	}
	fmt.Fprintf(&b, "-(%s)/2\n", strings.Join(terms, " + "))
	logZ := float64(d)/2*math.Log(2*math.Pi) + chol.LogDet()/2
	return randomGaussian{mean: mean, cov: cov, src: b.String(), logZ: logZ}
}

// refTolerance is what the reference must reach at its default settings on a
// smooth target: log Z within 1e-6, means within 1e-4 sd, covariances within
// 1e-4 relative (of sd_i sd_j).
const (
	refLogZTol = 1e-6
	refMeanTol = 1e-4
	refCovTol  = 1e-4
)

func TestRandomGaussians(t *testing.T) {
	r := rand.New(rand.NewPCG(2026, 12))
	for k := range 24 {
		d := 1 + k%4
		g := newRandomGaussian(r, d, 0.999)
		t.Run(fmt.Sprintf("%dd-%d", d, k), func(t *testing.T) {
			res := analyseSource(t, g.src, Options{})
			doc, _ := resultDoc(t, res)
			num := func(path string) float64 {
				v, ok := lookup(doc, path)
				f, isNum := v.(float64)
				if !ok || !isNum {
					t.Fatalf("%s is %v, want a number (diagnostics %s)", path, v, codeList(res))
				}
				return f
			}
			if e := math.Abs(num("exact.log_z") - g.logZ); e > refLogZTol {
				t.Errorf("exact log Z off by %.3g (want <= %g)", e, refLogZTol)
			}
			for _, who := range []string{"exact", "laplace", "reverse_kl", "forward_kl"} {
				for i := range d {
					sdi := math.Sqrt(g.cov.At(i, i))
					if e := math.Abs(num(fmt.Sprintf("%s.mean.%d", who, i))-g.mean[i]) / sdi; e > refMeanTol {
						t.Errorf("%s mean %d off by %.3g sd", who, i, e)
					}
					for j := range d {
						sdj := math.Sqrt(g.cov.At(j, j))
						got := num(fmt.Sprintf("%s.cov.%d.%d", who, i, j))
						if e := math.Abs(got-g.cov.At(i, j)) / (sdi * sdj); e > refCovTol {
							t.Errorf("%s cov %d,%d off by %.3g of sd_i sd_j", who, i, j, e)
						}
					}
				}
			}
		})
	}
}

// TestRandomProducts checks products of independent Student-t and gamma
// factors, each a normalised density, so log Z = 0; the Student t with nu
// degrees of freedom has mean loc (nu > 1) and variance scale^2 nu/(nu-2)
// (nu > 2); the gamma(shape, rate) has mean shape/rate and variance
// shape/rate^2 (Johnson, Kotz and Balakrishnan, Continuous Univariate
// Distributions; from memory).
func TestRandomProducts(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 2026))
	names := []string{"a", "b", "c", "e"}
	for k := range 16 {
		d := 1 + k%4
		var terms, decl []string
		mean := make([]float64, d)
		variance := make([]float64, d)
		for i := range d {
			scale := math.Pow(10, -2+4*r.Float64())
			if r.IntN(2) == 0 {
				nu := 4.5 + 10*r.Float64()
				loc := scale * (2*r.Float64() - 1) * 5
				decl = append(decl, "param "+names[i])
				terms = append(terms, fmt.Sprintf("ld_student(%s, %.17g, %.17g, %.17g)", names[i], nu, loc, scale))
				mean[i] = loc
				variance[i] = scale * scale * nu / (nu - 2)
			} else {
				shape := 1.5 + 8*r.Float64()
				rate := 1 / scale
				decl = append(decl, "param "+names[i]+" in [0, inf]")
				terms = append(terms, fmt.Sprintf("ld_gamma(%s, %.17g, %.17g)", names[i], shape, rate))
				mean[i] = shape / rate
				variance[i] = shape / (rate * rate)
			}
		}
		src := strings.Join(decl, "\n") + "\n" + strings.Join(terms, " + ") + "\n"
		t.Run(fmt.Sprintf("%dd-%d", d, k), func(t *testing.T) {
			res := analyseSource(t, src, Options{})
			doc, _ := resultDoc(t, res)
			num := func(path string) float64 {
				v, ok := lookup(doc, path)
				f, isNum := v.(float64)
				if !ok || !isNum {
					t.Fatalf("%s is %v, want a number (diagnostics %s)\n%s", path, v, codeList(res), src)
				}
				return f
			}
			if e := math.Abs(num("exact.log_z")); e > refLogZTol {
				t.Errorf("exact log Z off by %.3g\n%s", e, src)
			}
			for i := range d {
				sd := math.Sqrt(variance[i])
				if e := math.Abs(num(fmt.Sprintf("exact.mean.%d", i))-mean[i]) / sd; e > refMeanTol {
					t.Errorf("exact mean %d off by %.3g sd\n%s", i, e, src)
				}
				if e := math.Abs(num(fmt.Sprintf("exact.cov.%d.%d", i, i))/variance[i] - 1); e > refCovTol {
					t.Errorf("exact variance %d off by %.3g relative\n%s", i, e, src)
				}
			}
		})
	}
}
