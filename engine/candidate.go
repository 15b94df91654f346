package engine

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/gauss"
	"bellcheck/engine/model"
)

// Candidate is a Gaussian of the user's own (a derivation to check, say),
// scored against the exact density like the fits. Mean and Cov are on the
// original scale of the parameters, by index: Mean has one entry per
// parameter and Cov is the full symmetric covariance matrix. Use
// CandidateFromSD to build one from sds and correlations.
//
// With FittingScale set, Mean and Cov are on the fitting scale instead
// (log(x - lo) for a parameter fitted on the log scale: a log-normal
// candidate), like a fit's normal; a candidate on the original scale is
// refused where a parameter's fitting scale is not the identity, since it
// is no normal there.
type Candidate struct {
	// Name names the candidate in tables, legends and the JSON: a name as
	// in the model language (letters, digits, underscores), not the key of
	// a fit method.
	Name string      `json:"name"`
	Mean []float64   `json:"mean"`
	Cov  [][]float64 `json:"cov"`
	// FittingScale says that Mean and Cov are on the fitting scale.
	FittingScale bool `json:"fitting_scale,omitempty"`
}

// CandidateFromSD returns the candidate with the given means, standard
// deviations and correlation matrix (nil for none: independent
// parameters): Cov[i][j] = corr[i][j] sd[i] sd[j]. It does not check the
// values; Analyse does.
func CandidateFromSD(name string, mean, sd []float64, corr [][]float64) Candidate {
	d := len(sd)
	cov := make([][]float64, d)
	for i := range cov {
		cov[i] = make([]float64, d)
		for j := range cov[i] {
			r := 0.0
			switch {
			case i == j:
				r = 1
			case corr != nil && i < len(corr) && j < len(corr[i]):
				r = corr[i][j]
			}
			cov[i][j] = r * sd[i] * sd[j]
		}
	}
	return Candidate{Name: name, Mean: append([]float64(nil), mean...), Cov: cov}
}

// OnFittingScale returns c with FittingScale set: its mean and covariance
// are read on the parameters' fitting scales.
func (c Candidate) OnFittingScale() Candidate {
	c.FittingScale = true
	return c
}

// MaxCandidates is the most candidates one analysis scores.
const MaxCandidates = 8

// CheckCandidate checks a candidate against a model of the given
// parameters (names by index): its name, the sizes of its mean and
// covariance, finite values, a symmetric covariance that is positive
// definite (not singular). The error names the candidate and the entry.
func CheckCandidate(c Candidate, params []string) error {
	if p := model.NameProblem(c.Name); p != "" {
		return fmt.Errorf("candidate %s: the name %s", strconv.Quote(c.Name), p)
	}
	if _, isMethod := MethodOf(c.Name); isMethod {
		return fmt.Errorf("candidate %s: the name is a fit method's; choose another", c.Name)
	}
	d := len(params)
	if len(c.Mean) != d {
		return fmt.Errorf("candidate %s: the mean has %d entries, but the model has %d parameters (%s)", c.Name, len(c.Mean), d, strings.Join(params, ", "))
	}
	if len(c.Cov) != d {
		return fmt.Errorf("candidate %s: the covariance has %d rows, but the model has %d parameters", c.Name, len(c.Cov), d)
	}
	for i, v := range c.Mean {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("candidate %s: the mean of %s is %v, not a finite number", c.Name, params[i], v)
		}
	}
	for i, row := range c.Cov {
		if len(row) != d {
			return fmt.Errorf("candidate %s: row %d of the covariance (%s) has %d entries, want %d", c.Name, i+1, params[i], len(row), d)
		}
		for j, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("candidate %s: the covariance of %s and %s is %v, not a finite number", c.Name, params[i], params[j], v)
			}
		}
	}
	for i := 0; i < d; i++ {
		if !(c.Cov[i][i] > 0) {
			return fmt.Errorf("candidate %s: the variance of %s is %v; it must be positive", c.Name, params[i], c.Cov[i][i])
		}
		for j := 0; j < i; j++ {
			a, b := c.Cov[i][j], c.Cov[j][i]
			if math.Abs(a-b) > 1e-12*max(math.Abs(a), math.Abs(b)) {
				return fmt.Errorf("candidate %s: the covariance is not symmetric: %v for (%s, %s) but %v for (%s, %s)", c.Name, a, params[i], params[j], b, params[j], params[i])
			}
			if r := a / math.Sqrt(c.Cov[i][i]*c.Cov[j][j]); !(math.Abs(r) < 1) {
				return fmt.Errorf("candidate %s: the correlation of %s and %s is %.6g; it must lie strictly between -1 and 1", c.Name, params[i], params[j], r)
			}
		}
	}
	if _, err := gauss.Prepare(c.gaussian()); err != nil {
		return fmt.Errorf("candidate %s: the covariance is singular or not positive definite (%s)", c.Name,
			strings.TrimPrefix(err.Error(), gauss.ErrBad.Error()+": "))
	}
	return nil
}

// gaussian returns the candidate as a normal (the lower triangle of Cov
// mirrored, which CheckCandidate found symmetric).
func (c Candidate) gaussian() gauss.Gaussian {
	d := len(c.Mean)
	cov := mat.NewSymDense(d, nil)
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			cov.SetSym(i, j, c.Cov[i][j])
		}
	}
	return gauss.Gaussian{Mean: append([]float64(nil), c.Mean...), Cov: cov}
}

