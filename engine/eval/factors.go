package eval

import (
	"fmt"
	"math"

	"bellcheck/engine/model"
)

// The log-density as a sum of factors, for expectation propagation.
//
// The compiler's expression graph is walked from the root through sums,
// differences, negations and constant multiples; every other node reached is
// a term. A term sum(v) over a vector v whose elements can be computed one
// at a time (elementwise operations on data, parameters and scalar
// expressions of them, with no reduction inside) gives one factor per
// element; any other term is one factor, evaluated by a program compiled
// for it alone. A support guard on a scalar (a parameter's support, a scale
// that must be positive) is split off as a factor of its own: the guarded
// value plus the guard's 0 or -Inf. Constant terms go to Const. The graph
// is built without the evaluator's rewrites of sums (builder.perElement),
// so that one observation is one factor.
//
// Two properties are found from the graph, exactly:
//   - a factor is quadratic when it is a polynomial of degree at most 2 in
//     the parameters (Gaussian terms: priors, sums of squares);
//   - a factor of one data element (or a term with no sum inside) depends
//     on the parameters through one linear combination a^T x when every operand that enters a non-linear
//     operation is affine in the parameters and all those affine operands
//     have parallel coefficient vectors (a regression's linear predictor).

// Factors is a model's log-density split into additive factors:
//
//	log p(x) = Const() + sum_i Log(i, x).
//
// It keeps scratch space: it is not safe for concurrent use.
type Factors struct {
	dim    int
	params []model.Param
	nodes  []node
	konst  float64
	terms  []*factorTerm
	first  []int // first factor of each term
	nfac   int
	dirs   [][]float64 // per factor: the direction a, or nil
	cols   [][]float64 // scratch for compiled terms' blocks
	pt     []float64
	jg, jh []float64
}

// factorTerm is one term of the sum: a scalar term (compiled) or the
// elements of a sum over a vector (interpreted element by element).
type factorTerm struct {
	root  int32   // the term's node (a vector node for an element term)
	scale float64 // the term enters the log-density multiplied by scale
	n     int     // number of elements; 0 for a scalar term
	sq    bool    // element term of a sum of squares: the factor is v_i^2
	quad  bool    // polynomial of degree <= 2 in the parameters
	ev    *Evaluator
	order []int32         // element term: the nodes to compute, in graph order
	pos   map[int32]int32 // element term: node -> index in order
	buf   [][]float64     // element term: per node, one value per point
	jet   []jetVal        // element term: per node, value, gradient and Hessian
	at    model.Pos
	// support is 1 + the parameter whose support the term tests (0 for
	// every other term).
	support int
}

// jetVal is a value with its gradient and Hessian (row-major).
type jetVal struct {
	f    float64
	g, h []float64
}

// maxScalarFactors and maxFactorCode bound the scalar terms SplitFactors
// builds an evaluator for, in number and in operations together: the
// models of the reference cases, the gallery and the test corpus split
// into at most 29 (a beta-binomial with two groups), while an epidemic
// model integrated in an ode block split into 8,826, each holding the
// 10,000 operations of the trajectory (its rate is a sum of Runge-Kutta
// steps), and building them took more than 24 GB.
const (
	maxScalarFactors = 256
	maxFactorCode    = 2000000
)

