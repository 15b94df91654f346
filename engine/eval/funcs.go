package eval

import (
	"math"

	"bellcheck/engine/special"
)

// funcImpl builds a call of a model-language function from its arguments'
// nodes (their number is already checked against model.Funcs).
type funcImpl func(b *builder, args []int32) int32

// impls holds the implementation of every function of model.Funcs.
var impls = map[string]funcImpl{
	"exp":      unary(opExp),
	"log":      unary(opLog),
	"log1p":    unary(opLog1p),
	"expm1":    unary(opExpm1),
	"sqrt":     unary(opSqrt),
	"abs":      unary(opAbs),
	"sin":      unary(opSin),
	"cos":      unary(opCos),
	"tan":      unary(opTan),
	"atan":     unary(opAtan),
	"sinh":     unary(opSinh),
	"cosh":     unary(opCosh),
	"tanh":     unary(opTanh),
	"erf":      unary(opErf),
	"erfc":     unary(opErfc),
	"lgamma":   unary(opLgamma),
	"digamma":  unary(opDigamma),
	"logistic": unary(opLogistic),
	"log1pexp": unary(opLog1pExp),
	"pow": func(b *builder, a []int32) int32 {
		return b.bin(opPow, a[0], a[1], 0)
	},
	"min":       reducer(opMin, opRMin),
	"max":       reducer(opMax, opRMax),
	"logsumexp": reducer(opLse, opRLse),
	"sum": func(b *builder, a []int32) int32 {
		return b.sum(a[0])
	},
	"mean": func(b *builder, a []int32) int32 {
		n := b.nd(a[0]).n
		if n == 0 {
			return a[0]
		}
		return b.un(opDivK, b.sum(a[0]), float64(n))
	},
	"len": func(b *builder, a []int32) int32 {
		return b.constant(float64(max(b.nd(a[0]).n, 1)))
	},

	"ld_normal":      ldNormal,
	"ld_student":     ldStudent,
	"ld_cauchy":      ldCauchy,
	"ld_laplace":     ldLaplace,
	"ld_logistic":    ldLogistic,
	"ld_gamma":       ldGamma,
	"ld_invgamma":    ldInvGamma,
	"ld_beta":        ldBeta,
	"ld_exponential": ldExponential,
	"ld_poisson":     ldPoisson,
	"ld_binomial":    ldBinomial,
	"ld_lognormal":   ldLogNormal,
}

func unary(op opcode) funcImpl {
	return func(b *builder, a []int32) int32 { return b.un(op, a[0], 0) }
}

// reducer implements min, max and logsumexp: of one vector's elements, or
// of several scalars by the binary operation.
func reducer(binary, reduce opcode) funcImpl {
	return func(b *builder, a []int32) int32 {
		if len(a) == 1 {
			return b.reduceVector(reduce, a[0])
		}
		acc := a[0]
		for _, x := range a[1:] {
			if b.nd(x).vector() || b.nd(acc).vector() {
				return b.fail(ErrShape, "min, max and logsumexp take one vector or several scalars")
			}
			acc = b.bin(binary, acc, x, 0)
		}
		return acc
	}
}

// reduceVector builds min, max or logsumexp of a vector (a scalar is its own).
func (b *builder) reduceVector(op opcode, v int32) int32 {
	x := b.nd(v)
	if !x.vector() {
		return v
	}
	if x.cst {
		switch op {
		case opRMin, opRMax:
			m := x.vec[0]
			for _, e := range x.vec[1:] {
				if op == opRMin {
					m = min(m, e)
				} else {
					m = max(m, e)
				}
			}
			return b.constant(m)
		case opRLse:
			return b.constant(special.LogSumExp(x.vec))
		}
	}
	return b.reduce(op, v)
}

// Helpers that keep the family expansions readable.
func (b *builder) plus(x, y int32) int32  { return b.bin(opAdd, x, y, 0) }
func (b *builder) minus(x, y int32) int32 { return b.bin(opSub, x, y, 0) }
func (b *builder) times(x, y int32) int32 { return b.bin(opMul, x, y, 0) }
func (b *builder) over(x, y int32) int32  { return b.bin(opDiv, x, y, 0) }
func (b *builder) log(x int32) int32      { return b.un(opLog, x, 0) }
func (b *builder) lgamma(x int32) int32   { return b.un(opLgamma, x, 0) }
func (b *builder) addK(x int32, k float64) int32 {
	return b.un(opAddK, x, k)
}
func (b *builder) mulK(x int32, k float64) int32 {
	return b.un(opMulK, x, k)
}
func (b *builder) guard(op opcode, v, t int32, k float64) int32 {
	if b.provablyPasses(op, t, k, false) {
		return v
	}
	return b.bin(op, v, t, k)
}

