package special

import "math"

// Exp returns e^x, within 2 units in the last place of math.Exp (which is
// itself within one of the true value): TestExpAgainstMath. Go compiled to
// WebAssembly runs math.Exp in pure Go, with a division and math.Ldexp,
// at 47 ns a call on the project's machines; Exp takes 17 there and 6.4
// natively (math.Exp's assembly: 12.8). The engine's sums take it on every
// node of its rules and in the compiled model's exp.
//
// The method is the usual table-driven reduction: x = (k/N) log 2 + r with
// N = 128 and |r| <= log(2)/(2N), e^x = 2^(k/N) e^r, 2^(k/N) = 2^(k div N)
// times a tabulated 2^(j/N) (held as a double and its relative rounding
// error), and e^r - 1 by its Taylor polynomial of degree 5 (the first
// term left out is below 6e-19 for |r| <= 0.0028). Outside [-708, 709]
// (results near overflow or subnormal), for NaN and the infinities, it is
// math.Exp.
func Exp(x float64) float64 {
	if !(x >= -708 && x <= 709) {
		return math.Exp(x)
	}
	kd := math.RoundToEven(x * (expN / math.Ln2))
	// kd ln2HiN is exact (ln2HiN has 32 significant bits, |kd| < 2^17).
	r := x - kd*ln2HiN - kd*ln2LoN
	k := int64(kd)
	j := k & (expN - 1)
	// 2^(k div N) 2^(j/N): the table's entry, its exponent raised by k div
	// N (between -1022 and 1023 on the range above: a normal double).
	scale := math.Float64frombits(math.Float64bits(expTable[j]) + uint64(k>>expBits)<<52)
	p := r * (1 + r*(1.0/2+r*(1.0/6+r*(1.0/24+r*(1.0/120)))))
	return scale + scale*(expTableErr[j]+p)
}

// expBits: the table holds 2^(j/N) for j < N = 2^expBits.
const (
	expBits = 7
	expN    = 1 << expBits
)

// ln2HiN + ln2LoN is log(2)/N: ln2HiN keeps 32 significant bits (written
// by TestExpTable), ln2LoN the rest, exact in Go's constant arithmetic.
const ln2LoN = math.Ln2/expN - ln2HiN
