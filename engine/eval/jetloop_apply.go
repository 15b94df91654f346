package eval

import (
	"math"

	"bellcheck/engine/special"
)

// chunkApply writes the jets of op(a, b) over m elements into out.
func (js *jetSpace) chunkApply(op opcode, k float64, out []float64, a, b jetVec, m int) {
	S := js.S
	ov := row(out, 0, m)
	switch op {
	case opAdd, opSub:
		sign := 1.0
		if op == opSub {
			sign = -1
		}
		for e := range ov {
			if op == opAdd {
				ov[e] = a.val[e] + b.val[e]
			} else {
				ov[e] = a.val[e] - b.val[e]
			}
		}
		for t := 1; t < S; t++ {
			o := row(out, t, m)
			switch {
			case a.jet != nil && b.jet != nil:
				ar, br := row(a.jet, t, m)[:len(o)], row(b.jet, t, m)[:len(o)]
				for e := range o {
					o[e] = ar[e] + sign*br[e]
				}
			case a.jet != nil:
				copy(o, row(a.jet, t, m))
			case b.jet != nil:
				br := row(b.jet, t, m)
				for e := range o {
					o[e] = sign * br[e]
				}
			default:
				fill(o, 0)
			}
		}
		return
	case opNeg, opMulK, opDivK, opSubKR, opAddK:
		c := -1.0
		switch op {
		case opMulK:
			c = k
		case opDivK:
			c = 1 / k
		case opAddK:
			c = 1
		}
		for e := range ov {
			ov[e] = ops[op].value(a.val[e], 0, k)
		}
		for t := 1; t < S; t++ {
			o := row(out, t, m)
			if a.jet == nil {
				fill(o, 0)
				continue
			}
			ar := row(a.jet, t, m)
			for e := range o {
				o[e] = c * ar[e]
			}
		}
		return
	case opMin, opMax, opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		// Element by element: the derivatives of the selected operand.
		for e := range ov {
			av, bv := a.val[e], b.val[e]
			var src jetVec
			keep := true
			switch op {
			case opMin:
				src, ov[e] = b, min(av, bv)
				if av <= bv {
					src = a
				}
			case opMax:
				src, ov[e] = b, max(av, bv)
				if av >= bv {
					src = a
				}
			default:
				src, ov[e] = a, guard(op, av, bv, k)
				keep = guardPass(op, bv, k)
			}
			for t := 1; t < S; t++ {
				v := 0.0
				if keep && src.jet != nil {
					v = row(src.jet, t, m)[e]
				}
				row(out, t, m)[e] = v
			}
		}
		return
	}
	// The rules with partial derivatives, computed element by element.
	ls := &js.loop
	f, fa, fb := ls.part[0][:m], ls.part[1][:m], ls.part[2][:m]
	faa, fab, fbb := ls.part[3][:m], ls.part[4][:m], ls.part[5][:m]
	info := &ops[op]
	singular := false
	switch {
	case op == opMul:
		for e := range f {
			av, bv := a.val[e], b.val[e]
			f[e], fa[e], fb[e], faa[e], fab[e], fbb[e] = av*bv, bv, av, 0, 1, 0
		}
	case op == opSq:
		for e := range f {
			av := a.val[e]
			f[e], fa[e], faa[e] = av*av, 2*av, 2
		}
	case info.class == classUnary:
		for e := range f {
			f[e], fa[e], faa[e] = info.d1(a.val[e], k)
			singular = singular || fa[e]-fa[e] != 0 || faa[e]-faa[e] != 0 || fa[e] == 0 && faa[e] == 0
		}
	default:
		for e := range f {
			f[e], fa[e], fb[e], faa[e], fab[e], fbb[e] = info.d2(a.val[e], b.val[e], k)
			singular = singular || fa[e]-fa[e] != 0 || fb[e]-fb[e] != 0 || faa[e]-faa[e] != 0 ||
				fab[e]-fab[e] != 0 || fbb[e]-fbb[e] != 0
		}
	}
	if info.class == classUnary || a.jet == nil || b.jet == nil {
		// A rule in one operand: a, or b when a is constant.
		x, g1, g2 := a, fa, faa
		if info.class == classBinary && a.jet == nil {
			x, g1, g2 = b, fb, fbb
		}
		copy(ov, f)
		if x.jet == nil {
			for t := 1; t < S; t++ {
				fill(row(out, t, m), 0)
			}
			return
		}
		if singular {
			js.chunkSingular(out, x, jetVec{}, g1, nil, g2, nil, nil, m)
			return
		}
		d := js.d
		if op == opLog || op == opLog1p {
			// As logRule: u = r g, H = r H - u u^T (no underflow of r^2).
			for i := 1; i <= d; i++ {
				o, xr := row(out, i, m), row(x.jet, i, m)
				for e := range o {
					o[e] = g1[e] * xr[e]
				}
			}
			t := 1 + d
			for i := 1; i <= d; i++ {
				ui := row(out, i, m)
				for j := i; j <= d; j++ {
					o, uj, xh := row(out, t, m), row(out, j, m), row(x.jet, t, m)
					for e := range o {
						o[e] = g1[e]*xh[e] - ui[e]*uj[e]
					}
					t++
				}
			}
			return
		}
		g1, g2 = g1[:m], g2[:m]
		for i := 1; i <= d; i++ {
			o, xr := row(out, i, m), row(x.jet, i, m)[:m]
			for e := range o {
				o[e] = g1[e] * xr[e]
			}
		}
		t := 1 + d
		for i := 1; i <= d; i++ {
			xi := row(x.jet, i, m)[:m]
			for j := i; j <= d; j++ {
				o, xj, xh := row(out, t, m), row(x.jet, j, m)[:m], row(x.jet, t, m)[:m]
				for e := range o {
					o[e] = g1[e]*xh[e] + g2[e]*xi[e]*xj[e]
				}
				t++
			}
		}
		return
	}
	copy(ov, f)
	if singular {
		js.chunkSingular(out, a, b, fa, fb, faa, fab, fbb, m)
		return
	}
	d := js.d
	for i := 1; i <= d; i++ {
		o, ar, br := row(out, i, m), row(a.jet, i, m)[:m], row(b.jet, i, m)[:m]
		for e := range o {
			o[e] = fa[e]*ar[e] + fb[e]*br[e]
		}
	}
	t := 1 + d
	for i := 1; i <= d; i++ {
		ai, bi := row(a.jet, i, m)[:m], row(b.jet, i, m)[:m]
		for j := i; j <= d; j++ {
			o := row(out, t, m)
			aj, bj := row(a.jet, j, m)[:m], row(b.jet, j, m)[:m]
			ah, bh := row(a.jet, t, m)[:m], row(b.jet, t, m)[:m]
			for e := range o {
				o[e] = fa[e]*ah[e] + fb[e]*bh[e] + faa[e]*ai[e]*aj[e] +
					fab[e]*(ai[e]*bj[e]+bi[e]*aj[e]) + fbb[e]*bi[e]*bj[e]
			}
			t++
		}
	}
}

