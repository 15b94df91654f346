package paramopt

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Gaussian starts a candidate Gaussian's setting line:
//
//	#@ gaussian NAME mean.P=V ... sd.P=V ... [corr.P.Q=R ...]
//	#@ gaussian NAME mean.P=V ... cov.P.P=V ... [cov.P.Q=V ...]
//
// P and Q are parameter names; every parameter needs a mean, and either an
// sd (with correlations, 0 where left out) or a variance cov.P.P (with
// covariances, 0 where left out). Lines with the same NAME add to one
// candidate. The values are on the original scale, or on the fitting
// scale with the field scale=fitting (a log-normal candidate for a
// parameter fitted on the log scale, say).
const Gaussian Kind = "gaussian"

// CandidateSpec is a candidate Gaussian as read (and syntax-checked) from
// setting lines or a --gaussian flag.
type CandidateSpec struct {
	Name   string
	Fields []CandidateField
	// FittingScale is set by the field scale=fitting.
	FittingScale bool
	// Flag, or Line and Col, say where the name was given.
	Flag      string
	Line, Col int
}

// CandidateField is one KEY=VALUE of a candidate: Key is "mean", "sd",
// "corr" or "cov", Params the one or two parameter names after it.
type CandidateField struct {
	Key    string
	Params []string
	Value  float64
	Text   string // as written
	Line   int
	Col    int
}

func (s CandidateSpec) errorf(line, col int, format string, args ...any) *Error {
	if s.Flag != "" {
		line, col = 0, 0
	}
	return &Error{Flag: s.Flag, Line: line, Col: col, Msg: fmt.Sprintf(format, args...)}
}

