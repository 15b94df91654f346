package eval

import "math"

// Evaluation of the factors: compiled programs for whole terms, and an
// interpreter of the expression graph for one element of a sum.

// Log returns factor i at x.
func (fs *Factors) Log(i int, x []float64) float64 {
	var out [1]float64
	fs.LogBlock(i, x, out[:])
	return out[0]
}

// LogBlock writes factor i at len(out) points into out; xs holds the points
// one after another (point p is xs[p*Dim() : (p+1)*Dim()]).
func (fs *Factors) LogBlock(i int, xs, out []float64) {
	t, e := fs.locate(i)
	k := len(out)
	if len(xs) != k*fs.dim {
		for p := range out {
			out[p] = math.NaN()
		}
		return
	}
	if t.n == 0 {
		for j := range fs.cols {
			if cap(fs.cols[j]) < k {
				fs.cols[j] = make([]float64, k)
			}
			fs.cols[j] = fs.cols[j][:k]
			for p := 0; p < k; p++ {
				fs.cols[j][p] = xs[p*fs.dim+j]
			}
		}
		t.ev.LogDensityBlock(fs.cols, out)
		return
	}
	if len(t.buf) != len(t.order) || cap(t.buf[0]) < k {
		t.buf = make([][]float64, len(t.order))
		for j := range t.buf {
			t.buf[j] = make([]float64, k)
		}
	}
	for j, id := range t.order {
		nd := &fs.nodes[id]
		d := t.buf[j][:k]
		arg := func(a int32) []float64 { return t.buf[t.pos[a]][:k] }
		switch {
		case nd.op == opConst:
			v := nd.constAt(min(e, max(nd.n-1, 0)))
			for p := range d {
				d[p] = v
			}
		case nd.op == opParam:
			c := int(nd.k)
			for p := range d {
				d[p] = xs[p*fs.dim+c]
			}
		case nd.op == opPack:
			copy(d, arg(nd.elems[e]))
		case nd.op == opBinomLogit:
			a := arg(nd.a)
			kk := fs.nodes[nd.b].constAt(e)
			nk := fs.nodes[nd.elems[0]].constAt(e)
			for p := range d {
				d[p] = binomLogit(a[p], kk, nk)
			}
		case ops[nd.op].class == classUnary:
			a, f := arg(nd.a), ops[nd.op].value
			for p := range d {
				d[p] = f(a[p], 0, nd.k)
			}
		default:
			a, bb, f := arg(nd.a), arg(nd.b), ops[nd.op].value
			for p := range d {
				d[p] = f(a[p], bb[p], nd.k)
			}
		}
	}
	r := t.buf[len(t.order)-1][:k]
	for p := range out {
		v := r[p]
		if t.sq {
			v *= v
		}
		out[p] = t.scale * v
	}
}

// LogDerivs returns factor i at x and writes its gradient into grad (len
// Dim()) and its Hessian into hess (row-major, len Dim()*Dim()).
func (fs *Factors) LogDerivs(i int, x, grad, hess []float64) float64 {
	t, e := fs.locate(i)
	d := fs.dim
	if t.n == 0 {
		return t.ev.LogDensityDerivs(x, grad, hess)
	}
	if len(t.jet) != len(t.order) {
		t.jet = make([]jetVal, len(t.order))
		for j := range t.jet {
			t.jet[j] = jetVal{g: make([]float64, d), h: make([]float64, d*d)}
		}
	}
	for j, id := range t.order {
		nd := &fs.nodes[id]
		r := &t.jet[j]
		clear(r.g)
		clear(r.h)
		arg := func(a int32) *jetVal { return &t.jet[t.pos[a]] }
		switch {
		case nd.op == opConst:
			r.f = nd.constAt(min(e, max(nd.n-1, 0)))
		case nd.op == opParam:
			r.f = x[int(nd.k)]
			r.g[int(nd.k)] = 1
		case nd.op == opPack:
			a := arg(nd.elems[e])
			r.f = a.f
			copy(r.g, a.g)
			copy(r.h, a.h)
		case nd.op == opBinomLogit:
			f, f1, f2 := binomLogitPartials(arg(nd.a).f, fs.nodes[nd.b].constAt(e), fs.nodes[nd.elems[0]].constAt(e))
			chain1(r, arg(nd.a), f, f1, f2)
		case ops[nd.op].class == classUnary:
			a := arg(nd.a)
			f, f1, f2 := ops[nd.op].d1(a.f, nd.k)
			chain1(r, a, f, f1, f2)
		case isGuard(nd.op):
			a, tt := arg(nd.a), arg(nd.b)
			r.f = guard(nd.op, a.f, tt.f, nd.k)
			if guardPass(nd.op, tt.f, nd.k) {
				copy(r.g, a.g)
				copy(r.h, a.h)
			}
		default:
			a, bb := arg(nd.a), arg(nd.b)
			f, fa, fb, faa, fab, fbb := ops[nd.op].d2(a.f, bb.f, nd.k)
			r.f = f
			for p := 0; p < d; p++ {
				r.g[p] = fa*a.g[p] + fb*bb.g[p]
				for q := 0; q < d; q++ {
					r.h[p*d+q] = fa*a.h[p*d+q] + fb*bb.h[p*d+q] +
						faa*a.g[p]*a.g[q] + fab*(a.g[p]*bb.g[q]+bb.g[p]*a.g[q]) + fbb*bb.g[p]*bb.g[q]
				}
			}
		}
	}
	r := t.jet[len(t.order)-1]
	f := r.f
	for p := 0; p < d; p++ {
		for q := 0; q < d; q++ {
			h := r.h[p*d+q]
			if t.sq {
				h = 2 * (f*h + r.g[p]*r.g[q])
			}
			hess[p*d+q] = t.scale * h
		}
	}
	for p := 0; p < d; p++ {
		g := r.g[p]
		if t.sq {
			g = 2 * f * g
		}
		grad[p] = t.scale * g
	}
	if t.sq {
		f *= f
	}
	return t.scale * f
}

// chain1 sets r to f(a) given f and its first two derivatives at a.
func chain1(r, a *jetVal, f, f1, f2 float64) {
	d := len(r.g)
	r.f = f
	for p := 0; p < d; p++ {
		r.g[p] = f1 * a.g[p]
		for q := 0; q < d; q++ {
			r.h[p*d+q] = f1*a.h[p*d+q] + f2*a.g[p]*a.g[q]
		}
	}
}
