package eval

// Elementwise loops unrolled by four. Under WebAssembly every jump that is
// not a fall-through (a loop's back edge among them) goes through the
// function's dispatch table, so a loop of one element per iteration pays a
// dispatch per element; four per iteration pay a quarter of that and load
// through one window with constant offsets. Natively the unrolled loops run
// at least as fast. Each element gets exactly the operations of the plain
// loop, in the same order, so the values are the same bit for bit; d may be
// one of the operands (each element is read before it is written).
//
// Every function follows one pattern and differs from the others only in
// its expression: VV is d[i] = a[i] OP b[i], VS d[i] = a[i] OP s, SV
// d[i] = s OP b[i].

// addVV sets d[i] = a[i] + b[i].
func addVV(d, a, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] + bw[0]
		dw[1] = aw[1] + bw[1]
		dw[2] = aw[2] + bw[2]
		dw[3] = aw[3] + bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = a[i] + b[i]
	}
}

// subVV sets d[i] = a[i] - b[i].
func subVV(d, a, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] - bw[0]
		dw[1] = aw[1] - bw[1]
		dw[2] = aw[2] - bw[2]
		dw[3] = aw[3] - bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = a[i] - b[i]
	}
}

// mulVV sets d[i] = a[i] * b[i].
func mulVV(d, a, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] * bw[0]
		dw[1] = aw[1] * bw[1]
		dw[2] = aw[2] * bw[2]
		dw[3] = aw[3] * bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = a[i] * b[i]
	}
}

// divVV sets d[i] = a[i] / b[i].
func divVV(d, a, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] / bw[0]
		dw[1] = aw[1] / bw[1]
		dw[2] = aw[2] / bw[2]
		dw[3] = aw[3] / bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = a[i] / b[i]
	}
}

// addVS sets d[i] = a[i] + s.
func addVS(d, a []float64, s float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = aw[0] + s
		dw[1] = aw[1] + s
		dw[2] = aw[2] + s
		dw[3] = aw[3] + s
	}
	for ; i < len(d); i++ {
		d[i] = a[i] + s
	}
}

// subVS sets d[i] = a[i] - s.
func subVS(d, a []float64, s float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = aw[0] - s
		dw[1] = aw[1] - s
		dw[2] = aw[2] - s
		dw[3] = aw[3] - s
	}
	for ; i < len(d); i++ {
		d[i] = a[i] - s
	}
}

// mulVS sets d[i] = a[i] * s.
func mulVS(d, a []float64, s float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = aw[0] * s
		dw[1] = aw[1] * s
		dw[2] = aw[2] * s
		dw[3] = aw[3] * s
	}
	for ; i < len(d); i++ {
		d[i] = a[i] * s
	}
}

// divVS sets d[i] = a[i] / s.
func divVS(d, a []float64, s float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = aw[0] / s
		dw[1] = aw[1] / s
		dw[2] = aw[2] / s
		dw[3] = aw[3] / s
	}
	for ; i < len(d); i++ {
		d[i] = a[i] / s
	}
}

// addSV sets d[i] = s + b[i].
func addSV(d []float64, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = s + bw[0]
		dw[1] = s + bw[1]
		dw[2] = s + bw[2]
		dw[3] = s + bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = s + b[i]
	}
}

// subSV sets d[i] = s - b[i].
func subSV(d []float64, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = s - bw[0]
		dw[1] = s - bw[1]
		dw[2] = s - bw[2]
		dw[3] = s - bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = s - b[i]
	}
}

// mulSV sets d[i] = s * b[i].
func mulSV(d []float64, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = s * bw[0]
		dw[1] = s * bw[1]
		dw[2] = s * bw[2]
		dw[3] = s * bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = s * b[i]
	}
}

// divSV sets d[i] = s / b[i].
func divSV(d []float64, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = s / bw[0]
		dw[1] = s / bw[1]
		dw[2] = s / bw[2]
		dw[3] = s / bw[3]
	}
	for ; i < len(d); i++ {
		d[i] = s / b[i]
	}
}

