package engine

import (
	"os"
	"testing"
)

// TestMain lets BELLCHECK_QUADRATURE=1 run the whole package's tests with
// the nested rule switched on (the wiring's check while it is off).
func TestMain(m *testing.M) {
	if os.Getenv("BELLCHECK_QUADRATURE") == "1" {
		useQuadrature = true
	}
	os.Exit(m.Run())
}

// TestQuadratureReferences runs the cases of testdata/reference-quadrature,
// which the grid gets wrong and the nested rule right, with the switch on.
func TestQuadratureReferences(t *testing.T) {
	old := useQuadrature
	useQuadrature = true
	defer func() { useQuadrature = old }()
	runReferences(t, "../testdata/reference-quadrature")
}
