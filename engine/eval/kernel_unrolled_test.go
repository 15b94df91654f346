package eval

import (
	"fmt"
	"math"
	"slices"
	"testing"
)

// kernelInputs returns n values mixing ordinary numbers with zeros, both
// infinities and NaN, so that guards fail in some windows of four and not in
// others, and some in the tail.
func kernelInputs(n, seed int) []float64 {
	special := []float64{0, math.Copysign(0, -1), math.Inf(1), math.Inf(-1), math.NaN(), 1, -1}
	v := make([]float64, n)
	for i := range v {
		if (i+seed)%3 == 0 {
			v[i] = special[(i/3+seed)%len(special)]
		} else {
			v[i] = math.Sin(float64(i*13+seed)) * 3
		}
	}
	return v
}

// sameBits reports whether a and b are the same float64, NaN included.
func sameBits(a, b float64) bool {
	return math.Float64bits(a) == math.Float64bits(b) || (a != a && b != b)
}

// TestUnrolledKernelsMatchScalarOps: every kernel instruction form whose
// loop is unrolled (kernel_unrolled.go, kernel_guard.go) gives, element by
// element, exactly the scalar tape's operation (ops[op].value, guard), for
// lengths around the windows of four, with the result written over an
// operand too. (An identity check: the block tape must equal point
// evaluation bit for bit.)
func TestUnrolledKernelsMatchScalarOps(t *testing.T) {
	const k = 0.5
	binary := []opcode{opAdd, opSub, opMul, opDiv, opGuardGT, opGuardGE, opGuardLT, opGuardLE}
	unary := []opcode{opNeg, opSq, opRecip, opAddK, opMulK, opDivK, opSubKR, opDivKR}
	for n := 0; n <= 23; n++ {
		a, b := kernelInputs(n, 1), kernelInputs(n, 2)
		scalars := []float64{1.25, -0.75}
		check := func(label string, in kinstr, want func(i int) float64) {
			t.Helper()
			for _, dst := range []int32{2, in.a, in.b} {
				if dst < 0 {
					continue
				}
				vs := [][]float64{append([]float64(nil), a...), append([]float64(nil), b...), make([]float64, n)}
				in := in
				in.dst = dst
				runKernel([]kinstr{in}, vs, scalars, n, 0)
				for i := 0; i < n; i++ {
					if w := want(i); !sameBits(vs[dst][i], w) {
						t.Errorf("%s n=%d dst=s%d: element %d = %v, want %v", label, n, dst, i, vs[dst][i], w)
					}
				}
			}
		}
		for _, op := range binary {
			f := func(x, y float64) float64 {
				if isGuard(op) {
					return guard(op, x, y, k)
				}
				return ops[op].value(x, y, k)
			}
			check(ops[op].name+" VV", kinstr{op: op, form: formVV, a: 0, b: 1, k: k}, func(i int) float64 { return f(a[i], b[i]) })
			check(ops[op].name+" VS", kinstr{op: op, form: formVS, a: 0, b: 1, k: k}, func(i int) float64 { return f(a[i], scalars[1]) })
			check(ops[op].name+" SV", kinstr{op: op, form: formSV, a: 0, b: 1, k: k}, func(i int) float64 { return f(scalars[0], b[i]) })
		}
		for _, op := range unary {
			check(ops[op].name, kinstr{op: op, form: formV, a: 0, b: -1, k: k}, func(i int) float64 { return ops[op].value(a[i], 0, k) })
		}
		// The fused forms against their definitions in fuse.go, with each
		// product rounded before the addition.
		sh := flagSqB | flagShiftB
		for _, flags := range []uint8{0, flagNoA, flagNoC, flagSqB, flagNoA | flagSqB, flagNoC | flagSqB, sh, flagNoA | sh, flagNoC | sh} {
			in := kinstr{op: opLin, a: 0, b: 1, sa: -1, sb: -1, k: 0.3, k2: -1.7, k3: -5.1, flags: flags}
			if flags&flagNoA != 0 {
				in.a = -1
			}
			check(fmt.Sprintf("lin flags %b", flags), in, func(i int) float64 {
				c, s, x := 0.3, -1.7, b[i]
				if flags&flagNoC != 0 {
					c = 0
				}
				if flags&flagShiftB != 0 {
					x = b[i] + -5.1
				}
				if flags&flagSqB != 0 {
					x = float64(x * x)
				}
				p := float64(s * x)
				switch {
				case flags&flagNoA != 0:
					return c + p
				case flags&flagNoC != 0:
					return a[i] + p
				}
				return (a[i] + c) + p
			})
		}
		for _, flags := range []uint8{0, flagNoK, flagDiv, flagNoC} {
			in := kinstr{op: opQuad, a: 0, b: -1, sa: -1, sb: -1, k: 0.3, k2: 2.5, flags: flags}
			check(fmt.Sprintf("quad flags %b", flags), in, func(i int) float64 {
				c := 0.3
				if flags&flagNoC != 0 {
					c = 0
				}
				sq := float64((a[i] + c) * (a[i] + c))
				switch {
				case flags&flagNoK != 0:
					return sq
				case flags&flagDiv != 0:
					return sq / 2.5
				}
				return sq * 2.5
			})
		}
	}
}