// negV sets d[i] = -a[i].
func negV(d, a []float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = -aw[0]
		dw[1] = -aw[1]
		dw[2] = -aw[2]
		dw[3] = -aw[3]
	}
	for ; i < len(d); i++ {
		d[i] = -a[i]
	}
}

// sqV sets d[i] = a[i] * a[i].
func sqV(d, a []float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = aw[0] * aw[0]
		dw[1] = aw[1] * aw[1]
		dw[2] = aw[2] * aw[2]
		dw[3] = aw[3] * aw[3]
	}
	for ; i < len(d); i++ {
		d[i] = a[i] * a[i]
	}
}

// linCS sets d[i] = c + s*b[i] (opLin without a).
func linCS(d []float64, c, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = c + float64(s*bw[0])
		dw[1] = c + float64(s*bw[1])
		dw[2] = c + float64(s*bw[2])
		dw[3] = c + float64(s*bw[3])
	}
	for ; i < len(d); i++ {
		d[i] = c + float64(s*b[i])
	}
}

// linCSSq sets d[i] = c + s*b[i]^2 (opLin without a).
func linCSSq(d []float64, c, s float64, b []float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = c + float64(s*float64(bw[0]*bw[0]))
		dw[1] = c + float64(s*float64(bw[1]*bw[1]))
		dw[2] = c + float64(s*float64(bw[2]*bw[2]))
		dw[3] = c + float64(s*float64(bw[3]*bw[3]))
	}
	for ; i < len(d); i++ {
		d[i] = c + float64(s*float64(b[i]*b[i]))
	}
}

// linAS sets d[i] = a[i] + s*b[i] (opLin without c).
func linAS(d, a []float64, s float64, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] + float64(s*bw[0])
		dw[1] = aw[1] + float64(s*bw[1])
		dw[2] = aw[2] + float64(s*bw[2])
		dw[3] = aw[3] + float64(s*bw[3])
	}
	for ; i < len(d); i++ {
		d[i] = a[i] + float64(s*b[i])
	}
}

// linASSq sets d[i] = a[i] + s*b[i]^2 (opLin without c).
func linASSq(d, a []float64, s float64, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = aw[0] + float64(s*float64(bw[0]*bw[0]))
		dw[1] = aw[1] + float64(s*float64(bw[1]*bw[1]))
		dw[2] = aw[2] + float64(s*float64(bw[2]*bw[2]))
		dw[3] = aw[3] + float64(s*float64(bw[3]*bw[3]))
	}
	for ; i < len(d); i++ {
		d[i] = a[i] + float64(s*float64(b[i]*b[i]))
	}
}

// linACS sets d[i] = (a[i] + c) + s*b[i] (opLin).
func linACS(d, a []float64, c, s float64, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = (aw[0] + c) + float64(s*bw[0])
		dw[1] = (aw[1] + c) + float64(s*bw[1])
		dw[2] = (aw[2] + c) + float64(s*bw[2])
		dw[3] = (aw[3] + c) + float64(s*bw[3])
	}
	for ; i < len(d); i++ {
		d[i] = (a[i] + c) + float64(s*b[i])
	}
}

// linACSSq sets d[i] = (a[i] + c) + s*b[i]^2 (opLin).
func linACSSq(d, a []float64, c, s float64, b []float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		dw[0] = (aw[0] + c) + float64(s*float64(bw[0]*bw[0]))
		dw[1] = (aw[1] + c) + float64(s*float64(bw[1]*bw[1]))
		dw[2] = (aw[2] + c) + float64(s*float64(bw[2]*bw[2]))
		dw[3] = (aw[3] + c) + float64(s*float64(bw[3]*bw[3]))
	}
	for ; i < len(d); i++ {
		d[i] = (a[i] + c) + float64(s*float64(b[i]*b[i]))
	}
}

// quadV sets d[i] = (a[i] + c)^2 (opQuad without k2).
func quadV(d, a []float64, c float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = (aw[0] + c) * (aw[0] + c)
		dw[1] = (aw[1] + c) * (aw[1] + c)
		dw[2] = (aw[2] + c) * (aw[2] + c)
		dw[3] = (aw[3] + c) * (aw[3] + c)
	}
	for ; i < len(d); i++ {
		d[i] = (a[i] + c) * (a[i] + c)
	}
}

