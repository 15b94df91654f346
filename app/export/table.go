package export

import (
	"strconv"
	"strings"
)

// Table is a results table in a form independent of the page: a header row,
// groups of rows under a title, and a note printed below.
type Table struct {
	// Corner is the header of the label column (often empty); Columns the
	// other headers.
	Corner  string
	Columns []string
	Groups  []Group
	// Note is a sentence printed under the table ("" for none).
	Note string
}

// Group is a titled run of rows.
type Group struct {
	Title string
	Rows  []Row
}

// Row is a label and one cell per column (missing cells are empty).
type Row struct {
	Label string
	Cells []Cell
}

// Cell is one entry: its text, an optional note (an error estimate, a
// deviation) printed after it, and whether it is marked as the best of its
// row.
type Cell struct {
	Text, Note string
	Best       bool
}

// cellText joins a cell's text and note as the text formats show them.
func cellText(c Cell) (text, note string) {
	text = strings.TrimSpace(c.Text)
	note = strings.TrimSpace(c.Note)
	return text, note
}

// Markdown returns the table as a Markdown (CommonMark with the usual table
// extension) pipe table: a header, a delimiter row with the number columns
// right-aligned, a bold row for each group's title, and the note as a
// paragraph below. Every cell's text is escaped, so a name or value cannot
// add columns, rows or markup.
func Markdown(t Table) string {
	var b strings.Builder
	n := len(t.Columns)
	line := func(cells []string) {
		b.WriteString("|")
		for _, c := range cells {
			b.WriteString(" ")
			b.WriteString(c)
			b.WriteString(" |")
		}
		b.WriteString("\n")
	}
	head := []string{EscapeMarkdown(t.Corner)}
	for _, c := range t.Columns {
		head = append(head, EscapeMarkdown(c))
	}
	line(head)
	delim := []string{"---"}
	for range n {
		delim = append(delim, "---:")
	}
	line(delim)
	for _, g := range t.Groups {
		if g.Title != "" {
			row := []string{"**" + EscapeMarkdown(g.Title) + "**"}
			for range n {
				row = append(row, "")
			}
			line(row)
		}
		for _, r := range g.Rows {
			row := []string{EscapeMarkdown(r.Label)}
			for k := range n {
				var c Cell
				if k < len(r.Cells) {
					c = r.Cells[k]
				}
				text, note := cellText(c)
				s := EscapeMarkdown(text)
				if note != "" {
					s += " (" + EscapeMarkdown(note) + ")"
				}
				if c.Best && text != "" {
					s = "**" + s + "**"
				}
				row = append(row, s)
			}
			line(row)
		}
	}
	if t.Note != "" {
		b.WriteString("\n")
		b.WriteString(EscapeMarkdown(t.Note))
		b.WriteString("\n")
	}
	return b.String()
}

