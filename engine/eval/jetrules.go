package eval

// unaryRule writes the jet of f(a) given f, f' and f” at a's value. The
// common dimensions are written out (no loops over a few numbers).
func (js *jetSpace) unaryRule(dst, a []float64, f, f1, f2 float64) {
	if f1-f1 != 0 || f2-f2 != 0 || f1 == 0 && f2 == 0 {
		js.unaryRuleSingular(dst, a, f, f1, f2)
		return
	}
	switch js.d {
	case 1:
		a, dst := (*[3]float64)(a), (*[3]float64)(dst)
		g0 := a[1]
		h0 := f2 * g0
		dst[0] = f
		dst[1] = f1 * g0
		dst[2] = f1*a[2] + h0*g0
		return
	case 2:
		a, dst := (*[6]float64)(a), (*[6]float64)(dst)
		g0, g1 := a[1], a[2]
		h0, h1 := f2*g0, f2*g1
		dst[0] = f
		dst[1] = f1 * g0
		dst[2] = f1 * g1
		dst[3] = f1*a[3] + h0*g0
		dst[4] = f1*a[4] + h0*g1
		dst[5] = f1*a[5] + h1*g1
		return
	case 3:
		a, dst := (*[10]float64)(a), (*[10]float64)(dst)
		g0, g1, g2 := a[1], a[2], a[3]
		h0, h1, h2 := f2*g0, f2*g1, f2*g2
		dst[0] = f
		dst[1] = f1 * g0
		dst[2] = f1 * g1
		dst[3] = f1 * g2
		dst[4] = f1*a[4] + h0*g0
		dst[5] = f1*a[5] + h0*g1
		dst[6] = f1*a[6] + h0*g2
		dst[7] = f1*a[7] + h1*g1
		dst[8] = f1*a[8] + h1*g2
		dst[9] = f1*a[9] + h2*g2
		return
	case 4:
		a, dst := (*[15]float64)(a), (*[15]float64)(dst)
		g0, g1, g2, g3 := a[1], a[2], a[3], a[4]
		h0, h1, h2, h3 := f2*g0, f2*g1, f2*g2, f2*g3
		dst[0] = f
		dst[1] = f1 * g0
		dst[2] = f1 * g1
		dst[3] = f1 * g2
		dst[4] = f1 * g3
		dst[5] = f1*a[5] + h0*g0
		dst[6] = f1*a[6] + h0*g1
		dst[7] = f1*a[7] + h0*g2
		dst[8] = f1*a[8] + h0*g3
		dst[9] = f1*a[9] + h1*g1
		dst[10] = f1*a[10] + h1*g2
		dst[11] = f1*a[11] + h1*g3
		dst[12] = f1*a[12] + h2*g2
		dst[13] = f1*a[13] + h2*g3
		dst[14] = f1*a[14] + h3*g3
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	dst[0] = f
	ag := a[1 : 1+d]
	dg := dst[1 : 1+d]
	ag = ag[:len(dg)]
	for i := range dg {
		dg[i] = f1 * ag[i]
	}
	aH := a[1+d:]
	dH := dst[1+d:]
	aH = aH[:len(dH)]
	t := 0
	for i := range ag {
		gi := f2 * ag[i]
		for _, gj := range ag[i:] {
			dH[t] = f1*aH[t] + gi*gj
			t++
		}
	}
}

// logRule writes the jet of log(a) (or log1p(a), with r = 1/(1+a)) as
// gradient u = r a.g and Hessian r a.H - u u^T: the same as unaryRule with
// f' = r, f” = -r^2, but without underflow of r^2 where a is huge.
func (js *jetSpace) logRule(dst, a []float64, f, r float64) {
	if r-r != 0 || r == 0 {
		js.unaryRuleSingular(dst, a, f, r, -r*r)
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	dst[0] = f
	u := dst[1 : 1+d]
	ag := a[1 : 1+d]
	ag = ag[:len(u)]
	for i := range u {
		u[i] = r * ag[i]
	}
	aH := a[1+d:]
	dH := dst[1+d:]
	aH = aH[:len(dH)]
	t := 0
	for i := range u {
		for _, uj := range u[i:] {
			dH[t] = r*aH[t] - u[i]*uj
			t++
		}
	}
}

// unaryRuleSingular is unaryRule where f' or f” is infinite or NaN: a
// derivative that is exactly zero in a (a parameter a does not depend on)
// stays zero instead of becoming NaN.
func (js *jetSpace) unaryRuleSingular(dst, a []float64, f, f1, f2 float64) {
	d := js.d
	dst[0] = f
	for i := 0; i < d; i++ {
		dst[1+i] = mulStructural(f1, a[1+i])
	}
	t := 1 + d
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			dst[t] = mulStructural(f1, a[t]) + mulStructural(f2, a[1+i]*a[1+j])
			t++
		}
	}
}

