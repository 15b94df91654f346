package eval

import (
	"fmt"
	"strings"
)

// Tape returns a listing of the compiled tape, for debugging and for the
// curious: the scalar instructions (r0.. are the parameters, then the
// constants), each loop's kernel over slots (s0..) and reductions, and the
// block tape when there is one.
func (ev *Evaluator) Tape() string {
	p := ev.prog
	var b strings.Builder
	fmt.Fprintf(&b, "params r0..r%d\n", p.dim-1)
	for r := p.dim; r < p.nregs; r++ {
		if !p.isVar[r] {
			fmt.Fprintf(&b, "r%d = %g\n", r, p.init[r])
		}
	}
	for _, in := range p.code {
		if in.op == opLoop {
			lp := &p.loops[in.a]
			fmt.Fprintf(&b, "loop %d over %d elements, %d slots:\n", in.a, lp.n, lp.nslots)
			for _, pn := range lp.pins {
				fmt.Fprintf(&b, "  s%d = data[%d]\n", pn.slot, len(pn.data))
			}
			writeKernel(&b, "  ", lp.kern, "r")
			for _, red := range lp.reds {
				fmt.Fprintf(&b, "  r%d = %s(s%d)\n", red.dst, ops[red.op].name, red.src)
			}
			fmt.Fprintf(&b, "  derivative mode, %d slots:\n", lp.jnslots)
			writeKernel(&b, "    ", lp.jkern, "r")
			continue
		}
		fmt.Fprintf(&b, "r%d = %s(r%d", in.dst, ops[in.op].name, in.a)
		if ops[in.op].class == classBinary {
			fmt.Fprintf(&b, ", r%d", in.b)
		}
		fmt.Fprintf(&b, "; %g)\n", in.k)
	}
	fmt.Fprintf(&b, "result r%d\n", p.root)
	if ft := p.flat; ft != nil {
		fmt.Fprintf(&b, "flat block tape, %d points a pass, %d slots, constants %v:\n", ft.q, len(ft.slotLen), ft.consts)
		for _, st := range ft.stages {
			if st.n == 0 {
				fmt.Fprintf(&b, "  over points:\n")
			} else {
				fmt.Fprintf(&b, "  over points x %d elements:\n", st.n)
			}
			for _, ex := range st.expand {
				fmt.Fprintf(&b, "    s%d = expand(s%d)\n", ex.dst, ex.src)
			}
			writeKernel(&b, "    ", st.kern, "c")
			for _, red := range st.reds {
				fmt.Fprintf(&b, "    s%d = %s(s%d) per point\n", red.dst, ops[red.op].name, red.src)
			}
		}
		fmt.Fprintf(&b, "  result s%d\n", ft.rootSlot)
	}
	if bt := p.block; bt != nil {
		fmt.Fprintf(&b, "block tape, %d slots, constants %v:\n", bt.nslots, bt.consts)
		writeKernel(&b, "  ", bt.kern, "c")
		fmt.Fprintf(&b, "  result s%d\n", bt.rootSlot)
	}
	return b.String()
}

func writeKernel(b *strings.Builder, indent string, kern []kinstr, scalar string) {
	for _, in := range kern {
		if in.op == opGuards {
			fmt.Fprintf(b, "%ss%d = guards(s%d", indent, in.dst, in.a)
			for _, g := range in.tests {
				fmt.Fprintf(b, "; %s s%d %g", ops[g.op].name, g.t, g.k)
			}
			fmt.Fprintf(b, ")\n")
			continue
		}
		if in.op == opLin || in.op == opQuad {
			fmt.Fprintf(b, "%ss%d = %s(a=s%d b=s%d sa=%s%d sb=%s%d k=%g k2=%g", indent, in.dst, ops[in.op].name,
				in.a, in.b, scalar, in.sa, scalar, in.sb, in.k, in.k2)
			if in.flags&flagShiftB != 0 {
				fmt.Fprintf(b, " k3=%g", in.k3)
			}
			fmt.Fprintf(b, " flags=%b)\n", in.flags)
			continue
		}
		fmt.Fprintf(b, "%ss%d = %s(", indent, in.dst, ops[in.op].name)
		switch in.form {
		case formV:
			fmt.Fprintf(b, "s%d", in.a)
		case formVV:
			fmt.Fprintf(b, "s%d, s%d", in.a, in.b)
		case formVS:
			fmt.Fprintf(b, "s%d, %s%d", in.a, scalar, in.b)
		case formSV:
			fmt.Fprintf(b, "%s%d, s%d", scalar, in.a, in.b)
		case formVVV:
			fmt.Fprintf(b, "s%d, s%d, s%d", in.a, in.b, in.c)
		case formPack:
			fmt.Fprintf(b, "%d elements", len(in.elems))
		}
		fmt.Fprintf(b, "; %g)\n", in.k)
	}
}
