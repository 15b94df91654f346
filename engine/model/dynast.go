package model

// Index picks elements of a vector: X[I] with I a scalar (one element) or a
// vector of positions, or the slice X[Lo:Hi] (both ends included). Positions
// count from 1. The positions must be known before the analysis: numbers,
// data, len(...) and the step number of a repeat block.
type Index struct {
	At     Pos // position of '['
	X      Expr
	I      Expr // nil for a slice
	Lo, Hi Expr // the ends of a slice; nil otherwise
}

func (n *Index) Pos() Pos { return n.At }
func (*Index) exprNode()  {}

// FuncStmt defines a function of the model: NAME(ARG, ...) = EXPR. Each call
// is replaced by the body with the arguments put in (the function is
// expanded where it is used), so a function cannot call itself.
type FuncStmt struct {
	At     Pos // position of the name
	Name   string
	Args   []string
	ArgsAt []Pos
	Body   Expr
	// Filled in by Check: the definitions visible in the body (those above
	// the function) and the operations one expansion costs.
	VisibleDefs int
	Size        int
}

func (s *FuncStmt) Pos() Pos { return s.At }
func (*FuncStmt) stmtNode()  {}

// BlockKind says how a block steps its state.
type BlockKind int

const (
	// Recurrence: repeat N [as k], each line NAME = START then UPDATE.
	Recurrence BlockKind = iota
	// ODE: ode TIMES from T0 substeps S [as t], each line NAME = START rate DERIVATIVE.
	ODE
)

// BlockStmt is a repeat block (a recurrence) or an ode block (an ordinary
// differential equation integrated by the classical Runge-Kutta method).
// Its state components become vectors after the block: one element per
// step (repeat) or per output time (ode).
type BlockStmt struct {
	At       Pos // position of repeat / ode
	Kind     BlockKind
	Steps    Expr // repeat: the number of steps
	Times    Expr // ode: the output times (a constant vector or scalar)
	Start    Expr // ode: the starting time
	Substeps Expr // ode: Runge-Kutta steps between output times
	Var      string
	VarAt    Pos
	Lines    []*BlockLine
	// Filled in by Check.
	NSteps   int       // repeat: the number of steps
	TimeVals []float64 // ode: the output times
	StartVal float64   // ode: the starting time
	NSub     int       // ode: substeps per output interval
	VarSlot  int       // slot of Var in the block's frame, -1 when none
	NSlots   int       // size of the frame: components, Var, quantities
}

func (s *BlockStmt) Pos() Pos { return s.At }
func (*BlockStmt) stmtNode()  {}

// BlockLine is one line of a block: a state component (Init and Rule set)
// or a quantity of the step (Init nil, Rule its value).
type BlockLine struct {
	At   Pos
	Name string
	Init Expr // starting value; nil for a quantity
	Rule Expr // the update (repeat), the derivative (ode), or the quantity
	Slot int  // filled in by Check: the line's slot in the block's frame
}

// Component reports whether the line is a state component.
func (l *BlockLine) Component() bool { return l.Init != nil }

// Word returns the word that introduces a block's rule: "then" or "rate".
func (k BlockKind) Word() string {
	if k == ODE {
		return "rate"
	}
	return "then"
}

// Keyword returns the word that starts a block: "repeat" or "ode".
func (k BlockKind) Keyword() string {
	if k == ODE {
		return "ode"
	}
	return "repeat"
}
