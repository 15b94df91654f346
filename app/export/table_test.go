package export

import (
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// hostile is text a parameter name, a label or a value must not be able to
// turn into markup: every LaTeX special, Markdown's cell and markup
// characters, HTML, a line break and a LaTeX command.
const hostile = `a_b%c&d#e$f{g}h~i^j\k|l*m<script>n"q"` + "\n" + `\input{/etc/passwd}` + "`o`[p](q)"

func sampleTable() Table {
	return Table{
		Columns: []string{"exact", "Laplace", "reverse KL"},
		Groups: []Group{
			{Title: "x", Rows: []Row{
				{Label: "mean", Cells: []Cell{{Text: "0.1234", Note: "±1.2e−6"}, {Text: "0.2", Note: "+0.05 sd", Best: true}, {Text: "—"}}},
				{Label: "95 % interval", Cells: []Cell{{Text: "[−1.9, 2.0]"}, {Text: "[−2, 2]"}}},
			}},
			{Title: hostile, Rows: []Row{
				{Label: hostile, Cells: []Cell{{Text: hostile, Note: hostile, Best: true}, {Text: "≥ −3.25"}, {Text: "∞"}}},
				{Label: "KL(q‖p)", Cells: []Cell{{}, {Text: "0.01"}, {Text: "×1.02"}}},
				{Label: "corr(σ_1, θ, Ωü)", Cells: []Cell{{Text: "0.5"}, {Text: "0.4"}, {Text: "0.4"}}},
			}},
		},
		Note: "● closest; " + hostile,
	}
}

// splitCells splits a Markdown table line on the pipes that are not
// escaped by a backslash (the CommonMark table extension's rule).
func splitCells(line string) []string {
	var cells []string
	var cur strings.Builder
	escaped := false
	for _, r := range line {
		switch {
		case escaped:
			cur.WriteRune(r)
			escaped = false
		case r == '\\':
			cur.WriteRune(r)
			escaped = true
		case r == '|':
			cells = append(cells, cur.String())
			cur.Reset()
		default:
			cur.WriteRune(r)
		}
	}
	return append(cells, cur.String())
}

func TestMarkdownTableIsWellFormed(t *testing.T) {
	md := Markdown(sampleTable())
	lines := strings.Split(strings.TrimRight(md, "\n"), "\n")
	// The table is the run of lines up to the first blank one.
	var table []string
	for _, l := range lines {
		if l == "" {
			break
		}
		table = append(table, l)
	}
	// header + delimiter + 2 group titles + 5 rows
	if len(table) != 9 {
		t.Fatalf("%d table lines, want 9:\n%s", len(table), md)
	}
	delim := regexp.MustCompile(`^\s*:?-{3,}:?\s*$`)
	rawTag := regexp.MustCompile(`(^|[^\\])<`) // a '<' without a backslash
	for i, l := range table {
		if !strings.HasPrefix(l, "|") || !strings.HasSuffix(l, "|") {
			t.Errorf("line %d does not start and end with a pipe: %q", i+1, l)
		}
		cells := splitCells(l)
		// A leading and a trailing empty piece around 4 cells.
		if len(cells) != 6 || cells[0] != "" || cells[5] != "" {
			t.Errorf("line %d has %d cells, want 4: %q", i+1, len(cells)-2, l)
			continue
		}
		if i == 1 {
			for _, c := range cells[1:5] {
				if !delim.MatchString(c) {
					t.Errorf("delimiter cell %q is not a delimiter", c)
				}
			}
		}
		for _, c := range cells[1:5] {
			if rawTag.MatchString(c) {
				t.Errorf("raw HTML in cell %q", c)
			}
		}
	}
	if !strings.Contains(md, `**0.2 (+0.05 sd)**`) {
		t.Errorf("best cell not bold:\n%s", md)
	}
	if !strings.Contains(md, `a\_b%c\&d\#e$f{g}h\~i^j\\k\|l\*m\<script\>n"q" \\input{/etc/passwd}\`+"`"+`o\`+"`"+`\[p\](q)`) {
		t.Errorf("hostile text not escaped as expected:\n%s", md)
	}
}

// latexCommands are the only control sequences LaTeX output may contain.
var latexCommands = map[string]bool{
	`\begin`: true, `\end`: true, `\hline`: true, `\multicolumn`: true, `\textbf`: true, `\footnotesize`: true,
	`\\`: true, `\{`: true, `\}`: true, `\$`: true, `\&`: true, `\#`: true, `\%`: true, `\_`: true, `\,`: true,
	`\textbackslash`: true, `\textasciitilde`: true, `\textasciicircum`: true, `\textless`: true, `\textgreater`: true,
	`\textbar`: true, `\ensuremath`: true, `\geq`: true, `\leq`: true, `\|`: true,
	`\infty`: true, `\times`: true, `\pm`: true, `\in`: true, `\bullet`: true, `\ldots`: true,
	`\sigma`: true, `\theta`: true, `\Omega`: true,
}

// latexTokens scans LaTeX the way TeX's eyes do (a backslash starts a
// control word of letters or a control symbol of one character) and
// returns the control sequences and the other special characters met
// outside comments.
func latexTokens(s string) (cmds []string, specials []rune, braces int, ok bool) {
	ok = true
	rs := []rune(s)
	for i := 0; i < len(rs); i++ {
		r := rs[i]
		switch r {
		case '\\':
			j := i + 1
			for j < len(rs) && (rs[j] >= 'a' && rs[j] <= 'z' || rs[j] >= 'A' && rs[j] <= 'Z') {
				j++
			}
			if j == i+1 && j < len(rs) {
				j++ // a control symbol
			}
			cmds = append(cmds, string(rs[i:j]))
			i = j - 1
		case '%':
			for i < len(rs) && rs[i] != '\n' {
				i++
			}
		case '{':
			braces++
		case '}':
			braces--
			if braces < 0 {
				ok = false
			}
		case '$', '#', '_', '^', '~', '&':
			specials = append(specials, r)
		}
	}
	return cmds, specials, braces, ok
}

func TestLaTeXEscapesSoNothingBreaksTheDocument(t *testing.T) {
	tex := LaTeX(sampleTable())
	cmds, specials, braces, ok := latexTokens(tex)
	if !ok || braces != 0 {
		t.Errorf("unbalanced braces (depth %d):\n%s", braces, tex)
	}
	for _, c := range cmds {
		if !latexCommands[c] {
			t.Errorf("unexpected control sequence %q in:\n%s", c, tex)
		}
	}
	// The only specials left are the column separators: 3 per row line
	// (4 columns) on the header and the 5 rows.
	amp := 0
	for _, r := range specials {
		if r != '&' {
			t.Errorf("unescaped %q in:\n%s", r, tex)
		} else {
			amp++
		}
	}
	if amp != 3*6 {
		t.Errorf("%d column separators, want 18:\n%s", amp, tex)
	}
	if !strings.HasPrefix(tex, `\begin{tabular}{lrrr}`) || !strings.Contains(tex, `\end{tabular}`) {
		t.Errorf("not a tabular:\n%s", tex)
	}
	for _, want := range []string{`\textbf{0.2} {\footnotesize(+0.05 sd)}`, `\ensuremath{\geq} \ensuremath{-}3.25`, `KL(q\ensuremath{\|}p)`, `\ensuremath{\infty}`} {
		if !strings.Contains(tex, want) {
			t.Errorf("missing %q in:\n%s", want, tex)
		}
	}
	// Each escape on its own (LaTeX's special characters, from the
	// LaTeX manual's list of the ten reserved characters).
	escapes := []struct{ in, want string }{
		{`\`, `\textbackslash{}`}, {`{`, `\{`}, {`}`, `\}`}, {`$`, `\$`}, {`&`, `\&`}, {`#`, `\#`},
		{`%`, `\%`}, {`_`, `\_`}, {`~`, `\textasciitilde{}`}, {`^`, `\textasciicircum{}`},
		{"a\nb", "a b"}, {"x\x00y", "xy"}, {"ü", "ü"}, {"σ", `\ensuremath{\sigma}`}, {"Β", "B"}, {"ο", "o"},
	}
	for _, e := range escapes {
		if got := EscapeLaTeX(e.in); got != e.want {
			t.Errorf("EscapeLaTeX(%q) = %q, want %q", e.in, got, e.want)
		}
	}
}

// TestLaTeXCompiles runs the table through LaTeX itself when pdflatex is
// installed (Debian's texlive-latex-base): the document must compile
// without errors with the hostile text in it.
func TestLaTeXCompiles(t *testing.T) {
	bin, err := exec.LookPath("pdflatex")
	if err != nil {
		t.Skip("pdflatex is not installed (apt-get install texlive-latex-base)")
	}
	dir := t.TempDir()
	doc := "\\documentclass{article}\n\\begin{document}\n" + LaTeX(sampleTable()) + "\\end{document}\n"
	if err := os.WriteFile(filepath.Join(dir, "t.tex"), []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(bin, "-interaction=nonstopmode", "-halt-on-error", "-no-shell-escape", "t.tex")
	cmd.Dir = dir
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("pdflatex failed: %v\n%s", err, out)
	}
	if strings.Contains(string(out), "passwd") {
		t.Error("the document read a file named in the text")
	}
}