// quadDivV sets d[i] = (a[i] + c)^2 / k (opQuad).
func quadDivV(d, a []float64, c, k float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = float64((aw[0]+c)*(aw[0]+c)) / k
		dw[1] = float64((aw[1]+c)*(aw[1]+c)) / k
		dw[2] = float64((aw[2]+c)*(aw[2]+c)) / k
		dw[3] = float64((aw[3]+c)*(aw[3]+c)) / k
	}
	for ; i < len(d); i++ {
		d[i] = float64((a[i]+c)*(a[i]+c)) / k
	}
}

// quadMulV sets d[i] = (a[i] + c)^2 * k (opQuad).
func quadMulV(d, a []float64, c, k float64) {
	a = a[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw := d[i:i+4:i+4], a[i:i+4:i+4]
		dw[0] = float64((aw[0]+c)*(aw[0]+c)) * k
		dw[1] = float64((aw[1]+c)*(aw[1]+c)) * k
		dw[2] = float64((aw[2]+c)*(aw[2]+c)) * k
		dw[3] = float64((aw[3]+c)*(aw[3]+c)) * k
	}
	for ; i < len(d); i++ {
		d[i] = float64((a[i]+c)*(a[i]+c)) * k
	}
}

// fillV sets d[i] = v.
func fillV(d []float64, v float64) {
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw := d[i : i+4 : i+4]
		dw[0], dw[1], dw[2], dw[3] = v, v, v, v
	}
	for ; i < len(d); i++ {
		d[i] = v
	}
}

// linCSSqShift sets d[i] = c + s*(b[i] + e)^2 (opLin without a, flagShiftB).
func linCSSqShift(d []float64, c, s float64, b []float64, e float64) {
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, bw := d[i:i+4:i+4], b[i:i+4:i+4]
		u0, u1, u2, u3 := bw[0]+e, bw[1]+e, bw[2]+e, bw[3]+e
		dw[0] = c + float64(s*float64(u0*u0))
		dw[1] = c + float64(s*float64(u1*u1))
		dw[2] = c + float64(s*float64(u2*u2))
		dw[3] = c + float64(s*float64(u3*u3))
	}
	for ; i < len(d); i++ {
		u := b[i] + e
		d[i] = c + float64(s*float64(u*u))
	}
}

// linASSqShift sets d[i] = a[i] + s*(b[i] + e)^2 (opLin without c,
// flagShiftB).
func linASSqShift(d, a []float64, s float64, b []float64, e float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		u0, u1, u2, u3 := bw[0]+e, bw[1]+e, bw[2]+e, bw[3]+e
		dw[0] = aw[0] + float64(s*float64(u0*u0))
		dw[1] = aw[1] + float64(s*float64(u1*u1))
		dw[2] = aw[2] + float64(s*float64(u2*u2))
		dw[3] = aw[3] + float64(s*float64(u3*u3))
	}
	for ; i < len(d); i++ {
		u := b[i] + e
		d[i] = a[i] + float64(s*float64(u*u))
	}
}

// linACSSqShift sets d[i] = (a[i] + c) + s*(b[i] + e)^2 (opLin,
// flagShiftB).
func linACSSqShift(d, a []float64, c, s float64, b []float64, e float64) {
	a = a[:len(d)]
	b = b[:len(d)]
	i := 0
	for ; i+4 <= len(d); i += 4 {
		dw, aw, bw := d[i:i+4:i+4], a[i:i+4:i+4], b[i:i+4:i+4]
		u0, u1, u2, u3 := bw[0]+e, bw[1]+e, bw[2]+e, bw[3]+e
		dw[0] = (aw[0] + c) + float64(s*float64(u0*u0))
		dw[1] = (aw[1] + c) + float64(s*float64(u1*u1))
		dw[2] = (aw[2] + c) + float64(s*float64(u2*u2))
		dw[3] = (aw[3] + c) + float64(s*float64(u3*u3))
	}
	for ; i < len(d); i++ {
		u := b[i] + e
		d[i] = (a[i] + c) + float64(s*float64(u*u))
	}
}
