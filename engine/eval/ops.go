package eval

import (
	"math"

	"bellcheck/engine/special"
)

// opcode names one operation of the tape.
type opcode uint8

const (
	opNone opcode = iota

	// Unary operations on a; K-operations also use the immediate k.
	opNeg
	opSq
	opRecip
	opSqrt
	opExp
	opLog
	opLog1p
	opExpm1
	opAbs
	opSin
	opCos
	opTan
	opAtan
	opSinh
	opCosh
	opTanh
	opErf
	opErfc
	opLgamma
	opDigamma
	opLogistic
	opLog1pExp
	opAddK  // a + k
	opMulK  // a * k
	opDivK  // a / k
	opSubKR // k - a
	opDivKR // k / a
	opPowK  // a ^ k
	opPowKR // k ^ a

	// Binary operations on a and b.
	opAdd
	opSub
	opMul
	opDiv
	opPow
	opMin
	opMax
	opLse     // log(e^a + e^b)
	opXlogy   // a log(b), 0 when a == 0 and b >= 0
	opXlog1py // a log(1 + b), 0 when a == 0 and b >= -1
	// Support guards: a where b satisfies the test against k, -Inf where it
	// does not, NaN where b is NaN.
	opGuardGT // b > k
	opGuardGE // b >= k
	opGuardLT // b < k
	opGuardLE // b <= k

	// Reductions of a vector a to a scalar.
	opSum
	opSumSq
	opRMin
	opRMax
	opRLse

	// Leaves and structure.
	opParam // parameter number k
	opConst // a constant scalar or vector
	opPack  // a vector of scalars (a vector literal with variable elements)
	// opBinomLogit is k log p + (n-k) log(1-p) with p = logistic(a), the
	// counts k (b) and n-k (elems[0]) constant data: see binomLogit.
	opBinomLogit
	opLoop // a vector loop (scalar tape only): a is the loop's index

	// Fused kernel operations (value mode only; see fuse.go).
	opLin  // (a + c) + s*b
	opQuad // (a + c)^2 * k2 (or / k2)
	// opGuards is a chain of support guards on a: each test in turn.
	opGuards

	numOps
)

// opClass says what kind of operation an opcode is.
type opClass uint8

const (
	classLeaf opClass = iota
	classUnary
	classBinary
	classReduce
	classTernary // opBinomLogit: a varies, its two data operands do not
)

// opInfo describes an operation: its name (for dumps and tests), its class,
// its value and, for unary and binary operations, its partial derivatives.
type opInfo struct {
	name  string
	class opClass
	// value computes the operation (b is ignored by unary operations).
	value func(a, b, k float64) float64
	// d1 gives f, f' and f'' of a unary operation at a.
	d1 func(a, k float64) (f, f1, f2 float64)
	// d2 gives f and its first and second partial derivatives of a binary
	// operation at (a, b).
	d2 func(a, b, k float64) (f, fa, fb, faa, fab, fbb float64)
}

var ops [numOps]opInfo

const twoOverSqrtPi = 2 / math.SqrtPi

