package paramopt

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Kind is what a setting sets.
type Kind string

// The kinds of setting.
const (
	Scale  Kind = "scale"  // the fitting scale: identity, log or logit
	Points Kind = "points" // grid points along the parameter
	Box    Kind = "box"    // the grid's range LO:HI on the original scale
	// Vary marks a scalar constant (not a parameter) as one to move, with
	// its range LO:HI: NAME is the constant's name (engine.Vary).
	Vary Kind = "vary"
)

// kinds lists the kinds in the order messages name them.
var kinds = []Kind{Scale, Points, Box, Vary}

// MinPoints is the fewest grid points a setting may ask for (as on the page;
// the grid itself uses an odd number, at least 11).
const MinPoints = 8

// Setting is one option for one parameter, as read (and syntax-checked).
type Setting struct {
	Kind  Kind
	Param string
	// Value is the text after '='; Scale, Points, Lo and Hi its meaning.
	Value  string
	Scale  engine.Scale
	Points int
	Lo, Hi *float64
	// Flag, or Line and Col, say where it was given: a flag ("--scale"), or
	// a place in the model text (1-based; 0 for a flag).
	Flag      string
	Line, Col int
}

// Error is a setting that cannot be read or does not fit the model.
type Error struct {
	Flag      string // the flag, for a flag's setting
	Line, Col int    // the place in the model text, for a setting line
	Msg       string
}

// Error returns "line:col: msg" for a setting line, "--flag: msg" for a flag.
func (e *Error) Error() string {
	if e.Line > 0 {
		return fmt.Sprintf("%d:%d: %s", e.Line, e.Col, e.Msg)
	}
	return e.Flag + ": " + e.Msg
}

func (s Setting) errorf(format string, args ...any) *Error {
	return &Error{Flag: s.Flag, Line: s.Line, Col: s.Col, Msg: fmt.Sprintf(format, args...)}
}

// ParseFlag reads the value of a --scale, --points or --box flag: one or
// more NAME=VALUE separated by commas.
func ParseFlag(kind Kind, value string) ([]Setting, error) {
	flag := "--" + string(kind)
	if !known(kind) {
		return nil, &Error{Flag: flag, Msg: "unknown setting"}
	}
	var out []Setting
	for _, part := range strings.Split(value, ",") {
		s, err := parseSetting(Setting{Kind: kind, Flag: flag}, strings.TrimSpace(part))
		if err != nil {
			return nil, err
		}
		out = append(out, s)
	}
	return out, nil
}

func known(k Kind) bool {
	for _, x := range kinds {
		if x == k {
			return true
		}
	}
	return false
}

// Prefix starts a setting line in a model file (after optional blanks). To
// the model language the line is a comment.
const Prefix = "#@"

