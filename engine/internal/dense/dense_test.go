package dense

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The factor, inverse and log-determinant against gonum's mat.Cholesky on
// a 4×4 symmetric positive definite matrix (an independent implementation).
func TestAgainstGonum(t *testing.T) {
	const d = 4
	a := []float64{
		4, 1.2, -0.6, 0.3,
		1.2, 3, 0.5, -0.2,
		-0.6, 0.5, 2, 0.7,
		0.3, -0.2, 0.7, 1.5,
	}
	c := make([]float64, d*d)
	if !Cholesky(c, a, d, 1e-13) {
		t.Fatal("positive definite matrix refused")
	}
	var ch mat.Cholesky
	if !ch.Factorize(mat.NewSymDense(d, a)) {
		t.Fatal("gonum refused it")
	}
	var l mat.TriDense
	ch.LTo(&l)
	for i := range d {
		for j := range d {
			if math.Abs(c[i*d+j]-l.At(i, j)) > 1e-14 {
				t.Errorf("C[%d,%d] = %g, gonum %g", i, j, c[i*d+j], l.At(i, j))
			}
		}
	}
	if got, want := CholLogDet(c, d), ch.LogDet(); math.Abs(got-want) > 1e-13 {
		t.Errorf("log det %g, gonum %g", got, want)
	}
	inv := make([]float64, d*d)
	CholInverse(c, inv, make([]float64, d), d)
	var ginv mat.SymDense
	if err := ch.InverseTo(&ginv); err != nil {
		t.Fatal(err)
	}
	for i := range d {
		for j := range d {
			if math.Abs(inv[i*d+j]-ginv.At(i, j)) > 1e-13 {
				t.Errorf("inverse[%d,%d] = %g, gonum %g", i, j, inv[i*d+j], ginv.At(i, j))
			}
		}
	}
	// Not positive definite: a negative pivot, and a pivot below the tolerance.
	if Cholesky(c, []float64{1, 2, 2, 1}, 2, 0) {
		t.Error("indefinite matrix accepted")
	}
	if Cholesky(c, []float64{1, 1, 1, 1 + 1e-15}, 2, 1e-13) {
		t.Error("numerically singular matrix accepted")
	}
}
