package eval

import (
	"math"

	"bellcheck/engine/special"
)

// runKernel applies a kernel to m elements: vs holds the slots (each with at
// least m elements), ss the scalar operands, off the offset of the first
// element in the vectors (for formPack).
func runKernel(kern []kinstr, vs [][]float64, ss []float64, m, off int) {
	for i := range kern {
		in := &kern[i]
		d := vs[in.dst][:m]
		if in.op >= opLin {
			switch in.op {
			case opLin:
				linLoop(in, d, vs, ss)
			case opQuad:
				quadLoop(in, d, vs, ss)
			case opGuards:
				guardChain(in.tests, d, vs[in.a][:m], vs)
			}
			continue
		}
		switch in.form {
		case formV:
			unaryLoop(in, d, vs[in.a][:m])
		case formVV:
			binaryVV(in, d, vs[in.a][:m], vs[in.b][:m])
		case formVS:
			binaryVS(in, d, vs[in.a][:m], ss[in.b])
		case formSV:
			binarySV(in, d, ss[in.a], vs[in.b][:m])
		case formVVV:
			binomLogitLoop(d, vs[in.a][:m], vs[in.b][:m], vs[in.c][:m])
		case formPack:
			el := in.elems[off : off+m]
			for j := range d {
				d[j] = ss[el[j]]
			}
		}
	}
}

// binomLogitLoop computes opBinomLogit elementwise.
func binomLogitLoop(d, eta, k, nk []float64) {
	eta, k, nk = eta[:len(d)], k[:len(d)], nk[:len(d)]
	for i := range d {
		d[i] = binomLogit(eta[i], k[i], nk[i])
	}
}

// fusedScalars returns the c and s of a fused instruction.
func fusedScalars(in *kinstr, ss []float64) (c, s float64) {
	c, s = in.k, in.k2
	if in.sa >= 0 {
		c = ss[in.sa]
		if in.flags&flagNegC != 0 {
			c = -c
		}
	}
	if in.sb >= 0 {
		s = ss[in.sb]
		if in.flags&flagNegS != 0 {
			s = -s
		}
	}
	return c, s
}

// linLoop computes (a + c) + s*b, or with b^2; the explicit conversions
// round each product, as the unfused operations do.
func linLoop(in *kinstr, d []float64, vs [][]float64, ss []float64) {
	c, s := fusedScalars(in, ss)
	b := vs[in.b][:len(d)]
	sq := in.flags&flagSqB != 0
	if in.flags&flagShiftB != 0 {
		e := in.k3
		switch {
		case in.flags&flagNoA != 0:
			linCSSqShift(d, c, s, b, e)
		case in.flags&flagNoC != 0:
			linASSqShift(d, vs[in.a], s, b, e)
		default:
			linACSSqShift(d, vs[in.a], c, s, b, e)
		}
		return
	}
	switch {
	case in.flags&flagNoA != 0 && !sq:
		linCS(d, c, s, b)
	case in.flags&flagNoA != 0:
		linCSSq(d, c, s, b)
	case in.flags&flagNoC != 0 && !sq:
		linAS(d, vs[in.a], s, b)
	case in.flags&flagNoC != 0:
		linASSq(d, vs[in.a], s, b)
	case !sq:
		linACS(d, vs[in.a], c, s, b)
	default:
		linACSSq(d, vs[in.a], c, s, b)
	}
}

// quadLoop computes (a + c)^2 times or over k2.
func quadLoop(in *kinstr, d []float64, vs [][]float64, ss []float64) {
	c, _ := fusedScalars(in, ss)
	k := in.k2
	a := vs[in.a][:len(d)]
	if in.flags&flagNoC != 0 {
		c = 0 // x + 0 == x but for the sign of a zero, which squaring drops
	}
	switch {
	case in.flags&flagNoK != 0:
		quadV(d, a, c)
	case in.flags&flagDiv != 0:
		quadDivV(d, a, c, k)
	default:
		quadMulV(d, a, c, k)
	}
}

func unaryLoop(in *kinstr, d, a []float64) {
	a = a[:len(d)]
	k := in.k
	switch in.op {
	case opNeg:
		negV(d, a)
	case opSq:
		sqV(d, a)
	case opRecip:
		divSV(d, 1, a)
	case opSqrt:
		for i := range d {
			d[i] = math.Sqrt(a[i])
		}
	case opExp:
		for i := range d {
			d[i] = special.Exp(a[i])
		}
	case opLog:
		for i := range d {
			d[i] = math.Log(a[i])
		}
	case opAbs:
		for i := range d {
			d[i] = math.Abs(a[i])
		}
	case opAddK:
		addVS(d, a, k)
	case opMulK:
		mulVS(d, a, k)
	case opDivK:
		divVS(d, a, k)
	case opSubKR:
		subSV(d, k, a)
	case opDivKR:
		divSV(d, k, a)
	default:
		f := ops[in.op].value
		for i := range d {
			d[i] = f(a[i], 0, k)
		}
	}
}

func binaryVV(in *kinstr, d, a, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	switch in.op {
	case opAdd:
		addVV(d, a, b)
	case opSub:
		subVV(d, a, b)
	case opMul:
		mulVV(d, a, b)
	case opDiv:
		divVV(d, a, b)
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		guardLoop(in.op, d, a, b, in.k)
	default:
		f := ops[in.op].value
		k := in.k
		for i := range d {
			d[i] = f(a[i], b[i], k)
		}
	}
}