// chunkBinomLogit writes the jets of opBinomLogit(a; k, nk) over m
// elements: a rule in a alone (the counts are data).
func (js *jetSpace) chunkBinomLogit(out []float64, a jetVec, k, nk []float64, m int) {
	S := js.S
	d := js.d
	ls := &js.loop
	ov := row(out, 0, m)
	f1, f2 := ls.part[1][:m], ls.part[3][:m]
	singular := false
	for e := range ov {
		ov[e], f1[e], f2[e] = binomLogitPartials(a.val[e], k[e], nk[e])
		singular = singular || f1[e]-f1[e] != 0 || f2[e]-f2[e] != 0
	}
	if a.jet == nil {
		for t := 1; t < S; t++ {
			fill(row(out, t, m), 0)
		}
		return
	}
	if singular {
		js.chunkSingular(out, a, jetVec{}, f1, nil, f2, nil, nil, m)
		return
	}
	for i := 1; i <= d; i++ {
		o, xr := row(out, i, m), row(a.jet, i, m)[:m]
		for e := range o {
			o[e] = f1[e] * xr[e]
		}
	}
	t := 1 + d
	for i := 1; i <= d; i++ {
		xi := row(a.jet, i, m)[:m]
		for j := i; j <= d; j++ {
			o, xj, xh := row(out, t, m), row(a.jet, j, m)[:m], row(a.jet, t, m)[:m]
			for e := range o {
				o[e] = f1[e]*xh[e] + f2[e]*xi[e]*xj[e]
			}
			t++
		}
	}
}

// chunkSingular applies a rule element by element through the scalar jet
// rules (which keep structural zeros where a partial is infinite, and
// handle log without underflow). b may be empty for a one-operand rule.
func (js *jetSpace) chunkSingular(out []float64, a, b jetVec, fa, fb, faa, fab, fbb []float64, m int) {
	S := js.S
	ls := &js.loop
	ea := ls.elem
	var eb, eo [15]float64
	for e := 0; e < m; e++ {
		for t := 0; t < S; t++ {
			ea[t] = row(a.jet, t, m)[e]
			if b.jet != nil {
				eb[t] = row(b.jet, t, m)[e]
			}
		}
		f := row(out, 0, m)[e]
		o := eo[:S]
		switch {
		case b.jet != nil:
			js.binaryRule(o, ea, eb[:S], f, fa[e], fb[e], faa[e], fab[e], fbb[e])
		case fb == nil && faa != nil && fa != nil && isLogPartials(fa[e], faa[e]):
			js.logRule(o, ea, f, fa[e])
		default:
			js.unaryRule(o, ea, f, fa[e], faa[e])
		}
		for t := 1; t < S; t++ {
			row(out, t, m)[e] = o[t]
		}
	}
}