// SplitFactors splits a checked model's log-density into factors. The
// factors include one per bounded parameter (0 inside its support, -Inf
// outside), so their sum is the log-density that Compile's evaluator
// returns, up to rounding.
func SplitFactors(m *model.Model) (*Factors, error) {
	c, root, err := buildDensity(m, true)
	if err != nil {
		return nil, err
	}
	b := c.b
	dim := len(m.Params)
	scale := 1.0
	if m.Form == model.Cost {
		scale = -1
	}
	fs := &Factors{dim: dim, params: append([]model.Param(nil), m.Params...)}
	var raw []*factorTerm
	fs.decompose(b, root, scale, nil, &raw)
	for i, p := range m.Params {
		if p.Lo > math.Inf(-1) {
			raw = append(raw, &factorTerm{root: b.bin(opGuardGE, b.constant(0), b.param(i), p.Lo), scale: 1, support: i + 1})
		}
		if p.Hi < math.Inf(1) {
			raw = append(raw, &factorTerm{root: b.bin(opGuardLE, b.constant(0), b.param(i), p.Hi), scale: 1, support: i + 1})
		}
	}
	if b.err != nil {
		return nil, b.err
	}
	scalars := 0
	for _, t := range raw {
		if t.n == 0 {
			scalars++
		}
	}
	if scalars > maxScalarFactors {
		return nil, fmt.Errorf("%w: the density splits into %d additive scalar terms, more than the %d EP takes (the steps of a trajectory add into its terms)", ErrTooManyFactors, scalars, maxScalarFactors)
	}
	code := 0
	for _, t := range raw {
		if t.n == 0 {
			root := t.root
			if t.scale != 1 {
				root = b.un(opMulK, root, t.scale)
			}
			if b.err != nil {
				return nil, b.err
			}
			lp := lower(b, root, dim)
			if code += len(lp.code); code > maxFactorCode {
				return nil, fmt.Errorf("%w: the density's %d additive scalar terms hold more than %d operations together (each recomputes the trajectory it reads)", ErrTooManyFactors, scalars, maxFactorCode)
			}
			t.ev = newEvaluator(lp, m)
		}
	}
	fs.nodes = b.nodes
	for _, t := range raw {
		t.quad = degree(fs.nodes, t.root, map[int32]int{}) <= 2 && (!t.sq || degree(fs.nodes, t.root, map[int32]int{}) <= 1)
		fs.terms = append(fs.terms, t)
		fs.first = append(fs.first, fs.nfac)
		if t.n == 0 {
			// A scalar term with no sum inside: the same analysis.
			var dir []float64
			if st, ok := elementTerm(fs.nodes, t.root); ok {
				dir = fs.direction(st, 0)
			}
			fs.nfac++
			fs.dirs = append(fs.dirs, dir)
			continue
		}
		fs.nfac += t.n
		for e := 0; e < t.n; e++ {
			fs.dirs = append(fs.dirs, fs.direction(t, e))
		}
	}
	fs.cols = make([][]float64, dim)
	fs.pt = make([]float64, dim)
	fs.jg, fs.jh = make([]float64, dim), make([]float64, dim*dim)
	return fs, nil
}

// guardSpec is a support guard on a scalar: the value where t passes the
// test against k, -Inf where it does not.
type guardSpec struct {
	op opcode
	t  int32
	k  float64
}

// decompose walks the additive structure below id (entering the
// log-density multiplied by scale, under the given support guards) and
// appends its terms. Every term keeps the guards above it, so a factor is
// -Inf wherever the model is for that reason (not NaN from a logarithm of a
// negative scale, say).
func (fs *Factors) decompose(b *builder, id int32, scale float64, guards []guardSpec, out *[]*factorTerm) {
	nd := b.nodes[id]
	if nd.cst && !nd.vector() {
		fs.konst += scale * nd.val
		return
	}
	op := nd.op
	if b.states[id] {
		// A block's state value is one term: its sums are the
		// trajectory's steps, not terms of the density (an epidemic's
		// 14 Poisson counts split into 3,398 terms through them).
		op = opNone
	}
	switch op {
	case opAdd:
		fs.decompose(b, nd.a, scale, guards, out)
		fs.decompose(b, nd.b, scale, guards, out)
		return
	case opSub:
		fs.decompose(b, nd.a, scale, guards, out)
		fs.decompose(b, nd.b, -scale, guards, out)
		return
	case opNeg:
		fs.decompose(b, nd.a, -scale, guards, out)
		return
	case opMulK:
		fs.decompose(b, nd.a, scale*nd.k, guards, out)
		return
	case opDivK:
		fs.decompose(b, nd.a, scale/nd.k, guards, out)
		return
	case opAddK:
		fs.konst += scale * nd.k
		fs.decompose(b, nd.a, scale, guards, out)
		return
	case opSubKR:
		fs.konst += scale * nd.k
		fs.decompose(b, nd.a, -scale, guards, out)
		return
	case opGuardGT, opGuardGE, opGuardLT, opGuardLE:
		// value + (0 or -Inf): only where the term enters with a positive
		// sign (else the guard would give +Inf) and the test is a scalar.
		if scale > 0 && !b.nodes[nd.b].vector() {
			g := append(append([]guardSpec(nil), guards...), guardSpec{nd.op, nd.b, nd.k})
			fs.decompose(b, nd.a, scale, g, out)
			*out = append(*out, &factorTerm{root: b.bin(nd.op, b.constant(0), nd.b, nd.k), scale: 1})
			return
		}
	case opSum, opSumSq:
		v, sq, sc := nd.a, nd.op == opSumSq, scale
		if len(guards) > 0 {
			// The guards go outside the scaled value.
			if sq {
				v, sq = b.un(opSq, v, 0), false
			}
			v, sc = b.un(opMulK, v, scale), 1
			for _, g := range guards {
				v = b.bin(g.op, v, g.t, g.k)
			}
		}
		if t, ok := elementTerm(b.nodes, v); ok {
			t.scale, t.sq = sc, sq
			*out = append(*out, t)
			return
		}
	}
	if len(guards) > 0 {
		id, scale = b.un(opMulK, id, scale), 1
		for _, g := range guards {
			id = b.bin(g.op, id, g.t, g.k)
		}
	}
	*out = append(*out, &factorTerm{root: id, scale: scale})
}

