package model

// Arity kinds of the model language's functions.
const (
	// Variadic marks a function that takes MinArgs or more arguments.
	Variadic = -1
)

// FuncKind says how a function treats vector arguments.
type FuncKind int

const (
	// Elementwise functions broadcast: vector arguments of equal length and
	// scalars give a vector of that length; all scalars give a scalar.
	Elementwise FuncKind = iota
	// Reduction functions take one vector (or several scalars, for
	// logsumexp, min and max) and give a scalar.
	Reduction
)

// FuncInfo describes one function of the model language.
type FuncInfo struct {
	Name    string
	MinArgs int
	MaxArgs int // Variadic for no upper limit
	Kind    FuncKind
	// Args names the arguments, for messages and documentation.
	Args string
	// Doc is one line: what it computes, with its formula.
	Doc string
}

// Funcs lists every function of the model language, keyed by name. Package
// eval implements each one; a test there checks that none is missing.
var Funcs = map[string]FuncInfo{}

func init() {
	for _, f := range funcList {
		Funcs[f.Name] = f
	}
}

// FuncNames returns the function names in documentation order.
func FuncNames() []string {
	names := make([]string, len(funcList))
	for i, f := range funcList {
		names[i] = f.Name
	}
	return names
}

var funcList = []FuncInfo{
	// Elementary functions.
	{Name: "exp", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "e^x"},
	{Name: "log", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "natural logarithm; -inf at 0, NaN below"},
	{Name: "log1p", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "log(1 + x), accurate for small x"},
	{Name: "expm1", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "e^x - 1, accurate for small x"},
	{Name: "sqrt", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "square root"},
	{Name: "abs", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "|x|"},
	{Name: "sin", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "sine"},
	{Name: "cos", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "cosine"},
	{Name: "tan", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "tangent"},
	{Name: "atan", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "arctangent"},
	{Name: "sinh", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "hyperbolic sine"},
	{Name: "cosh", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "hyperbolic cosine"},
	{Name: "tanh", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "hyperbolic tangent"},
	{Name: "erf", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "error function (2/sqrt(pi)) int_0^x e^(-t^2) dt"},
	{Name: "erfc", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "complementary error function 1 - erf(x)"},
	{Name: "lgamma", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "log |Gamma(x)|"},
	{Name: "digamma", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "d/dx log Gamma(x)"},
	{Name: "logistic", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "1 / (1 + e^-x)"},
	{Name: "log1pexp", MinArgs: 1, MaxArgs: 1, Args: "x", Doc: "log(1 + e^x) without overflow (softplus)"},
	{Name: "pow", MinArgs: 2, MaxArgs: 2, Args: "x, y", Doc: "x^y, the same as the ^ operator"},
	{Name: "min", MinArgs: 1, MaxArgs: Variadic, Kind: Reduction, Args: "a, b, ... or v", Doc: "smallest of the arguments, or of a vector's elements"},
	{Name: "max", MinArgs: 1, MaxArgs: Variadic, Kind: Reduction, Args: "a, b, ... or v", Doc: "largest of the arguments, or of a vector's elements"},
	{Name: "logsumexp", MinArgs: 1, MaxArgs: Variadic, Kind: Reduction, Args: "a, b, ... or v", Doc: "log(e^a + e^b + ...), computed stably; of the arguments or of a vector's elements"},
	{Name: "sum", MinArgs: 1, MaxArgs: 1, Kind: Reduction, Args: "v", Doc: "sum of a vector's elements (a scalar is its own sum)"},
	{Name: "mean", MinArgs: 1, MaxArgs: 1, Kind: Reduction, Args: "v", Doc: "arithmetic mean of a vector's elements"},
	{Name: "len", MinArgs: 1, MaxArgs: 1, Kind: Reduction, Args: "v", Doc: "number of elements of a vector (1 for a scalar)"},

	// Log-densities of common families, elementwise in every argument.
	// Each returns -inf outside the family's support.
	{Name: "ld_normal", MinArgs: 3, MaxArgs: 3, Args: "x, mean, sd",
		Doc: "normal: -(x-mean)^2/(2 sd^2) - log(sd) - log(2 pi)/2"},
	{Name: "ld_student", MinArgs: 4, MaxArgs: 4, Args: "x, nu, loc, scale",
		Doc: "Student t with nu degrees of freedom: lgamma((nu+1)/2) - lgamma(nu/2) - log(nu pi)/2 - log(scale) - (nu+1)/2 log(1 + z^2/nu), z = (x-loc)/scale"},
	{Name: "ld_cauchy", MinArgs: 3, MaxArgs: 3, Args: "x, loc, scale",
		Doc: "Cauchy: -log(pi scale) - log(1 + z^2), z = (x-loc)/scale"},
	{Name: "ld_laplace", MinArgs: 3, MaxArgs: 3, Args: "x, loc, scale",
		Doc: "Laplace (double exponential): -log(2 scale) - |x-loc|/scale"},
	{Name: "ld_logistic", MinArgs: 3, MaxArgs: 3, Args: "x, loc, scale",
		Doc: "logistic: -z - log(scale) - 2 log(1 + e^-z), z = (x-loc)/scale"},
	{Name: "ld_gamma", MinArgs: 3, MaxArgs: 3, Args: "x, shape, rate",
		Doc: "gamma, x > 0: shape log(rate) - lgamma(shape) + (shape-1) log(x) - rate x"},
	{Name: "ld_invgamma", MinArgs: 3, MaxArgs: 3, Args: "x, shape, scale",
		Doc: "inverse gamma, x > 0: shape log(scale) - lgamma(shape) - (shape+1) log(x) - scale/x"},
	{Name: "ld_beta", MinArgs: 3, MaxArgs: 3, Args: "x, a, b",
		Doc: "beta, 0 < x < 1: (a-1) log(x) + (b-1) log(1-x) - lgamma(a) - lgamma(b) + lgamma(a+b)"},
	{Name: "ld_exponential", MinArgs: 2, MaxArgs: 2, Args: "x, rate",
		Doc: "exponential, x >= 0: log(rate) - rate x"},
	{Name: "ld_poisson", MinArgs: 2, MaxArgs: 2, Args: "k, rate",
		Doc: "Poisson count k >= 0: k log(rate) - rate - lgamma(k+1)"},
	{Name: "ld_binomial", MinArgs: 3, MaxArgs: 3, Args: "k, n, p",
		Doc: "binomial, 0 <= k <= n, 0 <= p <= 1: lgamma(n+1) - lgamma(k+1) - lgamma(n-k+1) + k log(p) + (n-k) log(1-p)"},
	{Name: "ld_lognormal", MinArgs: 3, MaxArgs: 3, Args: "x, mu, sigma",
		Doc: "log-normal, x > 0: -(log(x)-mu)^2/(2 sigma^2) - log(x sigma) - log(2 pi)/2"},
}