func init() {
	un := func(op opcode, name string, value func(a, k float64) float64, d1 func(a, k float64) (f, f1, f2 float64)) {
		ops[op] = opInfo{name: name, class: classUnary, value: func(a, _, k float64) float64 { return value(a, k) }, d1: d1}
	}
	bin := func(op opcode, name string, value func(a, b, k float64) float64, d2 func(a, b, k float64) (f, fa, fb, faa, fab, fbb float64)) {
		ops[op] = opInfo{name: name, class: classBinary, value: value, d2: d2}
	}
	red := func(op opcode, name string) { ops[op] = opInfo{name: name, class: classReduce} }

	un(opNeg, "neg", func(a, _ float64) float64 { return -a },
		func(a, _ float64) (float64, float64, float64) { return -a, -1, 0 })
	un(opSq, "sq", func(a, _ float64) float64 { return a * a },
		func(a, _ float64) (float64, float64, float64) { return a * a, 2 * a, 2 })
	un(opRecip, "recip", func(a, _ float64) float64 { return 1 / a },
		func(a, _ float64) (float64, float64, float64) { f := 1 / a; return f, -f * f, 2 * f * f * f })
	un(opSqrt, "sqrt", func(a, _ float64) float64 { return math.Sqrt(a) },
		func(a, _ float64) (float64, float64, float64) {
			s := math.Sqrt(a)
			return s, 0.5 / s, -0.25 / (s * a)
		})
	un(opExp, "exp", func(a, _ float64) float64 { return special.Exp(a) },
		func(a, _ float64) (float64, float64, float64) { e := special.Exp(a); return e, e, e })
	un(opLog, "log", func(a, _ float64) float64 { return math.Log(a) },
		func(a, _ float64) (float64, float64, float64) { r := 1 / a; return math.Log(a), r, -r * r })
	un(opLog1p, "log1p", func(a, _ float64) float64 { return math.Log1p(a) },
		func(a, _ float64) (float64, float64, float64) { r := 1 / (1 + a); return math.Log1p(a), r, -r * r })
	un(opExpm1, "expm1", func(a, _ float64) float64 { return math.Expm1(a) },
		func(a, _ float64) (float64, float64, float64) { e := special.Exp(a); return math.Expm1(a), e, e })
	un(opAbs, "abs", func(a, _ float64) float64 { return math.Abs(a) },
		func(a, _ float64) (float64, float64, float64) {
			switch {
			case a > 0:
				return a, 1, 0
			case a < 0:
				return -a, -1, 0
			}
			return math.Abs(a), 0, 0 // 0 (a subgradient) at 0; NaN stays NaN
		})
	un(opSin, "sin", func(a, _ float64) float64 { return math.Sin(a) },
		func(a, _ float64) (float64, float64, float64) { s, c := math.Sincos(a); return s, c, -s })
	un(opCos, "cos", func(a, _ float64) float64 { return math.Cos(a) },
		func(a, _ float64) (float64, float64, float64) { s, c := math.Sincos(a); return c, -s, -c })
	un(opTan, "tan", func(a, _ float64) float64 { return math.Tan(a) },
		func(a, _ float64) (float64, float64, float64) {
			t := math.Tan(a)
			s := 1 + t*t
			return t, s, 2 * t * s
		})
	un(opAtan, "atan", func(a, _ float64) float64 { return math.Atan(a) },
		func(a, _ float64) (float64, float64, float64) {
			r := 1 / (1 + a*a)
			return math.Atan(a), r, -2 * a * r * r
		})
	un(opSinh, "sinh", func(a, _ float64) float64 { return math.Sinh(a) },
		func(a, _ float64) (float64, float64, float64) { s := math.Sinh(a); return s, math.Cosh(a), s })
	un(opCosh, "cosh", func(a, _ float64) float64 { return math.Cosh(a) },
		func(a, _ float64) (float64, float64, float64) { c := math.Cosh(a); return c, math.Sinh(a), c })
	un(opTanh, "tanh", func(a, _ float64) float64 { return math.Tanh(a) },
		func(a, _ float64) (float64, float64, float64) {
			t := math.Tanh(a)
			s := 1 - t*t
			return t, s, -2 * t * s
		})
	un(opErf, "erf", func(a, _ float64) float64 { return math.Erf(a) },
		func(a, _ float64) (float64, float64, float64) {
			g := twoOverSqrtPi * special.Exp(-a*a)
			return math.Erf(a), g, -2 * a * g
		})
	un(opErfc, "erfc", func(a, _ float64) float64 { return math.Erfc(a) },
		func(a, _ float64) (float64, float64, float64) {
			g := twoOverSqrtPi * special.Exp(-a*a)
			return math.Erfc(a), -g, 2 * a * g
		})
	un(opLgamma, "lgamma", func(a, _ float64) float64 { return special.Lgamma(a) },
		func(a, _ float64) (float64, float64, float64) {
			return special.Lgamma(a), special.Digamma(a), special.Trigamma(a)
		})
	un(opDigamma, "digamma", func(a, _ float64) float64 { return special.Digamma(a) },
		func(a, _ float64) (float64, float64, float64) {
			return special.Digamma(a), special.Trigamma(a), special.Polygamma(2, a)
		})
	un(opLogistic, "logistic", func(a, _ float64) float64 { return special.Logistic(a) },
		func(a, _ float64) (float64, float64, float64) {
			// s' = s(1-s) = s(a) s(-a), s'' = s'(1-2s) = s'(s(-a) - s(a)):
			// no cancellation in 1-s for large a.
			sp, sm := special.Logistic(a), special.Logistic(-a)
			d := sp * sm
			return sp, d, d * (sm - sp)
		})
	un(opLog1pExp, "log1pexp", func(a, _ float64) float64 { return special.Log1pExp(a) },
		func(a, _ float64) (float64, float64, float64) {
			sp, sm := special.Logistic(a), special.Logistic(-a)
			return special.Log1pExp(a), sp, sp * sm
		})
	un(opAddK, "addk", func(a, k float64) float64 { return a + k },
		func(a, k float64) (float64, float64, float64) { return a + k, 1, 0 })
	un(opMulK, "mulk", func(a, k float64) float64 { return a * k },
		func(a, k float64) (float64, float64, float64) { return a * k, k, 0 })
	un(opDivK, "divk", func(a, k float64) float64 { return a / k },
		func(a, k float64) (float64, float64, float64) { return a / k, 1 / k, 0 })
	un(opSubKR, "subkr", func(a, k float64) float64 { return k - a },
		func(a, k float64) (float64, float64, float64) { return k - a, -1, 0 })
	un(opDivKR, "divkr", func(a, k float64) float64 { return k / a },
		func(a, k float64) (float64, float64, float64) {
			f := k / a
			return f, -f / a, 2 * f / (a * a)
		})
	un(opPowK, "powk", func(a, k float64) float64 { return math.Pow(a, k) },
		func(a, k float64) (float64, float64, float64) {
			return math.Pow(a, k), k * math.Pow(a, k-1), k * (k - 1) * math.Pow(a, k-2)
		})
	un(opPowKR, "powkr", func(a, k float64) float64 { return math.Pow(k, a) },
		func(a, k float64) (float64, float64, float64) {
			f := math.Pow(k, a)
			l := math.Log(k)
			return f, f * l, f * l * l
		})

	bin(opAdd, "add", func(a, b, _ float64) float64 { return a + b },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) { return a + b, 1, 1, 0, 0, 0 })
	bin(opSub, "sub", func(a, b, _ float64) float64 { return a - b },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) { return a - b, 1, -1, 0, 0, 0 })
	bin(opMul, "mul", func(a, b, _ float64) float64 { return a * b },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) { return a * b, b, a, 0, 1, 0 })
	bin(opDiv, "div", func(a, b, _ float64) float64 { return a / b },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			f = a / b
			r := 1 / b
			return f, r, -f * r, 0, -r * r, 2 * f * r * r
		})
	bin(opPow, "pow", func(a, b, _ float64) float64 { return math.Pow(a, b) }, powPartials)
	bin(opMin, "min", func(a, b, _ float64) float64 { return min(a, b) },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			if a <= b {
				return min(a, b), 1, 0, 0, 0, 0
			}
			return min(a, b), 0, 1, 0, 0, 0
		})
	bin(opMax, "max", func(a, b, _ float64) float64 { return max(a, b) },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			if a >= b {
				return max(a, b), 1, 0, 0, 0, 0
			}
			return max(a, b), 0, 1, 0, 0, 0
		})
	bin(opLse, "lse", func(a, b, _ float64) float64 { return lse2(a, b) },
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			f = lse2(a, b)
			if math.IsInf(f, -1) {
				return f, 0, 0, 0, 0, 0
			}
			wa, wb := special.Exp(a-f), special.Exp(b-f)
			w := wa * wb
			return f, wa, wb, w, -w, w
		})
	bin(opXlogy, "xlogy", xlogy,
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			r := 1 / b
			if a == 0 {
				return xlogy(a, b, 0), math.Log(b), 0, 0, r, 0
			}
			return a * math.Log(b), math.Log(b), a * r, 0, r, -a * r * r
		})
	bin(opXlog1py, "xlog1py", xlog1py,
		func(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
			r := 1 / (1 + b)
			if a == 0 {
				return xlog1py(a, b, 0), math.Log1p(b), 0, 0, r, 0
			}
			return a * math.Log1p(b), math.Log1p(b), a * r, 0, r, -a * r * r
		})
	for _, g := range []struct {
		op   opcode
		name string
	}{{opGuardGT, "guardgt"}, {opGuardGE, "guardge"}, {opGuardLT, "guardlt"}, {opGuardLE, "guardle"}} {
		op := g.op
		ops[op] = opInfo{name: g.name, class: classBinary, value: func(a, b, k float64) float64 { return guard(op, a, b, k) }}
	}

	red(opSum, "sum")
	red(opSumSq, "sumsq")
	red(opRMin, "rmin")
	red(opRMax, "rmax")
	red(opRLse, "rlse")
	ops[opParam] = opInfo{name: "param"}
	ops[opConst] = opInfo{name: "const"}
	ops[opPack] = opInfo{name: "pack"}
	ops[opBinomLogit] = opInfo{name: "binomlogit", class: classTernary}
	ops[opLoop] = opInfo{name: "loop"}
	ops[opLin] = opInfo{name: "lin"}
	ops[opQuad] = opInfo{name: "quad"}
	ops[opGuards] = opInfo{name: "guards"}
}

