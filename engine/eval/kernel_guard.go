package eval

import "math"

// Support guards over a kernel's elements: d[i] = a[i] where the test
// b[i] op k holds, else guardFail(b[i]). Guards of bounded parameters run
// on every point of a grid, where they almost always hold, so each window
// of four copies a and only then, when a test failed (found without a
// branch per element), puts in the failures; the tests are read before d is
// written, so d may be a or b. The values are those of the plain loop.

// guardLoop applies a support guard elementwise (d[i] = guard(op, a[i],
// b[i], k)) with the comparison chosen once per loop rather than once per
// element.
func guardLoop(op opcode, d, a, b []float64, k float64) {
	switch op {
	case opGuardGT:
		guardGT(d, a, b, k)
	case opGuardGE:
		guardGE(d, a, b, k)
	case opGuardLT:
		guardLT(d, a, b, k)
	default:
		guardLE(d, a, b, k)
	}
}

// guardFail is a failed guard's value: NaN for a NaN test value, else -Inf.
func guardFail(t float64) float64 {
	if t != t {
		return t
	}
	return math.Inf(-1)
}

// fails is 1 where a test failed, else 0 (no branch: the comparison's value).
func fails(held bool) uint8 {
	var f uint8
	if !held {
		f = 1
	}
	return f
}

// guardGT sets d[i] = a[i] where b[i] > k, else guardFail(b[i]).
func guardGT(d, a, b []float64, k float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		t0, t1, t2, t3 := bw[0], bw[1], bw[2], bw[3]
		dw[0], dw[1], dw[2], dw[3] = aw[0], aw[1], aw[2], aw[3]
		if fails(t0 > k)|fails(t1 > k)|fails(t2 > k)|fails(t3 > k) == 0 {
			continue
		}
		for j, t := range [4]float64{t0, t1, t2, t3} {
			if !(t > k) {
				dw[j] = guardFail(t)
			}
		}
	}
	for ; i < len(d); i++ {
		if b[i] > k {
			d[i] = a[i]
		} else {
			d[i] = guardFail(b[i])
		}
	}
}

// guardGE sets d[i] = a[i] where b[i] >= k, else guardFail(b[i]).
func guardGE(d, a, b []float64, k float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		t0, t1, t2, t3 := bw[0], bw[1], bw[2], bw[3]
		dw[0], dw[1], dw[2], dw[3] = aw[0], aw[1], aw[2], aw[3]
		if fails(t0 >= k)|fails(t1 >= k)|fails(t2 >= k)|fails(t3 >= k) == 0 {
			continue
		}
		for j, t := range [4]float64{t0, t1, t2, t3} {
			if !(t >= k) {
				dw[j] = guardFail(t)
			}
		}
	}
	for ; i < len(d); i++ {
		if b[i] >= k {
			d[i] = a[i]
		} else {
			d[i] = guardFail(b[i])
		}
	}
}

// guardLT sets d[i] = a[i] where b[i] < k, else guardFail(b[i]).
func guardLT(d, a, b []float64, k float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		t0, t1, t2, t3 := bw[0], bw[1], bw[2], bw[3]
		dw[0], dw[1], dw[2], dw[3] = aw[0], aw[1], aw[2], aw[3]
		if fails(t0 < k)|fails(t1 < k)|fails(t2 < k)|fails(t3 < k) == 0 {
			continue
		}
		for j, t := range [4]float64{t0, t1, t2, t3} {
			if !(t < k) {
				dw[j] = guardFail(t)
			}
		}
	}
	for ; i < len(d); i++ {
		if b[i] < k {
			d[i] = a[i]
		} else {
			d[i] = guardFail(b[i])
		}
	}
}

// guardLE sets d[i] = a[i] where b[i] <= k, else guardFail(b[i]).
func guardLE(d, a, b []float64, k float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		t0, t1, t2, t3 := bw[0], bw[1], bw[2], bw[3]
		dw[0], dw[1], dw[2], dw[3] = aw[0], aw[1], aw[2], aw[3]
		if fails(t0 <= k)|fails(t1 <= k)|fails(t2 <= k)|fails(t3 <= k) == 0 {
			continue
		}
		for j, t := range [4]float64{t0, t1, t2, t3} {
			if !(t <= k) {
				dw[j] = guardFail(t)
			}
		}
	}
	for ; i < len(d); i++ {
		if b[i] <= k {
			d[i] = a[i]
		} else {
			d[i] = guardFail(b[i])
		}
	}
}