// EscapeMarkdown makes s safe inside a Markdown table cell: it escapes the
// characters that start markup or end a cell (\ ` * _ [ ] < > | ~ #) with a
// backslash, and turns line breaks into spaces.
func EscapeMarkdown(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '\\', '`', '*', '_', '[', ']', '<', '>', '|', '~', '#', '&':
			b.WriteByte('\\')
			b.WriteRune(r)
		case '\n', '\r', '\t':
			b.WriteByte(' ')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

// LaTeX returns the table as a LaTeX tabular environment (needing no
// package beyond LaTeX itself): the label column left-aligned, the others
// right-aligned, \hline rules, each group's title in bold across the
// columns, the best cell of a row in bold and each note in a smaller size
// after its value. Every text is escaped by EscapeLaTeX, so no parameter
// name or value can break the document.
func LaTeX(t Table) string {
	var b strings.Builder
	n := len(t.Columns)
	b.WriteString("\\begin{tabular}{l" + strings.Repeat("r", n) + "}\n\\hline\n")
	head := []string{EscapeLaTeX(t.Corner)}
	for _, c := range t.Columns {
		head = append(head, EscapeLaTeX(c))
	}
	b.WriteString(strings.Join(head, " & ") + " \\\\\n\\hline\n")
	for gi, g := range t.Groups {
		if gi > 0 {
			b.WriteString("\\hline\n")
		}
		if g.Title != "" {
			b.WriteString("\\multicolumn{" + strconv.Itoa(n+1) + "}{l}{\\textbf{" + EscapeLaTeX(g.Title) + "}} \\\\\n")
		}
		for _, r := range g.Rows {
			row := []string{EscapeLaTeX(r.Label)}
			for k := range n {
				var c Cell
				if k < len(r.Cells) {
					c = r.Cells[k]
				}
				text, note := cellText(c)
				s := EscapeLaTeX(text)
				if c.Best && text != "" {
					s = "\\textbf{" + s + "}"
				}
				if note != "" {
					s += " {\\footnotesize(" + EscapeLaTeX(note) + ")}"
				}
				row = append(row, s)
			}
			b.WriteString(strings.Join(row, " & ") + " \\\\\n")
		}
	}
	b.WriteString("\\hline\n\\end{tabular}\n")
	if t.Note != "" {
		b.WriteString("% " + strings.NewReplacer("\n", " ", "\r", " ").Replace(t.Note) + "\n")
	}
	return b.String()
}

// latexText maps the characters LaTeX treats specially, and the symbols the
// page's numbers and labels use, to commands that print them.
var latexText = map[rune]string{
	'\\':     `\textbackslash{}`,
	'{':      `\{`,
	'}':      `\}`,
	'$':      `\$`,
	'&':      `\&`,
	'#':      `\#`,
	'%':      `\%`,
	'_':      `\_`,
	'~':      `\textasciitilde{}`,
	'^':      `\textasciicircum{}`,
	'<':      `\textless{}`,
	'>':      `\textgreater{}`,
	'|':      `\textbar{}`,
	'"':      `''`, // a bare " may be a babel shorthand; \textquotedbl needs T1
	'\n':     ` `,
	'\r':     ` `,
	'\t':     ` `,
	'−':      `\ensuremath{-}`,
	'–':      `--`,
	'—':      `---`,
	'≥':      `\ensuremath{\geq}`,
	'≤':      `\ensuremath{\leq}`,
	'‖':      `\ensuremath{\|}`,
	'∞':      `\ensuremath{\infty}`,
	'×':      `\ensuremath{\times}`,
	'±':      `\ensuremath{\pm}`,
	'∈':      `\ensuremath{\in}`,
	'●':      `\ensuremath{\bullet}`,
	'…':      `\ldots{}`,
	'\u00a0': `~`,  // no-break space
	'\u2009': `\,`, // thin space
}

// greek maps the Greek letters a parameter name may hold (the model
// language takes any letter) to math commands, since pdfLaTeX's UTF-8 input
// does not set them up; capitals that look like Latin ones become those.
var greek = func() map[rune]string {
	m := map[rune]string{}
	lower := []string{"alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "iota", "kappa", "lambda", "mu",
		"nu", "xi", "", "pi", "rho", "varsigma", "sigma", "tau", "upsilon", "phi", "chi", "psi", "omega"}
	for i, name := range lower {
		r := 'α' + rune(i)
		if name == "" {
			m[r] = "o"
		} else {
			m[r] = `\ensuremath{\` + name + `}`
		}
	}
	upper := []string{"A", "B", `\Gamma`, `\Delta`, "E", "Z", "H", `\Theta`, "I", "K", `\Lambda`, "M",
		"N", `\Xi`, "O", `\Pi`, "P", "", `\Sigma`, "T", `\Upsilon`, `\Phi`, "X", `\Psi`, `\Omega`}
	for i, name := range upper {
		r := 'Α' + rune(i)
		switch {
		case name == "":
		case strings.HasPrefix(name, `\`):
			m[r] = `\ensuremath{` + name + `}`
		default:
			m[r] = name
		}
	}
	return m
}()

// EscapeLaTeX makes s safe as LaTeX text: the ten special characters
// (\ { } $ & # % _ ~ ^) and < > | print as themselves, " as a closing
// double quote, line breaks become spaces, Greek letters and the
// mathematical symbols the page uses (− ≥ ‖ ∞ × ± ∈ …) become the matching
// commands. Other characters pass through: LaTeX reads UTF-8 by default,
// and pdfLaTeX knows the accented Latin letters (other scripts need
// XeLaTeX or LuaLaTeX).
func EscapeLaTeX(s string) string {
	var b strings.Builder
	for _, r := range s {
		if rep, ok := latexText[r]; ok {
			b.WriteString(rep)
			continue
		}
		if rep, ok := greek[r]; ok {
			b.WriteString(rep)
			continue
		}
		if r < ' ' || r == 0x7f {
			continue // control characters print nothing useful
		}
		b.WriteRune(r)
	}
	return b.String()
}