// isGuard reports whether op is a support guard.
func isGuard(op opcode) bool { return op >= opGuardGT && op <= opGuardLE }

// guardPass reports whether t passes the guard's test against k.
func guardPass(op opcode, t, k float64) bool {
	switch op {
	case opGuardGT:
		return t > k
	case opGuardGE:
		return t >= k
	case opGuardLT:
		return t < k
	}
	return t <= k
}

// guard is the value of a support guard: v inside, -Inf outside, NaN when
// the tested value is NaN.
func guard(op opcode, v, t, k float64) float64 {
	if guardPass(op, t, k) {
		return v
	}
	return guardFail(t)
}

// lse2 is log(e^a + e^b) without overflow.
func lse2(a, b float64) float64 {
	m := max(a, b)
	if math.IsInf(m, 0) || m != m {
		return m // both -Inf, one +Inf, or NaN
	}
	return m + special.Log1pExpNeg(math.Abs(a-b))
}

func xlogy(a, b, _ float64) float64 {
	if a == 0 && b >= 0 {
		return 0
	}
	return a * math.Log(b)
}

func xlog1py(a, b, _ float64) float64 {
	if a == 0 && b >= -1 {
		return 0
	}
	return a * math.Log1p(b)
}

// powPartials gives the derivatives of a^b with both sides varying, as
// exp(b log a): d/da = b a^(b-1), d/db = a^b log a, and so on.
func powPartials(a, b, _ float64) (f, fa, fb, faa, fab, fbb float64) {
	f = math.Pow(a, b)
	p1 := math.Pow(a, b-1)
	fa = b * p1
	faa = b * (b - 1) * math.Pow(a, b-2)
	if a == 0 {
		// a^b is 0 (b > 0) or infinite (b < 0) near a = 0 whatever b: no
		// slope in b where it is 0.
		if b > 0 {
			return f, fa, 0, faa, 0, 0
		}
	}
	l := math.Log(a)
	return f, fa, f * l, faa, p1 * (1 + b*l), f * l * l
}