// binaryRule writes the jet of f(a, b) given its partial derivatives.
func (js *jetSpace) binaryRule(dst, a, b []float64, f, fa, fb, faa, fab, fbb float64) {
	if fa-fa != 0 || fb-fb != 0 || faa-faa != 0 || fab-fab != 0 || fbb-fbb != 0 {
		js.binaryRuleSingular(dst, a, b, f, fa, fb, faa, fab, fbb)
		return
	}
	// Row i of the second-order terms: faa ag_i ag_j + fab (ag_i bg_j +
	// bg_i ag_j) + fbb bg_i bg_j = (faa ag_i + fab bg_i) ag_j + (fab ag_i +
	// fbb bg_i) bg_j. The common dimensions are written out.
	switch js.d {
	case 1:
		a, b, dst := (*[3]float64)(a), (*[3]float64)(b), (*[3]float64)(dst)
		dst[0] = f
		ag0, bg0 := a[1], b[1]
		dst[1] = fa*ag0 + fb*bg0
		ca0, cb0 := faa*ag0+fab*bg0, fab*ag0+fbb*bg0
		dst[2] = fa*a[2] + fb*b[2] + ca0*ag0 + cb0*bg0
		return
	case 2:
		a, b, dst := (*[6]float64)(a), (*[6]float64)(b), (*[6]float64)(dst)
		dst[0] = f
		ag0, bg0 := a[1], b[1]
		ag1, bg1 := a[2], b[2]
		dst[1] = fa*ag0 + fb*bg0
		dst[2] = fa*ag1 + fb*bg1
		ca0, cb0 := faa*ag0+fab*bg0, fab*ag0+fbb*bg0
		ca1, cb1 := faa*ag1+fab*bg1, fab*ag1+fbb*bg1
		dst[3] = fa*a[3] + fb*b[3] + ca0*ag0 + cb0*bg0
		dst[4] = fa*a[4] + fb*b[4] + ca0*ag1 + cb0*bg1
		dst[5] = fa*a[5] + fb*b[5] + ca1*ag1 + cb1*bg1
		return
	case 3:
		a, b, dst := (*[10]float64)(a), (*[10]float64)(b), (*[10]float64)(dst)
		dst[0] = f
		ag0, bg0 := a[1], b[1]
		ag1, bg1 := a[2], b[2]
		ag2, bg2 := a[3], b[3]
		dst[1] = fa*ag0 + fb*bg0
		dst[2] = fa*ag1 + fb*bg1
		dst[3] = fa*ag2 + fb*bg2
		ca0, cb0 := faa*ag0+fab*bg0, fab*ag0+fbb*bg0
		ca1, cb1 := faa*ag1+fab*bg1, fab*ag1+fbb*bg1
		ca2, cb2 := faa*ag2+fab*bg2, fab*ag2+fbb*bg2
		dst[4] = fa*a[4] + fb*b[4] + ca0*ag0 + cb0*bg0
		dst[5] = fa*a[5] + fb*b[5] + ca0*ag1 + cb0*bg1
		dst[6] = fa*a[6] + fb*b[6] + ca0*ag2 + cb0*bg2
		dst[7] = fa*a[7] + fb*b[7] + ca1*ag1 + cb1*bg1
		dst[8] = fa*a[8] + fb*b[8] + ca1*ag2 + cb1*bg2
		dst[9] = fa*a[9] + fb*b[9] + ca2*ag2 + cb2*bg2
		return
	case 4:
		a, b, dst := (*[15]float64)(a), (*[15]float64)(b), (*[15]float64)(dst)
		dst[0] = f
		ag0, bg0 := a[1], b[1]
		ag1, bg1 := a[2], b[2]
		ag2, bg2 := a[3], b[3]
		ag3, bg3 := a[4], b[4]
		dst[1] = fa*ag0 + fb*bg0
		dst[2] = fa*ag1 + fb*bg1
		dst[3] = fa*ag2 + fb*bg2
		dst[4] = fa*ag3 + fb*bg3
		ca0, cb0 := faa*ag0+fab*bg0, fab*ag0+fbb*bg0
		ca1, cb1 := faa*ag1+fab*bg1, fab*ag1+fbb*bg1
		ca2, cb2 := faa*ag2+fab*bg2, fab*ag2+fbb*bg2
		ca3, cb3 := faa*ag3+fab*bg3, fab*ag3+fbb*bg3
		dst[5] = fa*a[5] + fb*b[5] + ca0*ag0 + cb0*bg0
		dst[6] = fa*a[6] + fb*b[6] + ca0*ag1 + cb0*bg1
		dst[7] = fa*a[7] + fb*b[7] + ca0*ag2 + cb0*bg2
		dst[8] = fa*a[8] + fb*b[8] + ca0*ag3 + cb0*bg3
		dst[9] = fa*a[9] + fb*b[9] + ca1*ag1 + cb1*bg1
		dst[10] = fa*a[10] + fb*b[10] + ca1*ag2 + cb1*bg2
		dst[11] = fa*a[11] + fb*b[11] + ca1*ag3 + cb1*bg3
		dst[12] = fa*a[12] + fb*b[12] + ca2*ag2 + cb2*bg2
		dst[13] = fa*a[13] + fb*b[13] + ca2*ag3 + cb2*bg3
		dst[14] = fa*a[14] + fb*b[14] + ca3*ag3 + cb3*bg3
		return
	}
	d := js.d
	dst = dst[:js.S]
	a = a[:js.S]
	b = b[:js.S]
	dst[0] = f
	ag, bg := a[1:1+d], b[1:1+d]
	dg := dst[1 : 1+d]
	ag, bg = ag[:len(dg)], bg[:len(dg)]
	for i := range dg {
		dg[i] = fa*ag[i] + fb*bg[i]
	}
	aH, bH := a[1+d:], b[1+d:]
	dH := dst[1+d:]
	aH, bH = aH[:len(dH)], bH[:len(dH)]
	t := 0
	for i := range ag {
		// Row i: faa ag_i ag_j + fab (ag_i bg_j + bg_i ag_j) + fbb bg_i bg_j
		//      = (faa ag_i + fab bg_i) ag_j + (fab ag_i + fbb bg_i) bg_j.
		ca := faa*ag[i] + fab*bg[i]
		cb := fab*ag[i] + fbb*bg[i]
		for j := i; j < len(ag); j++ {
			dH[t] = fa*aH[t] + fb*bH[t] + ca*ag[j] + cb*bg[j]
			t++
		}
	}
}

// binaryRuleSingular is binaryRule where a partial derivative is infinite
// or NaN; see unaryRuleSingular.
func (js *jetSpace) binaryRuleSingular(dst, a, b []float64, f, fa, fb, faa, fab, fbb float64) {
	d := js.d
	dst[0] = f
	for i := 0; i < d; i++ {
		dst[1+i] = mulStructural(fa, a[1+i]) + mulStructural(fb, b[1+i])
	}
	t := 1 + d
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			ai, aj, bi, bj := a[1+i], a[1+j], b[1+i], b[1+j]
			dst[t] = mulStructural(fa, a[t]) + mulStructural(fb, b[t]) + mulStructural(faa, ai*aj) + mulStructural(fab, ai*bj+bi*aj) + mulStructural(fbb, bi*bj)
			t++
		}
	}
}

// mulStructural is c*x, but 0 where c or x is 0 whatever the other.
func mulStructural(c, x float64) float64 {
	if x == 0 || c == 0 {
		return 0
	}
	return c * x
}

// setConst writes the jet of a constant.
func setConst(dst []float64, v float64) {
	dst[0] = v
	for i := 1; i < len(dst); i++ {
		dst[i] = 0
	}
}
