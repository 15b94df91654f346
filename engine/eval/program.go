package eval

// The compiled form of a model.
//
// The scalar tape (program.code) is a list of instructions over scalar
// registers: first the parameters, then the constants, then one register per
// computed scalar. Constants are loaded once; nothing else is shared, so each
// register is written by exactly one instruction.
//
// Work over data vectors is gathered into loops (opLoop instructions). A loop
// runs a kernel, a list of elementwise instructions over vector slots, over
// the data in chunks, and feeds one or more reductions (sums, minima, ...)
// whose results are scalar registers. A kernel's operands are slots (a chunk
// of a computed vector, or of a constant data vector) or scalar registers,
// which broadcast.
//
// The block tape (program.block) is the same kernel form applied to points
// instead of data: its slots hold a block of points, parameters are slots
// that view the caller's columns, and constants are scalar operands. It
// exists when the model has no loops.

// instr is one scalar instruction: dst = op(a, b; k).
type instr struct {
	op   opcode
	dst  int32
	a, b int32
	k    float64
}

// operand forms of a kernel instruction.
const (
	formV    uint8 = iota // unary on slot a
	formVV                // slots a and b
	formVS                // slot a, scalar b
	formSV                // scalar a, slot b
	formPack              // elems: scalar registers, one per element
	formVVV               // slots a, b and c (opBinomLogit)
)

// kinstr is one kernel instruction: slot dst = op(a, b; k) elementwise.
// The fused operations (opLin, opQuad) also use the scalar operands sa, sb
// (-1 when the immediates k, k2 stand instead) and flags.
type kinstr struct {
	op     opcode
	form   uint8
	flags  uint8
	dst    int32
	a, b   int32
	c      int32 // formVVV: the third slot
	sa, sb int32
	k, k2  float64
	k3     float64 // opLin with flagShiftB: the constant added to b before squaring
	elems  []int32
	tests  []guardTest // opGuards: the tests, the innermost first
}

// guardTest is one test of an opGuards: the guard op of slot t against k
// (in a kop before slots are assigned, t is a node).
type guardTest struct {
	op opcode
	t  int32
	k  float64
}

// Flags of the fused kernel operations.
const (
	flagNoA    uint8 = 1 << iota // opLin: no vector a: c + s*b
	flagNoC                      // no additive c
	flagNegC                     // c is minus the scalar operand sa
	flagNegS                     // s is minus the scalar operand sb
	flagSqB                      // opLin: s*b^2
	flagDiv                      // opQuad: divide by k2
	flagNoK                      // opQuad: no factor k2
	flagShiftB                   // opLin with flagSqB: s*(b + k3)^2
)

// pin makes a slot view constant data (or, in the block tape, a parameter's
// column).
type pin struct {
	slot  int32
	data  []float64 // nil in the block tape
	param int       // block tape: the parameter
}

// reduction folds a kernel slot into a scalar register. In value mode a
// sum or sum of squares of an opLin may take the instruction in (fused):
// it then reads the lin's operands instead of a slot.
type reduction struct {
	op    opcode // opSum, opSumSq, opRMin, opRMax, opRLse
	src   int32
	dst   int32
	fused *kinstr
}

// loop is a kernel over vectors of length n feeding reductions. kern (with
// fused operations) is for value mode, jkern (without) for derivative mode;
// each has its own slot numbering.
type loop struct {
	n       int
	kern    []kinstr
	nslots  int
	pins    []pin
	reds    []reduction
	jkern   []kinstr
	jnslots int
	jpins   []pin
	jreds   []reduction
}

// blockTape evaluates the model on blocks of points.
type blockTape struct {
	kern   []kinstr
	nslots int
	pins   []pin     // the parameters' slots
	consts []float64 // scalar operands
	// The result: a slot, a parameter's column, or a constant.
	rootSlot  int32 // -1 when the result is not computed by the kernel
	rootParam int   // -1 unless the result is a parameter
	rootConst float64
}

// program is a compiled model.
type program struct {
	dim      int
	nregs    int
	init     []float64 // initial register values (constants; parameters are set per call)
	isVar    []bool    // register depends on the parameters
	code     []instr
	loops    []loop
	root     int32 // register of the log-density
	block    *blockTape
	flat     *flatTape // block evaluation of models with short loops
	maxSlots int       // the most slots of any loop
}