// guardRate is guard for a rate or scale that the family's formula uses
// only through log(t) and products t*x: there an exp(x) that underflows to
// 0 still gives the right value (log(exp(x)) is x), so t > 0 need not be
// tested either.
func (b *builder) guardRate(op opcode, v, t int32, k float64) int32 {
	if b.provablyPasses(op, t, k, true) {
		return v
	}
	return b.bin(op, v, t, k)
}

var halfLog2Pi = 0.5 * math.Log(2*math.Pi)

// ldNormal: -(x-mean)^2/(2 sd^2) - log(sd) - log(2 pi)/2, sd > 0.
func ldNormal(b *builder, a []int32) int32 {
	x, mean, sd := a[0], a[1], a[2]
	d := b.minus(x, mean)
	v := b.un(opNeg, b.over(b.un(opSq, d, 0), b.mulK(b.un(opSq, sd, 0), 2)), 0)
	v = b.addK(b.minus(v, b.log(sd)), -halfLog2Pi)
	return b.guard(opGuardGT, v, sd, 0)
}

// ldStudent: lgamma((nu+1)/2) - lgamma(nu/2) - log(nu pi)/2 - log(scale)
// - (nu+1)/2 log(1 + z^2/nu), z = (x-loc)/scale; nu > 0, scale > 0.
func ldStudent(b *builder, a []int32) int32 {
	x, nu, loc, scale := a[0], a[1], a[2], a[3]
	z := b.over(b.minus(x, loc), scale)
	h := b.mulK(b.addK(nu, 1), 0.5)
	c := b.minus(b.lgamma(h), b.lgamma(b.mulK(nu, 0.5)))
	c = b.minus(c, b.mulK(b.log(b.mulK(nu, math.Pi)), 0.5))
	c = b.minus(c, b.log(scale))
	v := b.minus(c, b.times(h, b.un(opLog1p, b.over(b.un(opSq, z, 0), nu), 0)))
	v = b.guard(opGuardGT, v, nu, 0)
	return b.guard(opGuardGT, v, scale, 0)
}

// ldCauchy: -log(pi scale) - log(1 + z^2), z = (x-loc)/scale; scale > 0.
func ldCauchy(b *builder, a []int32) int32 {
	x, loc, scale := a[0], a[1], a[2]
	z := b.over(b.minus(x, loc), scale)
	v := b.minus(b.un(opNeg, b.log(b.mulK(scale, math.Pi)), 0), b.un(opLog1p, b.un(opSq, z, 0), 0))
	return b.guard(opGuardGT, v, scale, 0)
}

// ldLaplace: -log(2 scale) - |x-loc|/scale; scale > 0.
func ldLaplace(b *builder, a []int32) int32 {
	x, loc, scale := a[0], a[1], a[2]
	v := b.minus(b.un(opNeg, b.log(b.mulK(scale, 2)), 0), b.over(b.un(opAbs, b.minus(x, loc), 0), scale))
	return b.guard(opGuardGT, v, scale, 0)
}

// ldLogistic: -z - log(scale) - 2 log(1 + e^-z), z = (x-loc)/scale; scale > 0.
func ldLogistic(b *builder, a []int32) int32 {
	x, loc, scale := a[0], a[1], a[2]
	z := b.over(b.minus(x, loc), scale)
	v := b.minus(b.un(opNeg, z, 0), b.log(scale))
	v = b.minus(v, b.mulK(b.un(opLog1pExp, b.un(opNeg, z, 0), 0), 2))
	return b.guard(opGuardGT, v, scale, 0)
}

// ldGamma: shape log(rate) - lgamma(shape) + (shape-1) log(x) - rate x;
// x > 0, shape > 0, rate > 0.
func ldGamma(b *builder, a []int32) int32 {
	x, shape, rate := a[0], a[1], a[2]
	v := b.minus(b.times(shape, b.log(rate)), b.lgamma(shape))
	v = b.plus(v, b.times(b.addK(shape, -1), b.log(x)))
	v = b.minus(v, b.times(rate, x))
	v = b.guard(opGuardGT, v, x, 0)
	v = b.guard(opGuardGT, v, shape, 0)
	return b.guardRate(opGuardGT, v, rate, 0)
}

