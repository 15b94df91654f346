package data

import (
	"math"
	"strconv"
	"strings"
)

// number reads a cell as a decimal number: an optional sign, digits with an
// optional decimal point, and an optional exponent (12, -0.5, .5, 3., 1e-3,
// 2.5E+4). Anything else (hexadecimal, digit separators, infinities, NaN,
// missing-value markers, formulas) is refused with a message saying what
// the cell looks like and a hint; the message reads "... in column NAME"
// once the caller appends the column.
func number(s string) (v float64, problem, hint string) {
	if !decimal(s) {
		problem, hint = notANumber(s)
		return 0, problem, hint
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) {
		// The text is a well-formed decimal, so the only failure is overflow.
		return 0, "number " + show(s) + " is too large", "the largest number is about 1.797e308"
	}
	return v, "", ""
}

// decimal reports whether s is [+-] (D+ [. D*] | . D+) [(e|E) [+-] D+].
func decimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := func() int {
		n := 0
		for i < len(s) && '0' <= s[i] && s[i] <= '9' {
			i++
			n++
		}
		return n
	}
	n := digits()
	if i < len(s) && s[i] == '.' {
		i++
		n += digits()
	}
	if n == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		if digits() == 0 {
			return false
		}
	}
	return i == len(s)
}

// missingMarkers are the ways spreadsheets and statistics programs write a
// missing value, compared without case.
var missingMarkers = map[string]bool{
	"na": true, "n/a": true, "#n/a": true, "nan": true, "null": true, "none": true,
	"missing": true, "-": true, ".": true, "?": true, "--": true,
}

// notANumber says what a cell that is not a decimal number looks like.
func notANumber(s string) (problem, hint string) {
	const fill = "every cell of a column needs a number: fill it in, or remove the row"
	low := strings.ToLower(s)
	unsigned := strings.TrimLeft(low, "+-")
	switch {
	case missingMarkers[low]:
		return "missing value " + show(s), fill
	case unsigned == "inf" || unsigned == "infinity" || unsigned == "∞":
		return "infinite value " + show(s), "data must be finite numbers"
	case strings.HasPrefix(s, "="):
		return "formula " + show(s) + " instead of a value", "copy the cells' values rather than their formulas (in most spreadsheets: paste as values), then copy again"
	case s == "#" || strings.HasPrefix(s, "# "):
		return "comment " + show(s) + " instead of a value", "comment lines (starting with #) may stand only before the header row"
	case strings.HasPrefix(s, "#"):
		return "spreadsheet error value " + show(s), "fix the formula in the spreadsheet, or remove the row"
	case low == "true" || low == "false":
		return "logical value " + show(s), "write 1 for true and 0 for false"
	case strings.HasSuffix(s, "%") && decimal(strings.TrimSpace(strings.TrimSuffix(s, "%"))):
		return "percentage " + show(s), "write the fraction as a decimal number: 5% is 0.05"
	case strings.HasPrefix(unsigned, "0x"):
		return "hexadecimal number " + show(s), "write numbers in decimal"
	}
	if strings.Count(s, ",") == 1 && decimal(strings.Replace(s, ",", ".", 1)) {
		return show(s) + " is not a number", "write the decimal separator as a point (" + strings.Replace(s, ",", ".", 1) + "), with no thousands separators"
	}
	if c := strings.Count(s, ","); c >= 1 && decimal(strings.ReplaceAll(s, ",", "")) {
		return show(s) + " is not a number", "remove the thousands separators: " + strings.ReplaceAll(s, ",", "")
	}
	if strings.ContainsAny(s, " \u00a0'_") && decimal(strings.NewReplacer(" ", "", "\u00a0", "", "'", "", "_", "").Replace(s)) {
		return show(s) + " is not a number", "remove the digit separators"
	}
	return show(s) + " is not a number", "a value is a decimal number such as 12, -0.5 or 1.5e-3"
}
