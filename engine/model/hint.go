package model

import (
	"sort"
	"strings"
	"unicode/utf8"
)

// suggest returns up to three of the candidates nearest to name, for a
// "did you mean" hint: those within an edit distance that grows with the
// name's length (case is ignored), and those that contain the name (normal
// suggests ld_normal). Ties keep the candidates' order.
func suggest(name string, candidates []string) []string {
	n := utf8.RuneCountInString(name)
	limit := 0 // for one or two letters, only a difference of case
	switch {
	case n > 7:
		limit = 3
	case n > 4:
		limit = 2
	case n > 2:
		limit = 1
	}
	lower := strings.ToLower(name)
	type scored struct {
		name string
		dist int
	}
	var found []scored
	for _, c := range candidates {
		if c == name {
			continue
		}
		lc := strings.ToLower(c)
		d := editDistance(lower, lc)
		if n >= 3 && strings.Contains(lc, lower) && d > 1 {
			d = 1
		}
		if d <= limit {
			found = append(found, scored{c, d})
		}
	}
	sort.SliceStable(found, func(i, j int) bool { return found[i].dist < found[j].dist })
	var out []string
	for _, f := range found {
		// A difference of case alone beats everything else.
		if len(out) == 3 || f.dist > found[0].dist+1 || (found[0].dist == 0 && f.dist > 0) {
			break
		}
		out = append(out, f.name)
	}
	return out
}

// Lookalikes returns the implicit parameters of m (used without a param
// statement) whose names look like a misspelling of name: for a declared
// parameter no expression uses, the likely cause.
func (m *Model) Lookalikes(name string) []string {
	var out []string
	for _, p := range m.Params {
		if !p.Declared && len(suggest(p.Name, []string{name})) > 0 {
			out = append(out, p.Name)
		}
	}
	return out
}

// Resembles returns the declared parameters and the definitions of m whose
// names the implicit parameter name looks like a misspelling of (sigam:
// sigma).
func (m *Model) Resembles(name string) []string {
	var known []string
	for _, p := range m.Params {
		if p.Declared {
			known = append(known, p.Name)
		}
	}
	for _, d := range m.Defs {
		known = append(known, d.Name)
	}
	return suggest(name, known)
}

// didYouMean formats suggestions as a hint, or returns "".
func didYouMean(names []string) string {
	if len(names) == 0 {
		return ""
	}
	return "did you mean " + strings.Join(names, ", ") + "?"
}

// editDistance is the Levenshtein distance between a and b, counted in
// runes: the fewest insertions, deletions and substitutions turning a into b.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