// binomLogit is k log p + nk log(1-p) with p = logistic(eta), the binomial
// log-likelihood on the logit scale without its constant. With
// log p = -log1pexp(-eta), log(1-p) = -log1pexp(eta) and
// log1pexp(x) = max(x, 0) + log1p(e^-|x|) it is
//
//	-((k + nk) log1p(e^-|eta|) + w |eta|),  w = nk if eta > 0, else k,
//
// a sum of terms of one sign for counts k, nk >= 0 (no cancellation), with
// one exp and one log1p. A zero count contributes 0 also at |eta| = Inf
// (0 log 0 = 0); NaN gives NaN.
func binomLogit(eta, k, nk float64) float64 {
	if eta != eta {
		return eta
	}
	ae := math.Abs(eta)
	s := special.Log1pExpNeg(ae)
	w := k
	if eta > 0 {
		w = nk
	}
	t := 0.0
	if w != 0 {
		t = w * ae
	}
	return -(float64((k+nk)*s) + t)
}

// binomLogitPartials returns binomLogit and its first two derivatives in
// eta: k s(-eta) - nk s(eta) and -(k + nk) s(eta) s(-eta), s = logistic,
// both logistic values from the one exp.
func binomLogitPartials(eta, k, nk float64) (f, f1, f2 float64) {
	if eta != eta {
		return eta, eta, eta
	}
	ae := math.Abs(eta)
	e := special.Exp(-ae)
	s := special.Log1pUnit(e)
	hi := 1 / (1 + e)      // logistic(|eta|)
	lo := e * hi           // logistic(-|eta|)
	w, sp, sm := k, lo, hi // sp = logistic(eta), sm = logistic(-eta)
	if eta > 0 {
		w, sp, sm = nk, hi, lo
	}
	t := 0.0
	if w != 0 {
		t = w * ae
	}
	n := k + nk
	return -(float64(n*s) + t), float64(k*sm) - float64(nk*sp), -n * float64(hi*lo)
}