// elementTerm returns the element term of the vector v when its elements
// can be computed one at a time.
func elementTerm(nodes []node, v int32) (*factorTerm, bool) {
	t := &factorTerm{root: v, n: nodes[v].n, pos: map[int32]int32{}}
	seen := map[int32]bool{}
	var visit func(id int32) bool
	visit = func(id int32) bool {
		if seen[id] {
			return true
		}
		seen[id] = true
		nd := &nodes[id]
		var args []int32
		switch {
		case nd.op == opConst || nd.op == opParam:
		case nd.op == opPack:
			args = nd.elems
		case nd.op == opBinomLogit:
			args = append([]int32{nd.a, nd.b}, nd.elems...)
		case ops[nd.op].class == classUnary:
			args = []int32{nd.a}
		case ops[nd.op].class == classBinary:
			args = []int32{nd.a, nd.b}
		default:
			return false // a reduction or an operation this walk does not know
		}
		for _, a := range args {
			if !visit(a) {
				return false
			}
		}
		t.pos[id] = int32(len(t.order))
		t.order = append(t.order, id) // after its operands: graph order
		return true
	}
	if !visit(v) {
		return nil, false
	}
	return t, true
}

// degree returns the polynomial degree of a node in the parameters, or a
// large number where it is not a polynomial.
func degree(nodes []node, id int32, memo map[int32]int) int {
	if d, ok := memo[id]; ok {
		return d
	}
	const inf = 1 << 20
	nd := &nodes[id]
	d := inf
	switch {
	case nd.cst:
		d = 0
	case nd.op == opParam:
		d = 1
	default:
		da := func() int { return degree(nodes, nd.a, memo) }
		db := func() int { return degree(nodes, nd.b, memo) }
		switch nd.op {
		case opNeg, opMulK, opDivK, opAddK, opSubKR, opSum:
			d = da()
		case opAdd, opSub:
			d = max(da(), db())
		case opMul:
			d = da() + db()
		case opDiv:
			if db() == 0 {
				d = da()
			}
		case opSq, opSumSq:
			d = 2 * da()
		case opPowK:
			if nd.k == 0 || nd.k == 1 || nd.k == 2 {
				d = int(nd.k) * da()
			}
		case opPack:
			d = 0
			for _, e := range nd.elems {
				d = max(d, degree(nodes, e, memo))
			}
		}
		if d > inf {
			d = inf
		}
		if d != inf || ops[nd.op].class != classUnary && ops[nd.op].class != classBinary {
			break
		}
		// A non-polynomial operation of constants only is a constant.
		if da() == 0 && (nd.b < 0 || db() == 0) {
			d = 0
		}
	}
	memo[id] = d
	return d
}

