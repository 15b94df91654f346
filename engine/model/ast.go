package model

// Pos is a position in the model text. Line and Col are 1-based; Col counts
// runes (not bytes) from the start of the line. Offset is the byte offset.
type Pos struct {
	Offset int
	Line   int
	Col    int
}

// Node is any element of the syntax tree.
type Node interface {
	Pos() Pos
}

// Expr is an expression node.
type Expr interface {
	Node
	exprNode()
}

// Stmt is a statement node.
type Stmt interface {
	Node
	stmtNode()
}

// Number is a numeric literal (or the constants pi and inf, which the
// parser resolves to Number nodes with Text "pi" / "inf").
type Number struct {
	At    Pos
	Value float64
	Text  string // the literal as written
}

// Ident is a use of a name: a parameter, a definition or a constant.
type Ident struct {
	At    Pos
	Name  string
	Kind  IdentKind // filled in by Check
	Index int       // index into Model.Params or Model.Defs, by Kind
}

// IdentKind says what a name refers to once the model is checked.
type IdentKind int

const (
	// Unresolved is the kind before Check runs.
	Unresolved IdentKind = iota
	// ParamRef refers to a parameter, Model.Params[Index].
	ParamRef
	// DefRef refers to a definition, Model.Defs[Index].
	DefRef
	// LocalRef refers to slot Index of the innermost frame: an argument of
	// the function being expanded, or a name of the block being stepped.
	LocalRef
)

// Unary is a prefix operator: '-' or '+'.
type Unary struct {
	At Pos // position of the operator
	Op byte
	X  Expr
}

// Binary is an infix operator: '+', '-', '*', '/' or '^'.
type Binary struct {
	At   Pos // position of the operator
	Op   byte
	X, Y Expr
}

// Call is a function call NAME(ARGS...).
type Call struct {
	At   Pos // position of the function name
	Name string
	Args []Expr
	User *FuncStmt // filled in by Check for a function defined in the model
}

// Vector is a vector literal [e1, e2, ...].
type Vector struct {
	At    Pos // position of '['
	Elems []Expr
}

func (n *Number) Pos() Pos { return n.At }
func (n *Ident) Pos() Pos  { return n.At }
func (n *Unary) Pos() Pos  { return n.At }
func (n *Binary) Pos() Pos { return n.At }
func (n *Call) Pos() Pos   { return n.At }
func (n *Vector) Pos() Pos { return n.At }

func (*Number) exprNode() {}
func (*Ident) exprNode()  {}
func (*Unary) exprNode()  {}
func (*Binary) exprNode() {}
func (*Call) exprNode()   {}
func (*Vector) exprNode() {}

// ParamStmt declares a parameter: param NAME [in [LO, HI]].
type ParamStmt struct {
	At     Pos // position of the keyword
	Name   string
	NameAt Pos
	Lo, Hi Expr // nil when no support is given
}

// DefineStmt defines a name: NAME = EXPR.
type DefineStmt struct {
	At    Pos // position of the name
	Name  string
	Value Expr
}

// DensityStmt is the model's density: a bare expression (log-density) or
// one marked by the cost keyword (negative log-density).
type DensityStmt struct {
	At    Pos
	Cost  bool
	Value Expr
}

func (s *ParamStmt) Pos() Pos   { return s.At }
func (s *DefineStmt) Pos() Pos  { return s.At }
func (s *DensityStmt) Pos() Pos { return s.At }

func (*ParamStmt) stmtNode()   {}
func (*DefineStmt) stmtNode()  {}
func (*DensityStmt) stmtNode() {}

// Shape is the checked shape of an expression: a scalar (Len == 0) or a
// vector of Len elements.
type Shape struct {
	Len int
}

// Scalar reports whether the shape is a scalar.
func (s Shape) Scalar() bool { return s.Len == 0 }

// Param is a checked parameter.
type Param struct {
	Name     string
	Lo, Hi   float64 // support; -Inf and +Inf when unbounded
	Declared bool    // true when declared by a param statement
	At       Pos     // declaration, or first use when implicit
	// Used reports that an expression of the model refers to the
	// parameter (always, for an implicit one); a declared parameter no
	// expression names leaves the density flat along it.
	Used bool
}

// Def is a checked definition.
type Def struct {
	Name  string
	Value Expr
	Shape Shape
	// DependsOnParams is true when the value varies with the parameters.
	DependsOnParams bool
	At              Pos
	// Block is set for a state component of a block (Value is then nil):
	// component number Comp among the block's components.
	Block *BlockStmt
	Comp  int
}

// Form says how the model gave its density.
type Form int

const (
	// LogDensity: the density statement is log p (up to a constant).
	LogDensity Form = iota
	// Cost: the density statement is -log p (up to a constant).
	Cost
)

// String returns "log_density" or "cost".
func (f Form) String() string {
	if f == Cost {
		return "cost"
	}
	return "log_density"
}

// Model is a parsed and checked model.
type Model struct {
	Source  string
	Stmts   []Stmt
	Params  []Param
	Defs    []Def // in order of definition
	Density Expr  // the density statement's expression (as written: cost not negated)
	Form    Form
	// Shapes holds the checked shape of every expression node.
	Shapes map[Expr]Shape
	// UserFuncs lists the functions defined in the model, in order.
	UserFuncs []*FuncStmt
}

// Limits of the model language.
const (
	MaxParams    = 4
	MaxSource    = 64 << 10 // bytes of model text
	MaxDepth     = 200      // nesting depth of expressions
	MaxVectorLen = 100000   // elements of a vector
	// MaxUnrolled bounds the operations of the model once its functions are
	// expanded and its blocks unrolled step by step.
	MaxUnrolled = 300000
)