func binaryVS(in *kinstr, d, a []float64, s float64) {
	a = a[:len(d)]
	switch in.op {
	case opAdd:
		addVS(d, a, s)
	case opSub:
		subVS(d, a, s)
	case opMul:
		mulVS(d, a, s)
	case opDiv:
		divVS(d, a, s)
	default:
		f := ops[in.op].value
		k := in.k
		for i := range d {
			d[i] = f(a[i], s, k)
		}
	}
}

func binarySV(in *kinstr, d []float64, s float64, b []float64) {
	b = b[:len(d)]
	switch in.op {
	case opAdd:
		addSV(d, s, b)
	case opSub:
		subSV(d, s, b)
	case opMul:
		mulSV(d, s, b)
	case opDiv:
		divSV(d, s, b)
	default:
		f := ops[in.op].value
		k := in.k
		for i := range d {
			d[i] = f(s, b[i], k)
		}
	}
}

// linSum is sum4 (squares: sumSq4) of the values of an opLin over m
// elements, without storing them: the same numbers added in the same order.
func linSum(in *kinstr, vs [][]float64, ss []float64, m int, squares bool) float64 {
	c, s := fusedScalars(in, ss)
	b := vs[in.b][:m]
	var a []float64
	if in.flags&flagNoA == 0 {
		a = vs[in.a][:m]
	}
	noC := in.flags&flagNoC != 0
	var s0, s1, s2, s3 float64
	i := 0
	switch {
	case a != nil && noC:
		for ; i+4 <= m; i += 4 {
			aw, bw := a[i:i+4:i+4], b[i:i+4:i+4]
			t0 := aw[0] + float64(s*bw[0])
			t1 := aw[1] + float64(s*bw[1])
			t2 := aw[2] + float64(s*bw[2])
			t3 := aw[3] + float64(s*bw[3])
			if squares {
				t0, t1, t2, t3 = t0*t0, t1*t1, t2*t2, t3*t3
			}
			s0 += t0
			s1 += t1
			s2 += t2
			s3 += t3
		}
	case a != nil:
		for ; i+4 <= m; i += 4 {
			aw, bw := a[i:i+4:i+4], b[i:i+4:i+4]
			t0 := (aw[0] + c) + float64(s*bw[0])
			t1 := (aw[1] + c) + float64(s*bw[1])
			t2 := (aw[2] + c) + float64(s*bw[2])
			t3 := (aw[3] + c) + float64(s*bw[3])
			if squares {
				t0, t1, t2, t3 = t0*t0, t1*t1, t2*t2, t3*t3
			}
			s0 += t0
			s1 += t1
			s2 += t2
			s3 += t3
		}
	default:
		for ; i+4 <= m; i += 4 {
			bw := b[i : i+4 : i+4]
			t0 := c + float64(s*bw[0])
			t1 := c + float64(s*bw[1])
			t2 := c + float64(s*bw[2])
			t3 := c + float64(s*bw[3])
			if squares {
				t0, t1, t2, t3 = t0*t0, t1*t1, t2*t2, t3*t3
			}
			s0 += t0
			s1 += t1
			s2 += t2
			s3 += t3
		}
	}
	for ; i < m; i++ {
		var t float64
		switch {
		case a != nil && noC:
			t = a[i] + float64(s*b[i])
		case a != nil:
			t = (a[i] + c) + float64(s*b[i])
		default:
			t = c + float64(s*b[i])
		}
		if squares {
			t = t * t
		}
		s0 += t
	}
	return (s0 + s1) + (s2 + s3)
}

// sum4 adds up v with four partial sums (the additions of one chain do not
// wait for each other).
func sum4(v []float64) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(v); i += 4 {
		w := v[i : i+4 : i+4]
		s0 += w[0]
		s1 += w[1]
		s2 += w[2]
		s3 += w[3]
	}
	for ; i < len(v); i++ {
		s0 += v[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// sumSq4 adds up the squares of v with four partial sums.
func sumSq4(v []float64) float64 {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(v); i += 4 {
		w := v[i : i+4 : i+4]
		s0 += w[0] * w[0]
		s1 += w[1] * w[1]
		s2 += w[2] * w[2]
		s3 += w[3] * w[3]
	}
	for ; i < len(v); i++ {
		s0 += v[i] * v[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// lseState accumulates log(sum e^x) as m + log(s), s = sum e^(x-m).
type lseState struct {
	m, s float64
}

func (st *lseState) reset() { st.m, st.s = math.Inf(-1), 0 }

func (st *lseState) add(v []float64) {
	cm := math.Inf(-1)
	for _, x := range v {
		cm = max(cm, x) // max propagates NaN
	}
	if cm != cm || math.IsInf(cm, 1) {
		st.m, st.s = cm, 1
		return
	}
	if math.IsInf(cm, -1) || st.m != st.m || math.IsInf(st.m, 1) {
		return
	}
	var cs float64
	for _, x := range v {
		cs += special.Exp(x - cm)
	}
	switch {
	case cm > st.m:
		st.s = st.s*special.Exp(st.m-cm) + cs
		st.m = cm
	default:
		st.s += cs * special.Exp(cm-st.m)
	}
}

func (st *lseState) value() float64 {
	if st.s == 0 || math.IsInf(st.m, 0) || st.m != st.m {
		return st.m
	}
	return st.m + math.Log(st.s)
}
