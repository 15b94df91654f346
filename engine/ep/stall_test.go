package ep

import (
	"context"
	"slices"
	"testing"
)

// TestStalls: EP on a state seen only through its square (two equal
// modes at +-sqrt(2.1); a Gaussian approximation's sites pull it towards
// both) oscillates instead of converging. The run stops once its least
// change per sweep has not fallen for stallSweeps sweeps, well before the
// sweep budget, unconverged; the recorded changes say that the stop was
// due: the least of them came stallSweeps sweeps before the end.
func TestStalls(t *testing.T) {
	fs, _ := splitModel(t, "y = [2.1, 1.7, 2.6, 2.2, 1.9]\nparam x\nld_normal(x, 0, 3) + sum(ld_normal(y, x^2, 0.6))\n")
	var changes []float64
	res, err := Run(context.Background(), fs, &Settings{MaxSweeps: 500,
		Progress: func(_ int, c float64) error { changes = append(changes, c); return nil }})
	if err != nil {
		t.Fatal(err)
	}
	if res.Status != Stalled || res.Converged || res.Sweeps >= 500 {
		t.Fatalf("status %v after %d sweeps, converged %v; want a stall before 500", res.Status, res.Sweeps, res.Converged)
	}
	least := slices.Index(changes, slices.Min(changes))
	if len(changes)-1-least != stallSweeps {
		t.Errorf("the least change came at sweep %d of %d: a stall needs %d sweeps without a new least", least+1, len(changes), stallSweeps)
	}
}
