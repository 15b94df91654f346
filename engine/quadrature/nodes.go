package quadrature

// NodeSet is a weighted set of points on the unconstrained scale: the
// integral of a function f against the density is approximated by
// sum_i exp(LogWeight(i) + LogP(i)) f(z_i), and the posterior expectation by
// that sum divided by exp(LogZ).
type NodeSet interface {
	// Len returns the number of nodes.
	Len() int
	// Point writes node i's coordinates into z (len Dim).
	Point(i int, z []float64)
	// LogWeight returns the log of node i's weight, every Jacobian of the
	// rule's coordinates included.
	LogWeight(i int) float64
	// LogP returns the log-density at node i as evaluated (unnormalised).
	LogP(i int) float64
}

// Nodes is the node set of the finest rule: the nodes where the density is
// finite and positive.
type Nodes struct {
	dim  int
	z    []float64 // node i at z[i*dim : (i+1)*dim], in parameter order
	logW []float64
	logP []float64
	tier []uint8 // 2: also a node of the rules of steps 2h and 4h; 1: of 2h only
}

var _ NodeSet = (*Nodes)(nil)

// Dim returns the number of coordinates of each node.
func (n *Nodes) Dim() int { return n.dim }

// Len returns the number of nodes.
func (n *Nodes) Len() int { return len(n.logW) }

// Point writes node i's coordinates into z.
func (n *Nodes) Point(i int, z []float64) { copy(z, n.z[i*n.dim:(i+1)*n.dim]) }

// LogWeight returns the log of node i's weight in the finest rule.
func (n *Nodes) LogWeight(i int) float64 { return n.logW[i] }

// LogP returns the log-density at node i.
func (n *Nodes) LogP(i int) float64 { return n.logP[i] }

// Coarse reports whether node i is a node of the rule of step 2h (its
// weight there is 2^Dim times LogWeight's).
func (n *Nodes) Coarse(i int) bool { return n.tier[i] >= 1 }

// reserve makes room for about m nodes of dimension d.
func (n *Nodes) reserve(m, d int) {
	if m <= cap(n.logW) {
		return
	}
	n.z = make([]float64, 0, m*d)
	n.logW = make([]float64, 0, m)
	n.logP = make([]float64, 0, m)
	n.tier = make([]uint8, 0, m)
}

func (n *Nodes) add(z []float64, logW, logP float64, tier int) {
	for _, v := range z { // not append(n.z, z...): a memmove call per node
		n.z = append(n.z, v)
	}
	n.logW = append(n.logW, logW)
	n.logP = append(n.logP, logP)
	n.tier = append(n.tier, uint8(tier))
}
