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

// TestResolution: a run cut short by the sweep budget counts as converged
// when its last change is within Resolution, and not otherwise. A logistic
// likelihood's sites converge linearly; after three sweeps the change is
// small but far above a Tol of 1e-15. The recorded changes decide which
// outcome each Resolution must give.
func TestResolution(t *testing.T) {
	fs, _ := splitModel(t, "k = [0, 1, 1, 0, 1, 1]\nu = [-1, -0.5, 0, 0.5, 1, 1.5]\nparam a\nld_normal(a, 0, 2) + sum(k * log(logistic(a + u)) + (1 - k) * log(1 - logistic(a + u)))\n")
	var last float64
	settings := func(res float64) *Settings {
		return &Settings{MaxSweeps: 3, Tol: 1e-15, Resolution: res,
			Progress: func(_ int, c float64) error { last = c; return nil }}
	}
	tight, err := Run(context.Background(), fs, settings(1e-15))
	if err != nil {
		t.Fatal(err)
	}
	if tight.Converged || tight.Status != MaxSweeps {
		t.Fatalf("with Resolution 1e-15: status %v after a change of %g, want the sweep limit", tight.Status, last)
	}
	loose, err := Run(context.Background(), fs, settings(10*last))
	if err != nil {
		t.Fatal(err)
	}
	if !loose.Converged || loose.Status != Converged {
		t.Errorf("with Resolution %g above the last change %g: status %v, want converged", 10*last, last, loose.Status)
	}
}