// CandidateLines reads the gaussian setting lines of a model text, lines
// with the same name merged into one candidate in the order first named.
func CandidateLines(src string) ([]CandidateSpec, error) {
	var out []CandidateSpec
	err := eachLine(src, func(line, _ int, fields []field) error {
		if len(fields) == 0 || Kind(fields[0].text) != Gaussian {
			return nil
		}
		spec := CandidateSpec{Line: line, Col: fields[0].col}
		if err := spec.read(fields[1:], fields[0].col+runes(fields[0].text)); err != nil {
			return err
		}
		out = mergeSpec(out, spec)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// ParseCandidateFlag reads a --gaussian flag's value: the text of a
// gaussian line after the word gaussian, "NAME mean.P=V sd.P=V ..." (blanks
// or commas between the fields).
func ParseCandidateFlag(value string) (CandidateSpec, error) {
	spec := CandidateSpec{Flag: "--" + string(Gaussian)}
	err := spec.read(fieldsAt(value, 1), 1)
	return spec, err
}

// mergeSpec adds spec to specs, appending its fields to an earlier
// candidate of the same name.
func mergeSpec(specs []CandidateSpec, spec CandidateSpec) []CandidateSpec {
	for i := range specs {
		if specs[i].Name == spec.Name {
			specs[i].Fields = append(specs[i].Fields, spec.Fields...)
			specs[i].FittingScale = specs[i].FittingScale || spec.FittingScale
			return specs
		}
	}
	return append(specs, spec)
}

// read reads the name and the fields; end is the column after the word
// gaussian, for a line with nothing after it.
func (s *CandidateSpec) read(fields []field, end int) error {
	if len(fields) == 0 {
		return s.errorf(s.Line, end, "gaussian needs a name and its fields: #@ gaussian NAME mean.P=V sd.P=V ...")
	}
	s.Name, s.Col = fields[0].text, fields[0].col
	if strings.Contains(s.Name, "=") {
		return s.errorf(s.Line, s.Col, "%s: a gaussian's first word is its name, as in gaussian mine mean.x=0 sd.x=1", strconv.Quote(s.Name))
	}
	if p := model.NameProblem(s.Name); p != "" {
		return s.errorf(s.Line, s.Col, "the candidate's name %s %s", strconv.Quote(s.Name), p)
	}
	if _, isMethod := engine.MethodOf(s.Name); isMethod {
		return s.errorf(s.Line, s.Col, "the candidate's name %s is a fit method's; choose another", s.Name)
	}
	if len(fields) == 1 {
		return s.errorf(s.Line, s.Col+runes(s.Name), "gaussian %s needs its fields: mean.P=V for each parameter P, and sd.P=V or cov.P.P=V", s.Name)
	}
	for _, f := range fields[1:] {
		if v, ok := strings.CutPrefix(f.text, "scale="); ok {
			switch v {
			case "fitting":
				s.FittingScale = true
			case "original":
			default:
				return s.errorf(s.Line, f.col, "%s: want scale=fitting or scale=original", strconv.Quote(f.text))
			}
			continue
		}
		cf, err := s.field(f)
		if err != nil {
			return err
		}
		s.Fields = append(s.Fields, cf)
	}
	return nil
}

// field reads one KEY=VALUE.
func (s *CandidateSpec) field(f field) (CandidateField, error) {
	key, value, ok := strings.Cut(f.text, "=")
	cf := CandidateField{Text: f.text, Line: s.Line, Col: f.col}
	if !ok || key == "" || value == "" {
		return cf, s.errorf(s.Line, f.col, "%s: want mean.P=V, sd.P=V, corr.P.Q=R or cov.P.Q=V", strconv.Quote(f.text))
	}
	parts := strings.Split(key, ".")
	cf.Key, cf.Params = parts[0], parts[1:]
	want := map[string]int{"mean": 1, "sd": 1, "corr": 2, "cov": 2}
	n, known := want[cf.Key]
	switch {
	case !known:
		return cf, s.errorf(s.Line, f.col, "%s: unknown field %s: want mean, sd, corr or cov", strconv.Quote(f.text), strconv.Quote(cf.Key))
	case len(cf.Params) != n:
		return cf, s.errorf(s.Line, f.col, "%s: %s takes %d parameter name(s), as in %s", strconv.Quote(f.text), cf.Key, n,
			map[int]string{1: cf.Key + ".x=1", 2: cf.Key + ".x.y=0.5"}[n])
	}
	for _, p := range cf.Params {
		if problem := model.NameProblem(p); problem != "" {
			return cf, s.errorf(s.Line, f.col, "%s: the parameter's name %s %s", strconv.Quote(f.text), strconv.Quote(p), problem)
		}
	}
	v, err := strconv.ParseFloat(value, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return cf, s.errorf(s.Line, f.col, "%s: %s is not a finite number", strconv.Quote(f.text), strconv.Quote(value))
	}
	cf.Value = v
	return cf, nil
}

// Candidates checks candidate specs against the model's parameters and
// returns them as engine candidates: every parameter has a mean and a
// spread (sd, or a variance cov.P.P), sds are positive, correlations
// strictly between -1 and 1, a candidate uses either sd/corr or cov, and
// the covariance is positive definite (engine.CheckCandidate). A later spec
// with a name already given replaces the earlier one (so a flag overrides
// a file's line). Errors say where (line:col, or the flag).
func Candidates(m *model.Model, specs []CandidateSpec) ([]engine.Candidate, error) {
	if m == nil || len(m.Params) == 0 {
		return nil, nil
	}
	var order []string
	byName := map[string]CandidateSpec{}
	for _, s := range specs {
		if _, seen := byName[s.Name]; !seen {
			order = append(order, s.Name)
		}
		byName[s.Name] = s
	}
	if len(order) > engine.MaxCandidates {
		s := byName[order[engine.MaxCandidates]]
		return nil, s.errorf(s.Line, s.Col, "at most %d candidate Gaussians", engine.MaxCandidates)
	}
	names := make([]string, len(m.Params))
	index := map[string]int{}
	for i, p := range m.Params {
		names[i] = p.Name
		index[p.Name] = i
	}
	var out []engine.Candidate
	for _, n := range order {
		c, err := build(byName[n], names, index)
		if err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, nil
}

// build turns one spec into a candidate.
func build(s CandidateSpec, names []string, index map[string]int) (engine.Candidate, error) {
	d := len(names)
	nan := math.NaN()
	mean, sd := filled(d, nan), filled(d, nan)
	corr, cov := make([][]float64, d), make([][]float64, d)
	for i := range corr {
		corr[i], cov[i] = filled(d, 0), filled(d, 0)
		corr[i][i] = 1
	}
	set := map[string]bool{}
	usesSD, usesCov := false, false
	for _, f := range s.Fields {
		idx := make([]int, len(f.Params))
		for k, p := range f.Params {
			i, ok := index[p]
			if !ok {
				return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: the model has no parameter %s (its parameters: %s)", strconv.Quote(f.Text), p, strings.Join(names, ", "))
			}
			idx[k] = i
		}
		key := f.Key
		if len(idx) == 2 {
			a, b := min(idx[0], idx[1]), max(idx[0], idx[1])
			key += "." + names[a] + "." + names[b]
		} else {
			key += "." + names[idx[0]]
		}
		if set[key] {
			return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: %s of candidate %s is given twice", strconv.Quote(f.Text), key, s.Name)
		}
		set[key] = true
		switch f.Key {
		case "mean":
			mean[idx[0]] = f.Value
		case "sd":
			usesSD = true
			if !(f.Value > 0) {
				return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: an sd must be positive", strconv.Quote(f.Text))
			}
			sd[idx[0]] = f.Value
		case "corr":
			usesSD = true
			if idx[0] == idx[1] {
				return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: a correlation is between two different parameters", strconv.Quote(f.Text))
			}
			if !(math.Abs(f.Value) < 1) {
				return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: a correlation must lie strictly between -1 and 1", strconv.Quote(f.Text))
			}
			corr[idx[0]][idx[1]], corr[idx[1]][idx[0]] = f.Value, f.Value
		case "cov":
			usesCov = true
			if idx[0] == idx[1] && !(f.Value > 0) {
				return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: a variance must be positive", strconv.Quote(f.Text))
			}
			cov[idx[0]][idx[1]], cov[idx[1]][idx[0]] = f.Value, f.Value
		}
		if usesSD && usesCov {
			return engine.Candidate{}, s.errorf(f.Line, f.Col, "%s: candidate %s mixes sd/corr with cov; give its spread one way", strconv.Quote(f.Text), s.Name)
		}
	}
	for i, n := range names {
		if math.IsNaN(mean[i]) {
			return engine.Candidate{}, s.errorf(s.Line, s.Col, "candidate %s has no mean for %s: add mean.%s=V", s.Name, n, n)
		}
		if usesCov && !set["cov."+n+"."+n] || !usesCov && math.IsNaN(sd[i]) {
			return engine.Candidate{}, s.errorf(s.Line, s.Col, "candidate %s has no spread for %s: add sd.%s=V (or cov.%s.%s=V)", s.Name, n, n, n, n)
		}
	}
	c := engine.Candidate{Name: s.Name, Mean: mean, Cov: cov}
	if !usesCov {
		c = engine.CandidateFromSD(s.Name, mean, sd, corr)
	}
	c.FittingScale = s.FittingScale
	if err := engine.CheckCandidate(c, names); err != nil {
		return engine.Candidate{}, s.errorf(s.Line, s.Col, "%v", err)
	}
	return c, nil
}

func filled(n int, v float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

// WriteCandidates returns the gaussian lines that carry the candidates for
// a model whose parameters are named names (by index): a line per
// candidate with its means, sds and the correlations that are not zero,
// every number in the shortest form that reads back exactly (so the
// covariance reads back to rounding).
func WriteCandidates(names []string, cs []engine.Candidate) string {
	var b strings.Builder
	for _, c := range cs {
		if len(c.Mean) != len(names) || len(c.Cov) != len(names) {
			continue
		}
		fields := []string{Prefix, string(Gaussian), c.Name}
		if c.FittingScale {
			fields = append(fields, "scale=fitting")
		}
		sd := make([]float64, len(names))
		for i, n := range names {
			fields = append(fields, "mean."+n+"="+num(c.Mean[i]))
		}
		for i, n := range names {
			sd[i] = math.Sqrt(c.Cov[i][i])
			fields = append(fields, "sd."+n+"="+num(sd[i]))
		}
		for i := range names {
			for j := i + 1; j < len(names); j++ {
				if r := c.Cov[i][j] / (sd[i] * sd[j]); r != 0 {
					fields = append(fields, "corr."+names[i]+"."+names[j]+"="+num(r))
				}
			}
		}
		b.WriteString(strings.Join(fields, " ") + "\n")
	}
	return b.String()
}
