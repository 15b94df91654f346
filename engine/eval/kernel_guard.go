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
// whole slice first, one pass each with no store, and a copied.
func guardChain(tests []guardTest, d, a []float64, vs [][]float64) {
	a = a[:len(d)]
	failed := 0
	for _, g := range tests {
		failed += countFails(g.op, vs[g.t][:len(d)], g.k)
	}
	if failed == 0 {
		copy(d, a)
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