// TestGuardChainMatchesGuards: an opGuards instruction gives what its
// guards give one after the other (guard, the scalar tape's definition),
// bit for bit, with every test holding, and with failures, infinities and
// NaN among the tested values.
func TestGuardChainMatchesGuards(t *testing.T) {
	// Two parameters' supports (counted in one pass), one parameter's
	// (a pass of its own), and a lone bound.
	all := []guardTest{{opGuardGE, 1, -1}, {opGuardLE, 1, 2}, {opGuardGT, 2, -2.5}, {opGuardLT, 2, 2.5}}
	for _, tests := range [][]guardTest{all, all[:2], all[2:], all[1:]} {
		guardChainMatches(t, tests)
	}
}

func guardChainMatches(t *testing.T, tests []guardTest) {
	t.Helper()
	for n := 0; n <= 23; n++ {
		for _, inside := range []string{"inside", "outside", "edge"} {
			a := kernelInputs(n, 3)
			t1, t2 := make([]float64, n), make([]float64, n)
			for i := range t1 {
				t1[i], t2[i] = math.Cos(float64(i)), 2*math.Sin(float64(i)) // inside every test
			}
			switch {
			case inside == "outside":
				t1, t2 = kernelInputs(n, 4), kernelInputs(n, 5)
			case inside == "edge" && n > 0:
				// Inside but for one value on a bound or one double to
				// either side of it (the two tests of a column are counted
				// as one closed range).
				edges := func(k float64) []float64 {
					return []float64{k, math.Nextafter(k, math.Inf(1)), math.Nextafter(k, math.Inf(-1))}
				}
				e1, e2 := append(edges(-1), edges(2)...), append(edges(-2.5), edges(2.5)...)
				t1[n/2], t2[n/3] = e1[n%6], e2[(n/2)%6]
			}
			want := make([]float64, n)
			for i := range want {
				want[i] = a[i]
				for _, g := range tests {
					want[i] = guard(g.op, want[i], [][]float64{nil, t1, t2}[g.t][i], g.k)
				}
			}
			// Into a slot of its own, and in place (as the kernel's
			// builder arranges where the chain's input ends there).
			for _, dst := range []int32{3, 0} {
				vs := [][]float64{slices.Clone(a), t1, t2, make([]float64, n)}
				runKernel([]kinstr{{op: opGuards, a: 0, dst: dst, tests: tests}}, vs, nil, n, 0)
				for i := 0; i < n; i++ {
					if !sameBits(vs[dst][i], want[i]) {
						t.Errorf("tests %v, n=%d %s, dst s%d: element %d = %v, want %v", tests, n, inside, dst, i, vs[dst][i], want[i])
					}
				}
			}
		}
	}
}
