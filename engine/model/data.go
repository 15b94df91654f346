package model

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"unicode"
	"unicode/utf8"
)

// MaxDataValues is the most values all the vectors attached to one model by
// ParseWith may hold together: four vectors of MaxVectorLen. Attached data
// does not count against the text's limit (MaxSource). The checked model
// keeps about 100 bytes per value (a syntax node and its shape), so the
// largest attached data take about 40 MB of memory.
const MaxDataValues = 400000

// Data is a named vector of numbers attached to a model from outside its
// text (a data file's column, say): the model uses it by name like a
// vector it defines.
type Data struct {
	Name   string
	Values []float64
}

// ErrData marks an error in the data given to ParseWith (rather than in the
// model text).
var ErrData = errors.New("model: bad data")

// dataPos is the position of what attached data defines: before the text,
// on no line of it (Offset -1 keeps it apart from the zero Pos, which the
// checker reads as "no position").
var dataPos = Pos{Offset: -1}

// IsData reports whether a checked definition is an attached data vector
// (from ParseWith) rather than a definition in the model text.
func (d Def) IsData() bool { return d.At == dataPos }

// ParseWith is Parse with data attached: each vector is defined, by its
// name, before the text's first statement, so the model may use it anywhere.
// The text may not declare or define a name the data defines (an error at
// the text's line and column). Model.Stmts holds the text's statements
// only; Model.Defs starts with the data's definitions (Def.IsData).
//
// A problem in the data itself (a name that is not a name, no values, a
// value that is not finite, too many values) is an error wrapping ErrData.
func ParseWith(src string, data []Data) (*Model, error) {
	if err := checkData(data); err != nil {
		return nil, err
	}
	return parse(src, defaultLimits, data...)
}

// checkData checks the data given to ParseWith.
func checkData(data []Data) error {
	seen := map[string]bool{}
	total := 0
	for _, d := range data {
		if problem := NameProblem(d.Name); problem != "" {
			return fmt.Errorf("%w: %s %s", ErrData, strconv.Quote(d.Name), problem)
		}
		if seen[d.Name] {
			return fmt.Errorf("%w: %s is given twice", ErrData, d.Name)
		}
		seen[d.Name] = true
		switch {
		case len(d.Values) == 0:
			return fmt.Errorf("%w: %s has no values", ErrData, d.Name)
		case len(d.Values) > MaxVectorLen:
			return fmt.Errorf("%w: %s has %d values, more than %d", ErrData, d.Name, len(d.Values), MaxVectorLen)
		}
		for i, v := range d.Values {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%w: value %d of %s is %v, not a finite number", ErrData, i+1, d.Name, v)
			}
		}
		total += len(d.Values)
		if total > MaxDataValues {
			return fmt.Errorf("%w: more than %d values in all", ErrData, MaxDataValues)
		}
	}
	return nil
}

// NameProblem says why s cannot be a name in a model ("is a keyword", "is
// the name of a function", "contains ' '"), or returns "" when it can.
func NameProblem(s string) string {
	if s == "" {
		return "is empty"
	}
	for i, r := range s {
		switch {
		case r == utf8.RuneError:
			return "is not valid UTF-8"
		case !unicode.IsPrint(r) && r != ' ':
			return fmt.Sprintf("contains the invisible character U+%04X", r)
		case i == 0 && !isNameStart(r):
			return "does not start with a letter or '_'"
		case !isNamePart(r):
			return "contains " + quoteRune(r) + ", which a name cannot"
		}
	}
	if _, ok := keywords[s]; ok {
		return "is a keyword of the model language"
	}
	if what := reservedName(s); what != "" {
		return "is " + what
	}
	return ""
}

// bindData puts the data's definitions before the text's statements in
// m.Stmts, for the checker, and returns the text's statements, which the
// caller puts back once the model is checked. A name both in the data and
// declared or defined in the text is reported at the text's place, and that
// vector is left out (so the text's statement is checked as written).
func bindData(m *Model, data []Data, errs *errorSink) []Stmt {
	text := m.Stmts
	if len(data) == 0 {
		return text
	}
	inData := make(map[string]bool, len(data))
	for _, d := range data {
		inData[d.Name] = true
	}
	clash := map[string]bool{}
	for _, st := range text {
		switch s := st.(type) {
		case *DefineStmt:
			if inData[s.Name] {
				errs.add(s.At, "rename the definition here, or the data's column",
					"%s is a column of the attached data; it cannot also be defined", s.Name)
				clash[s.Name] = true
			}
		case *ParamStmt:
			if inData[s.Name] {
				errs.add(s.NameAt, "rename the parameter, or the data's column",
					"%s is a column of the attached data; it cannot also be a parameter", s.Name)
				clash[s.Name] = true
			}
		}
	}
	stmts := make([]Stmt, 0, len(data)+len(text))
	for _, d := range data {
		if clash[d.Name] {
			continue
		}
		elems := make([]Expr, len(d.Values))
		nums := make([]Number, len(d.Values))
		for i, v := range d.Values {
			nums[i] = Number{At: dataPos, Value: v}
			elems[i] = &nums[i]
		}
		stmts = append(stmts, &DefineStmt{At: dataPos, Name: d.Name, Value: &Vector{At: dataPos, Elems: elems}})
	}
	m.Stmts = append(stmts, text...)
	return text
}