// isLogPartials reports whether f' = r and f” = -r^2 (the partials of
// log and log1p), for which logRule avoids the underflow of r^2.
func isLogPartials(f1, f2 float64) bool {
	return f2 == -f1*f1
}

// chunkReduce folds m elements of a reduction's source slot into its
// register's jet.
func (js *jetSpace) chunkReduce(red reduction, ri, m int) {
	S := js.S
	d := js.d
	acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
	src := js.loop.slots[red.src]
	v := row(src, 0, m)
	switch red.op {
	case opSum:
		for t := 0; t < S; t++ {
			acc[t] += sum4(row(src, t, m))
		}
	case opSumSq:
		// (v^2)' = 2 v g, (v^2)'' = 2 v H + 2 g g^T.
		acc[0] += sumSq4(v)
		for i := 1; i <= d; i++ {
			acc[i] += 2 * dot(v, row(src, i, m))
		}
		t := 1 + d
		for i := 1; i <= d; i++ {
			gi := row(src, i, m)
			for j := i; j <= d; j++ {
				acc[t] += 2*dot(v, row(src, t, m)) + 2*dot(gi, row(src, j, m))
				t++
			}
		}
	case opRMin, opRMax:
		best := -1
		for e := range v {
			x := v[e]
			better := x < acc[0]
			if red.op == opRMax {
				better = x > acc[0]
			}
			if better || x != x && acc[0] == acc[0] {
				acc[0] = x
				best = e
			}
		}
		if best >= 0 {
			for t := 1; t < S; t++ {
				acc[t] = row(src, t, m)[best]
			}
		}
	case opRLse:
		ea := js.loop.elem
		st := js.loop.acc[ri*(S+1) : (ri+1)*(S+1)]
		for e := range v {
			for t := 0; t < S; t++ {
				ea[t] = row(src, t, m)[e]
			}
			js.addLse(st, ea)
		}
	}
}

// dot is the dot product of a and b with four partial sums.
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		aw, bw := a[i:i+4:i+4], b[i:i+4:i+4]
		s0 += aw[0] * bw[0]
		s1 += aw[1] * bw[1]
		s2 += aw[2] * bw[2]
		s3 += aw[3] * bw[3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// addLse adds e^x to a logsumexp state: st[0] the running maximum M, then
// sum w, sum w g, sum w (H + g g^T) with w = e^(x-M).
func (js *jetSpace) addLse(st, x []float64) {
	d := js.d
	v := x[0]
	switch {
	case v != v || st[0] != st[0]:
		st[0] = math.NaN()
		return
	case math.IsInf(st[0], 1):
		return
	case math.IsInf(v, 1):
		st[0] = v
		return
	case math.IsInf(v, -1):
		return
	}
	if v > st[0] {
		f := special.Exp(st[0] - v) // 0 when the maximum was -Inf
		for i := 1; i < len(st); i++ {
			st[i] *= f
		}
		st[0] = v
	}
	w := special.Exp(v - st[0])
	st[1] += w
	g := x[1 : 1+d]
	for i := range g {
		st[2+i] += w * g[i]
	}
	h := x[1+d : js.S]
	t := 0
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			st[2+d+t] += w * (h[t] + g[i]*g[j])
			t++
		}
	}
}

// finishLse turns a logsumexp state into the reduction's jet:
// value M + log S0, gradient S1/S0, Hessian S2/S0 - g g^T.
func (js *jetSpace) finishLse(red reduction, ri int) {
	S := js.S
	d := js.d
	st := js.loop.acc[ri*(S+1) : (ri+1)*(S+1)]
	acc := js.regs[int(red.dst)*S : int(red.dst+1)*S]
	if st[1] == 0 || math.IsInf(st[0], 0) || st[0] != st[0] {
		setConst(acc, st[0])
		return
	}
	acc[0] = st[0] + math.Log(st[1])
	inv := 1 / st[1]
	for i := 0; i < d; i++ {
		acc[1+i] = st[2+i] * inv
	}
	g := acc[1 : 1+d]
	t := 0
	for i := 0; i < d; i++ {
		for j := i; j < d; j++ {
			acc[1+d+t] = st[2+d+t]*inv - g[i]*g[j]
			t++
		}
	}
}