// checkCandidates checks the options' candidates against the model (part
// of the setup: a bad candidate is an error of the options). A candidate
// is a normal on the original scale; the comparison works on the fitting
// scale, where it stays a normal only for parameters fitted as they are.
func (a *analysis) checkCandidates() error {
	cs := a.opts.Candidates
	if len(cs) > MaxCandidates {
		return fmt.Errorf("%w: %d candidates; at most %d", ErrOptions, len(cs), MaxCandidates)
	}
	if len(cs) == 0 {
		return nil
	}
	seen := map[string]bool{}
	for _, c := range cs {
		for k, sc := range a.scales {
			if !sc.IsIdentity() && !c.FittingScale {
				return fmt.Errorf("%w: candidate %s: %s is fitted on the %s scale, but the candidate is a normal on the original scale; fit %s on the identity scale, or give the candidate on the fitting scale",
					ErrOptions, c.Name, a.names[k], sc, a.names[k])
			}
		}
		if err := CheckCandidate(c, a.names); err != nil {
			return fmt.Errorf("%w: %v", ErrOptions, err)
		}
		if seen[c.Name] {
			return fmt.Errorf("%w: two candidates are named %s", ErrOptions, c.Name)
		}
		seen[c.Name] = true
	}
	return nil
}

// addCandidates is the candidates stage: each candidate joins the fits
// handed to the comparison (prepared: checkCandidates found it sound), so
// that the comparison and the report score it exactly as they score a fit;
// the report puts it in Result.Candidates.
func (a *analysis) addCandidates() {
	for i, c := range a.opts.Candidates {
		g := c.gaussian()
		q, err := gauss.Prepare(g)
		if err != nil {
			continue // not reached: checkCandidates prepared it
		}
		a.fits = append(a.fits, fitted{g: g, q: q, run: Fit{Converged: true}, candidate: c.Name, index: i})
	}
}

// place returns where the report puts a fit in the Result: its method's
// entry, or its candidate's.
func (a *analysis) place(res *Result, f fitted) **Fit {
	if f.candidate != "" {
		if res.Candidates == nil {
			res.Candidates = make(Candidates, len(a.opts.Candidates))
			for i, c := range a.opts.Candidates {
				res.Candidates[i].Name = c.Name
			}
		}
		return &res.Candidates[f.index].Fit
	}
	return &res.Fits[f.method]
}

// slot is the fit's index in the availability record: its method, or
// NumMethods plus its index for a candidate.
func (f fitted) slot() int {
	if f.candidate != "" {
		return NumMethods + f.index
	}
	return int(f.method)
}

// quantity is the fit itself as a quantity of the availability record.
func (f fitted) quantity() Quantity {
	if f.candidate != "" {
		return Quantity("candidate:" + f.candidate)
	}
	return f.method.quantity()
}

// noun names the fit inside a sentence: "the reverse-KL fit", "the
// candidate mine".
func (f fitted) noun() string {
	if f.candidate != "" {
		return "the candidate " + f.candidate
	}
	return "the " + f.method.term() + " fit"
}

// Candidates are the user's Gaussians scored against the exact density, in
// the order given (Options.Candidates). The JSON is an object with a
// member per candidate, named by its name, in that order; a member is null
// where the candidate could not be scored.
type Candidates []NamedFit

// NamedFit is a candidate's name and its scores: a Fit (the same fields as
// a method's fit, with no evidence, precision or optimiser's run).
type NamedFit struct {
	Name string
	Fit  *Fit
}

func (cs Candidates) writeJSON(b *bytes.Buffer) error {
	b.WriteByte('{')
	for i, c := range cs {
		if i > 0 {
			b.WriteByte(',')
		}
		writeKey(b, c.Name)
		if err := writeJSON(b, reflect.ValueOf(c.Fit)); err != nil {
			return err
		}
	}
	b.WriteByte('}')
	return nil
}

// MarshalJSON writes the candidates as an object keyed by name, non-finite
// numbers as null.
func (cs Candidates) MarshalJSON() ([]byte, error) { return marshalNull(cs) }

// UnmarshalJSON reads the object MarshalJSON writes, keeping the members'
// order (null numbers stay zero, as encoding/json leaves them).
func (cs *Candidates) UnmarshalJSON(b []byte) error {
	dec := json.NewDecoder(bytes.NewReader(b))
	tok, err := dec.Token()
	if err != nil {
		return err
	}
	if tok == nil {
		*cs = nil
		return nil
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return fmt.Errorf("engine: candidates: want an object, got %v", tok)
	}
	var out Candidates
	for dec.More() {
		key, err := dec.Token()
		if err != nil {
			return err
		}
		var f *Fit
		if err := dec.Decode(&f); err != nil {
			return err
		}
		out = append(out, NamedFit{Name: key.(string), Fit: f})
	}
	if _, err := dec.Token(); err != nil {
		return err
	}
	*cs = out
	return nil
}

// Approximation is one column of the results: a fit method or a candidate.
type Approximation struct {
	// Key is the method's JSON key, or the candidate's name.
	Key string
	// Label is the column's heading: the method's label, or the
	// candidate's name.
	Label string
	// Candidate is set for a user's Gaussian; Method is the fit method
	// otherwise.
	Candidate bool
	Method    Method
	// Fit is the approximation's numbers; nil where it does not exist.
	Fit *Fit
}

// Approximations lists the result's columns in display order: every fit
// method (engine.Methods, with a nil Fit where absent), then the
// candidates in the order given. Tables and exports iterate it.
func (r *Result) Approximations() []Approximation {
	out := make([]Approximation, 0, NumMethods+len(r.Candidates))
	for _, m := range Methods {
		out = append(out, Approximation{Key: m.Key(), Label: m.Label(), Method: m, Fit: r.Fits[m]})
	}
	for _, c := range r.Candidates {
		out = append(out, Approximation{Key: c.Name, Label: c.Name, Candidate: true, Fit: c.Fit})
	}
	return out
}
