package quadrature

import (
	"context"
	"testing"
)

// TestTick: Settings.Tick comes once per tickLines lines of nodes, counted
// over the rule and every slice of its result together: a 2-D density's
// marginal walks slices of one line each, and a 3-D plot's pair densities
// too, so a count per rule would never tick there.
func TestTick(t *testing.T) {
	pr := compile(t, "param m\nparam s in [0, inf]\n-log(s) + ld_normal(4.1, m, s) + ld_normal(5.3, m, s) + ld_normal(4.8, m, s) + ld_normal(4.4, m, s)\n")
	ticks := 0
	res, err := Integrate(context.Background(), pr.p, pr.start, Settings{Maps: pr.maps, Tick: func() { ticks++ }})
	if err != nil {
		t.Fatal(err)
	}
	lines := *res.settings.lines
	if lines < 2*tickLines || ticks != lines/tickLines {
		t.Fatalf("%d ticks for %d lines of the rule", ticks, lines)
	}
	before := ticks
	for k := 0; k < 2; k++ {
		if _, err := res.Curve(context.Background(), k, true); err != nil {
			t.Fatal(err)
		}
	}
	// One of the curves is the rule's own outer walk; the other walks
	// slices of one line each (a node of the marginal each).
	if walked := *res.settings.lines - lines; walked < tickLines || ticks-before != (lines+walked)/tickLines-lines/tickLines {
		t.Errorf("%d ticks for the curves' %d slice lines", ticks-before, walked)
	}
}