// ldInvGamma: shape log(scale) - lgamma(shape) - (shape+1) log(x) - scale/x;
// x > 0, shape > 0, scale > 0.
func ldInvGamma(b *builder, a []int32) int32 {
	x, shape, scale := a[0], a[1], a[2]
	v := b.minus(b.times(shape, b.log(scale)), b.lgamma(shape))
	v = b.minus(v, b.times(b.addK(shape, 1), b.log(x)))
	v = b.minus(v, b.over(scale, x))
	v = b.guard(opGuardGT, v, x, 0)
	v = b.guard(opGuardGT, v, shape, 0)
	return b.guardRate(opGuardGT, v, scale, 0)
}

// ldBeta: (a-1) log(x) + (b-1) log(1-x) - lgamma(a) - lgamma(b) + lgamma(a+b);
// 0 < x < 1, a > 0, b > 0.
func ldBeta(b *builder, a []int32) int32 {
	x, p, q := a[0], a[1], a[2]
	v := b.plus(b.times(b.addK(p, -1), b.log(x)), b.times(b.addK(q, -1), b.un(opLog1p, b.un(opNeg, x, 0), 0)))
	v = b.minus(b.minus(v, b.lgamma(p)), b.lgamma(q))
	v = b.plus(v, b.lgamma(b.plus(p, q)))
	v = b.guard(opGuardGT, v, x, 0)
	v = b.guard(opGuardLT, v, x, 1)
	v = b.guard(opGuardGT, v, p, 0)
	return b.guard(opGuardGT, v, q, 0)
}

// ldExponential: log(rate) - rate x; x >= 0, rate > 0.
func ldExponential(b *builder, a []int32) int32 {
	x, rate := a[0], a[1]
	v := b.minus(b.log(rate), b.times(rate, x))
	v = b.guard(opGuardGE, v, x, 0)
	return b.guardRate(opGuardGT, v, rate, 0)
}

// ldPoisson: k log(rate) - rate - lgamma(k+1); k >= 0, rate >= 0 (with
// 0 log 0 = 0, so a zero rate gives log 1 = 0 at k = 0). Non-integer k use
// the same formula (its continuous extension through lgamma). For a
// log-link rate exp(eta) the rewrites make k log(rate) the product k*eta
// (summed over data, a linear form in the parameters), so one exp per
// element is left, and the guard rate >= 0 always passes.
func ldPoisson(b *builder, a []int32) int32 {
	k, rate := a[0], a[1]
	v := b.minus(b.bin(opXlogy, k, rate, 0), rate)
	v = b.minus(v, b.lgamma(b.addK(k, 1)))
	v = b.guard(opGuardGE, v, k, 0)
	return b.guard(opGuardGE, v, rate, 0)
}

// ldBinomial: lgamma(n+1) - lgamma(k+1) - lgamma(n-k+1) + k log(p) +
// (n-k) log(1-p); 0 <= k <= n, 0 <= p <= 1 (with 0 log 0 = 0).
//
// For p = logistic(eta) the likelihood terms are -(k log1pexp(-eta) +
// (n-k) log1pexp(eta)) (rewrite.go), over data one opBinomLogit per
// element, and p is in [0, 1] without a test.
func ldBinomial(b *builder, a []int32) int32 {
	k, n, p := a[0], a[1], a[2]
	nk := b.minus(n, k)
	v := b.minus(b.lgamma(b.addK(n, 1)), b.lgamma(b.addK(k, 1)))
	v = b.minus(v, b.lgamma(b.addK(nk, 1)))
	if pn := b.nd(p); rewriteAlgebra && pn.op == opLogistic {
		v = b.plus(v, b.binomLogitNode(pn.a, p, k, nk))
		v = b.guard(opGuardGE, v, k, 0)
		return b.guard(opGuardGE, v, nk, 0)
	}
	v = b.plus(v, b.bin(opXlogy, k, p, 0))
	v = b.plus(v, b.bin(opXlog1py, nk, b.un(opNeg, p, 0), 0))
	v = b.guard(opGuardGE, v, k, 0)
	v = b.guard(opGuardGE, v, nk, 0)
	v = b.guard(opGuardGE, v, p, 0)
	return b.guard(opGuardLE, v, p, 1)
}

// ldLogNormal: -(log(x)-mu)^2/(2 sigma^2) - log(x sigma) - log(2 pi)/2;
// x > 0, sigma > 0.
func ldLogNormal(b *builder, a []int32) int32 {
	x, mu, sigma := a[0], a[1], a[2]
	lx := b.log(x)
	d := b.minus(lx, mu)
	v := b.un(opNeg, b.over(b.un(opSq, d, 0), b.mulK(b.un(opSq, sigma, 0), 2)), 0)
	v = b.minus(b.minus(v, lx), b.log(sigma))
	v = b.addK(v, -halfLog2Pi)
	v = b.guard(opGuardGT, v, x, 0)
	return b.guard(opGuardGT, v, sigma, 0)
}