// direction returns a with factor (t, e) a function of a^T x, or nil.
func (fs *Factors) direction(t *factorTerm, e int) []float64 {
	type affine struct {
		ok   bool
		coef [model.MaxParams]float64
	}
	aff := make([]affine, len(t.order))
	var dirs [][model.MaxParams]float64
	zero := func(c [model.MaxParams]float64) bool { return c == [model.MaxParams]float64{} }
	enter := func(a affine) {
		if a.ok && !zero(a.coef) {
			dirs = append(dirs, a.coef)
		}
	}
	constAt := func(id int32) (float64, bool) {
		nd := &fs.nodes[id]
		if !nd.cst {
			return 0, false
		}
		return nd.constAt(min(e, max(nd.n-1, 0))), true
	}
	for j, id := range t.order {
		nd := &fs.nodes[id]
		var r affine
		get := func(a int32) affine { return aff[t.pos[a]] }
		switch {
		case nd.cst:
			r.ok = true
		case nd.op == opParam:
			r.ok = true
			r.coef[int(nd.k)] = 1
		case nd.op == opPack:
			r = get(nd.elems[e])
		case nd.op == opNeg, nd.op == opMulK, nd.op == opDivK, nd.op == opAddK, nd.op == opSubKR:
			r = get(nd.a)
			s := ops[nd.op].value(1, 0, nd.k) - ops[nd.op].value(0, 0, nd.k) // the slope
			for k := range r.coef {
				r.coef[k] *= s
			}
		case nd.op == opAdd || nd.op == opSub:
			x, y := get(nd.a), get(nd.b)
			r.ok = x.ok && y.ok
			for k := range r.coef {
				if nd.op == opAdd {
					r.coef[k] = x.coef[k] + y.coef[k]
				} else {
					r.coef[k] = x.coef[k] - y.coef[k]
				}
			}
			if !r.ok {
				enter(x)
				enter(y)
			}
		case nd.op == opMul || nd.op == opDiv:
			x, y := get(nd.a), get(nd.b)
			cy, ky := constAt(nd.b)
			cx, kx := constAt(nd.a)
			switch {
			case x.ok && ky:
				r = x
				s := cy
				if nd.op == opDiv {
					s = 1 / cy
				}
				for k := range r.coef {
					r.coef[k] *= s
				}
			case y.ok && kx && nd.op == opMul:
				r = y
				for k := range r.coef {
					r.coef[k] *= cx
				}
			default:
				enter(x)
				enter(y)
			}
		default:
			for _, a := range []int32{nd.a, nd.b} {
				if a >= 0 {
					enter(get(a))
				}
			}
		}
		aff[j] = r
	}
	enter(aff[len(aff)-1])
	if len(dirs) == 0 {
		return nil
	}
	a := dirs[0]
	na := 0.0
	for _, v := range a[:fs.dim] {
		na += v * v
	}
	for _, d := range dirs[1:] {
		// d must be a multiple of a: its part orthogonal to a vanishes.
		dot, nd2 := 0.0, 0.0
		for k := 0; k < fs.dim; k++ {
			dot += d[k] * a[k]
			nd2 += d[k] * d[k]
		}
		if nd2-dot*dot/na > 1e-24*nd2 {
			return nil
		}
	}
	return append([]float64(nil), a[:fs.dim]...)
}

// Dim returns the number of parameters.
func (fs *Factors) Dim() int { return fs.dim }

// Params returns the model's parameters, in order (a copy).
func (fs *Factors) Params() []model.Param { return append([]model.Param(nil), fs.params...) }

// Len returns the number of factors.
func (fs *Factors) Len() int { return fs.nfac }

// Const returns the constant part of the log-density.
func (fs *Factors) Const() float64 { return fs.konst }

// locate returns the term of factor i and the element within it.
func (fs *Factors) locate(i int) (*factorTerm, int) {
	lo, hi := 0, len(fs.terms)-1
	for lo < hi {
		mid := (lo + hi + 1) / 2
		if fs.first[mid] <= i {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	return fs.terms[lo], i - fs.first[lo]
}

// Quadratic reports whether factor i is a polynomial of degree at most 2 in
// the parameters (a Gaussian term, which can be kept exact).
func (fs *Factors) Quadratic(i int) bool {
	t, _ := fs.locate(i)
	return t.quad
}

// Direction returns a when factor i depends on the parameters only through
// the linear combination a^T x, and nil otherwise (or when it is not known).
// The slice must not be modified.
func (fs *Factors) Direction(i int) []float64 { return fs.dirs[i] }

// Support returns the parameter whose support factor i is (0 inside the
// support, -Inf outside), or -1 when it is another factor.
func (fs *Factors) Support(i int) int {
	t, _ := fs.locate(i)
	return t.support - 1
}

// Describe says where factor i comes from, for messages.
func (fs *Factors) Describe(i int) string {
	t, e := fs.locate(i)
	if t.n == 0 {
		return "a term of the density"
	}
	return fmt.Sprintf("element %d of a sum over %d elements", e+1, t.n)
}
