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