// guardChain applies a chain of guards (opGuards): d[i] is a[i] where every
// test holds, else what the guards give one after the other. Over a grid
// inside the support every test holds: the tests are counted over the
// whole slice first, with no store (a lower and an upper bound on one
// parameter as one closed range, two ranges a pass), and a is copied (or,
// where the chain runs in place, left as it is).
func guardChain(tests []guardTest, d, a []float64, vs [][]float64) {
	a = a[:len(d)]
	n := len(d)
	failed := 0
	var ranges [4]colRange
	nr := 0
	for i := 0; i < len(tests) && failed == 0; i++ {
		g := tests[i]
		if i+1 < len(tests) && tests[i+1].t == g.t && nr < len(ranges) {
			// A lower and an upper bound on one parameter (the usual
			// support).
			if lo, hi, ok := closedRange(g, tests[i+1]); ok {
				ranges[nr] = colRange{vs[g.t][:n], lo, hi}
				nr++
				i++
				continue
			}
		}
		failed += countFails(g.op, vs[g.t][:n], g.k)
	}
	for r := 0; r+1 < nr && failed == 0; r += 2 {
		failed += countOutside2(ranges[r], ranges[r+1])
	}
	if nr%2 == 1 && failed == 0 {
		failed += countOutside(ranges[nr-1].t, ranges[nr-1].lo, ranges[nr-1].hi)
	}
	if failed == 0 {
		if n > 0 && &d[0] != &a[0] {
			copy(d, a)
		}
		return
	}
	for i := range d {
		v := a[i]
		for _, g := range tests {
			v = guard(g.op, v, vs[g.t][i], g.k)
		}
		d[i] = v
	}
}

// colRange is a closed range [lo, hi] that the values t must lie in.
type colRange struct {
	t      []float64
	lo, hi float64
}

// countOutside2 counts the elements i where r1.t[i] or r2.t[i] is outside
// its range (NaN among them): two ranges in one pass.
func countOutside2(r1, r2 colRange) int {
	t1 := r1.t
	t2 := r2.t[:len(t1)]
	lo1, hi1, lo2, hi2 := r1.lo, r1.hi, r2.lo, r2.hi
	n := 0
	for i := range t1 {
		x, y := t1[i], t2[i]
		n += int(fails(x >= lo1 && x <= hi1 && y >= lo2 && y <= hi2))
	}
	return n
}

// countFails counts the elements of t that fail the guard's test against k.
func countFails(op opcode, t []float64, k float64) int {
	n := 0
	i := 0
	switch op {
	case opGuardGT:
		for ; i+4 <= len(t); i += 4 {
			w := t[i : i+4 : i+4]
			n += int(fails(w[0] > k) + fails(w[1] > k) + fails(w[2] > k) + fails(w[3] > k))
		}
	case opGuardGE:
		for ; i+4 <= len(t); i += 4 {
			w := t[i : i+4 : i+4]
			n += int(fails(w[0] >= k) + fails(w[1] >= k) + fails(w[2] >= k) + fails(w[3] >= k))
		}
	case opGuardLT:
		for ; i+4 <= len(t); i += 4 {
			w := t[i : i+4 : i+4]
			n += int(fails(w[0] < k) + fails(w[1] < k) + fails(w[2] < k) + fails(w[3] < k))
		}
	default:
		for ; i+4 <= len(t); i += 4 {
			w := t[i : i+4 : i+4]
			n += int(fails(w[0] <= k) + fails(w[1] <= k) + fails(w[2] <= k) + fails(w[3] <= k))
		}
	}
	for ; i < len(t); i++ {
		n += int(fails(guardPass(op, t[i], k)))
	}
	return n
}

// closedRange returns the closed interval [lo, hi] whose members pass both
// tests, where one is a lower bound (> or >=) and the other an upper bound
// (< or <=): x > k holds exactly where x >= the next double above k, and
// x < k where x <= the next double below it (NaN fails all four). It
// reports false for two bounds on one side.
func closedRange(g1, g2 guardTest) (lo, hi float64, ok bool) {
	bound := func(g guardTest) (v float64, lower bool) {
		switch g.op {
		case opGuardGT:
			return math.Nextafter(g.k, math.Inf(1)), true
		case opGuardGE:
			return g.k, true
		case opGuardLT:
			return math.Nextafter(g.k, math.Inf(-1)), false
		default:
			return g.k, false
		}
	}
	for _, g := range [2]guardTest{g1, g2} {
		if (g.op == opGuardGT || g.op == opGuardLT) && math.IsInf(g.k, 0) {
			return 0, 0, false // no double next to an infinite bound
		}
	}
	v1, l1 := bound(g1)
	v2, l2 := bound(g2)
	switch {
	case l1 && !l2:
		return v1, v2, true
	case l2 && !l1:
		return v2, v1, true
	}
	return 0, 0, false
}

// countOutside counts the elements of t outside [lo, hi] (NaN among them).
func countOutside(t []float64, lo, hi float64) int {
	n := 0
	i := 0
	for ; i+4 <= len(t); i += 4 {
		w := t[i : i+4 : i+4]
		n += int(fails(w[0] >= lo && w[0] <= hi) + fails(w[1] >= lo && w[1] <= hi) +
			fails(w[2] >= lo && w[2] <= hi) + fails(w[3] >= lo && w[3] <= hi))
	}
	for ; i < len(t); i++ {
		n += int(fails(t[i] >= lo && t[i] <= hi))
	}
	return n
}