// Lines reads the setting lines of a model text: lines whose first
// non-blank characters are "#@", then a kind and NAME=VALUE settings
// separated by blanks (or commas), as in "#@ box m=-5:5 s=0:10".
func Lines(src string) ([]Setting, error) {
	var out []Setting
	err := eachLine(src, func(line, col int, fields []field) error {
		if len(fields) == 0 {
			return &Error{Line: line, Col: col, Msg: "empty setting line: write #@ scale NAME=SCALE, #@ points NAME=N, #@ box NAME=LO:HI, #@ vary NAME=LO:HI or #@ gaussian NAME ..."}
		}
		kind := Kind(fields[0].text)
		if kind == Gaussian {
			return nil // a candidate Gaussian: CandidateLines reads it
		}
		if !known(kind) {
			return &Error{Line: line, Col: fields[0].col, Msg: fmt.Sprintf("unknown setting %s: want scale, points, box, vary or gaussian", strconv.Quote(fields[0].text))}
		}
		if len(fields) == 1 {
			return &Error{Line: line, Col: fields[0].col + runes(fields[0].text), Msg: fmt.Sprintf("%s needs at least one NAME=VALUE", kind)}
		}
		for _, f := range fields[1:] {
			s, err := parseSetting(Setting{Kind: kind, Line: line, Col: f.col}, f.text)
			if err != nil {
				return err
			}
			out = append(out, s)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// eachLine calls fn with every setting line of src: its number, the column
// just after the prefix, and its fields with their columns (counted in
// characters; a byte-order mark and a CR before the line break are not
// part of a line).
func eachLine(src string, fn func(line, col int, fields []field) error) error {
	for i, line := range strings.Split(src, "\n") {
		line = strings.TrimSuffix(line, "\r")
		if i == 0 {
			line = strings.TrimPrefix(line, "\uFEFF")
		}
		rest := strings.TrimLeft(line, " \t")
		if !strings.HasPrefix(rest, Prefix) {
			continue
		}
		col := 1 + runes(line[:len(line)-len(rest)]) + len(Prefix)
		if err := fn(i+1, col, fieldsAt(rest[len(Prefix):], col)); err != nil {
			return err
		}
	}
	return nil
}

type field struct {
	text string
	col  int
}

// fieldsAt splits s at blanks and commas; col is the column of s's first
// character.
func fieldsAt(s string, col int) []field {
	var out []field
	start := -1
	c := col
	startCol := 0
	for i, r := range s + " " {
		sep := r == ' ' || r == '\t' || r == ','
		switch {
		case sep && start >= 0:
			out = append(out, field{s[start:i], startCol})
			start = -1
		case !sep && start < 0:
			start, startCol = i, c
		}
		c++
	}
	return out
}

func runes(s string) int { return len([]rune(s)) }

// parseSetting reads NAME=VALUE into s.
func parseSetting(s Setting, text string) (Setting, error) {
	name, value, ok := strings.Cut(text, "=")
	name, value = strings.TrimSpace(name), strings.TrimSpace(value)
	if !ok || name == "" || value == "" {
		return s, s.errorf("%s: want NAME=%s", strconv.Quote(text), example(s.Kind))
	}
	if p := model.NameProblem(name); p != "" {
		what := "parameter"
		if s.Kind == Vary {
			what = "constant"
		}
		return s, s.errorf("%s: the %s's name %s %s", strconv.Quote(text), what, strconv.Quote(name), p)
	}
	s.Param, s.Value = name, value
	switch s.Kind {
	case Scale:
		switch sc := engine.Scale(value); sc {
		case engine.Identity, engine.Log, engine.Logit:
			s.Scale = sc
		default:
			return s, s.errorf("%s: unknown scale %s: want identity, log or logit", strconv.Quote(text), strconv.Quote(value))
		}
	case Points:
		n, err := strconv.Atoi(value)
		if err != nil || n < MinPoints {
			return s, s.errorf("%s: the points are a whole number, at least %d", strconv.Quote(text), MinPoints)
		}
		s.Points = n
	case Vary:
		lo, hi, ok := strings.Cut(value, ":")
		var err error
		if ok {
			s.Lo, err = side(lo)
		}
		if err == nil && ok {
			s.Hi, err = side(hi)
		}
		if !ok || err != nil || s.Lo == nil || s.Hi == nil {
			return s, s.errorf("%s: want NAME=LO:HI with two finite numbers, the range of the constant NAME", strconv.Quote(text))
		}
		if !(*s.Lo < *s.Hi) {
			return s, s.errorf("%s: the range's lower end must be below its upper end", strconv.Quote(text))
		}
	case Box:
		lo, hi, ok := strings.Cut(value, ":")
		if !ok {
			return s, s.errorf("%s: want NAME=LO:HI (a side may be left out: NAME=LO: or NAME=:HI)", strconv.Quote(text))
		}
		var err error
		if s.Lo, err = side(lo); err != nil {
			return s, s.errorf("%s: lower side: %v", strconv.Quote(text), err)
		}
		if s.Hi, err = side(hi); err != nil {
			return s, s.errorf("%s: upper side: %v", strconv.Quote(text), err)
		}
		if s.Lo == nil && s.Hi == nil {
			return s, s.errorf("%s: give at least one side of the box", strconv.Quote(text))
		}
		if s.Lo != nil && s.Hi != nil && !(*s.Lo < *s.Hi) {
			return s, s.errorf("%s: the box's lower side must be below its upper side", strconv.Quote(text))
		}
	}
	return s, nil
}

func example(k Kind) string {
	switch k {
	case Scale:
		return "log"
	case Points:
		return "201"
	case Vary:
		return "0.1:5"
	}
	return "LO:HI"
}

// side reads one side of a box: blank (automatic) or a finite number.
func side(t string) (*float64, error) {
	t = strings.TrimSpace(t)
	if t == "" {
		return nil, nil
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return nil, fmt.Errorf("%s is not a finite number", strconv.Quote(t))
	}
	return &v, nil
}

// Options checks the settings against the model's parameters (names,
// scales their supports allow, point counts the engine accepts, boxes
// inside the supports) and returns the analysis options. A later setting
// of the same kind for the same parameter replaces an earlier one (so flags
// given after a file's lines override them); a box side left out keeps the
// earlier setting's side.
func Options(m *model.Model, settings []Setting) (engine.Options, error) {
	var o engine.Options
	if m == nil || len(m.Params) == 0 {
		return o, nil
	}
	index := map[string]int{}
	names := make([]string, len(m.Params))
	for i, p := range m.Params {
		index[p.Name] = i
		names[i] = p.Name
	}
	o.Params = make([]engine.ParamOptions, len(m.Params))
	d := len(m.Params)
	for _, s := range settings {
		if s.Kind == Vary {
			if err := addVary(&o, m, s); err != nil {
				return engine.Options{}, err
			}
			continue
		}
		i, ok := index[s.Param]
		if !ok {
			return engine.Options{}, s.errorf("%s: the model has no parameter %s (its parameters: %s)", s.Param+"="+s.Value, s.Param, strings.Join(names, ", "))
		}
		p := m.Params[i]
		po := &o.Params[i]
		switch s.Kind {
		case Scale:
			if why := scaleProblem(p, s.Scale); why != "" {
				return engine.Options{}, s.errorf("%s=%s: %s", s.Param, s.Value, why)
			}
			po.Scale = s.Scale
		case Points:
			if most := engine.MaxAxisPoints(d); s.Points > most {
				return engine.Options{}, s.errorf("%s=%s: at most %d points per parameter for a model of %d parameters", s.Param, s.Value, most, d)
			}
			po.Points = s.Points
		case Box:
			if s.Lo != nil {
				po.Lo = s.Lo
			}
			if s.Hi != nil {
				po.Hi = s.Hi
			}
			if err := boxProblem(p, po.Lo, po.Hi); err != "" {
				return engine.Options{}, s.errorf("%s=%s: %s", s.Param, s.Value, err)
			}
		}
	}
	return o, nil
}

// scaleProblem says why a parameter's support does not allow a scale.
func scaleProblem(p model.Param, sc engine.Scale) string {
	finite := func(v float64) bool { return !math.IsInf(v, 0) }
	switch sc {
	case engine.Log:
		if !finite(p.Lo) || !math.IsInf(p.Hi, 1) {
			return fmt.Sprintf("the log scale needs a support [LO, inf] with a finite LO, but %s is in %s (declare param %s in [0, inf], say)", p.Name, support(p), p.Name)
		}
	case engine.Logit:
		if !finite(p.Lo) || !finite(p.Hi) {
			return fmt.Sprintf("the logit scale needs a finite support [LO, HI], but %s is in %s (declare param %s in [0, 1], say)", p.Name, support(p), p.Name)
		}
	}
	return ""
}

// boxProblem says why a box does not fit a parameter's support.
func boxProblem(p model.Param, lo, hi *float64) string {
	if lo != nil && (*lo < p.Lo || *lo >= p.Hi) {
		return fmt.Sprintf("the box's lower side %s is outside %s's support %s", num(*lo), p.Name, support(p))
	}
	if hi != nil && (*hi > p.Hi || *hi <= p.Lo) {
		return fmt.Sprintf("the box's upper side %s is outside %s's support %s", num(*hi), p.Name, support(p))
	}
	if lo != nil && hi != nil && !(*lo < *hi) {
		return fmt.Sprintf("the box [%s, %s] is empty", num(*lo), num(*hi))
	}
	return ""
}

func support(p model.Param) string {
	return "[" + num(p.Lo) + ", " + num(p.Hi) + "]"
}

// num writes a number in the shortest form that reads back exactly.
func num(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// Write returns the setting lines that carry opts for a model whose
// parameters are named names (by index): one line per kind, the settings
// in the parameters' order, every number in the shortest form that reads
// back exactly; then a vary line for the constants to vary and the
// gaussian lines of the candidates (WriteCandidates). It returns "" when
// opts set nothing.
func Write(names []string, opts engine.Options) string {
	var scale, points, box []string
	for i, po := range opts.Params {
		if i >= len(names) {
			break
		}
		n := names[i]
		if po.Scale != "" {
			scale = append(scale, n+"="+string(po.Scale))
		}
		if po.Points > 0 {
			points = append(points, n+"="+strconv.Itoa(po.Points))
		}
		finite := func(v *float64) bool { return v != nil && !math.IsInf(*v, 0) && !math.IsNaN(*v) }
		if finite(po.Lo) || finite(po.Hi) {
			// The engine ignores an infinite side, so it is not written.
			var lo, hi string
			if finite(po.Lo) {
				lo = num(*po.Lo)
			}
			if finite(po.Hi) {
				hi = num(*po.Hi)
			}
			box = append(box, n+"="+lo+":"+hi)
		}
	}
	var vary []string
	for _, v := range opts.Vary {
		vary = append(vary, v.Name+"="+num(v.Lo)+":"+num(v.Hi))
	}
	var b strings.Builder
	for _, l := range []struct {
		k    Kind
		list []string
	}{{Scale, scale}, {Points, points}, {Box, box}, {Vary, vary}} {
		if len(l.list) > 0 {
			b.WriteString(Prefix + " " + string(l.k) + " " + strings.Join(l.list, " ") + "\n")
		}
	}
	b.WriteString(WriteCandidates(names, opts.Candidates))
	return b.String()
}
