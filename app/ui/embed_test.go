package ui

import (
	"context"
	"errors"
	"go/ast"
	"go/parser"
	"go/printer"
	"go/token"
	"html"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/export"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

func embedLinkOf(t *testing.T, src string, ro, fold bool) string {
	t.Helper()
	f, err := share.Encode(share.State{Model: src, View: share.View{Embed: true, ReadOnly: ro, EditorCollapsed: fold}})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func TestEmbedLinkLeavesSavedWorkAlone(t *testing.T) {
	b := newMemBrowser(embedLinkOf(t, srcB, false, false))
	saved := link(t, srcA)
	b.items[WorkKey] = saved
	h, e := openWith(t, b)
	p := h.page
	if !p.mode.Embed || p.text != srcB {
		t.Fatalf("embed link: mode %+v, text %q", p.mode, p.text)
	}
	if p.notice.Text != "" {
		t.Errorf("an embed shows a notice about saved work: %q", p.notice.Text)
	}
	// Editing in the embed keeps the state in the frame's URL, never in the
	// storage the calculator on its own uses.
	p.Input(h.ctx, srcB+"# edited\n")
	e.ConsumeAll()
	if b.items[WorkKey] != saved {
		t.Error("the embed overwrote the saved work")
	}
	if _, ok := b.items[EarlierKey]; ok {
		t.Error("the embed wrote the earlier-work key")
	}
	st, err := share.Decode(b.frag)
	if err != nil || !st.View.Embed || st.Model != srcB+"# edited\n" {
		t.Errorf("the frame's URL holds %+v (%v), want the edited embed state", st, err)
	}
	// A new embed link pasted into the frame's address opens directly.
	b.frag = embedLinkOf(t, srcA, true, true)
	p.OpenLink(h.ctx)
	e.ConsumeAll()
	if p.text != srcA || !p.mode.ReadOnly || !p.folded || p.notice.Text != "" {
		t.Errorf("after a new embed link: text %q, mode %+v, folded %v, notice %q", p.text, p.mode, p.folded, p.notice.Text)
	}
}

func TestBrokenEmbedLinkInAFrameStaysEmbedded(t *testing.T) {
	// A page already in the embed view (as in a frame) given a damaged
	// link shows the notice and the default example, still embedded, and
	// leaves the storage alone.
	b := newMemBrowser("b1.AAAA")
	b.items[WorkKey] = link(t, srcA)
	h, e := mount(t, analyseFixture)
	p := h.page
	p.browser = b
	p.mode.Embed = true
	p.open(h.ctx)
	e.ConsumeAll()
	if !p.mode.Embed || !p.notice.Warn || !strings.Contains(p.notice.Text, "damaged") {
		t.Errorf("mode %+v, notice %+v", p.mode, p.notice)
	}
	if b.items[WorkKey] != link(t, srcA) {
		t.Error("the embed overwrote the saved work")
	}
}

func TestEmbedViewRendersCompactAndReadOnly(t *testing.T) {
	b := newMemBrowser(embedLinkOf(t, srcA, true, true))
	h, e := openWith(t, b)
	p := h.page
	out := app.HTMLString(p.Render())
	for _, want := range []string{`id="` + EmbedToggleID + `"`, `id="` + OpenFullID + `"`, `id="` + RootID + `"`, `id="` + OutputID + `"`, "read-only"} {
		if !strings.Contains(out, want) {
			t.Errorf("embed view lacks %s", want)
		}
	}
	for _, absent := range []string{`id="bc-h-examples"`, `id="bc-h-params"`, `id="` + CopyLinkID + `"`, `id="bc-h-modes"`} {
		if strings.Contains(out, absent) {
			t.Errorf("embed view has %s", absent)
		}
	}
	if !regexp.MustCompile(`<textarea[^>]*\breadonly\b[^>]*id="bc-model"|<textarea[^>]*id="bc-model"[^>]*\breadonly\b`).MatchString(out) {
		t.Error("the read-only embed's editor is not read-only")
	}
	if !regexp.MustCompile(`id="` + EmbedEditorID + `"[^>]*hidden|hidden[^>]*id="` + EmbedEditorID + `"`).MatchString(out) {
		t.Error("the folded embed's editor is not hidden")
	}
	p.ToggleEditor(h.ctx)
	e.ConsumeAll()
	if p.folded {
		t.Error("the toggle did not unfold the editor")
	}
	// The full link opens the same model outside the embed view.
	href := regexp.MustCompile(`id="` + OpenFullID + `"[^>]*href="([^"]*)"|href="([^"]*)"[^>]*id="` + OpenFullID + `"`).FindStringSubmatch(out)
	if href == nil {
		t.Fatal("no link to the full calculator")
	}
	u := html.UnescapeString(href[1] + href[2])
	i := strings.IndexByte(u, '#')
	if i < 0 {
		t.Fatalf("full link %q has no fragment", u)
	}
	st, err := share.Decode(u[i+1:])
	if err != nil || st.Model != srcA || st.View.Embed || st.View.ReadOnly {
		t.Errorf("full link state %+v (%v)", st, err)
	}
}

func TestOutputStateFollowsTheAnalysis(t *testing.T) {
	release := make(chan struct{})
	fail := false
	h, e := mount(t, func(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
		<-release
		if fail {
			return nil, errors.New("boom")
		}
		return resultFor(m), nil
	})
	p := h.page
	if got := p.OutputState(); got != StateEmpty {
		t.Errorf("before any analysis: %q, want %q", got, StateEmpty)
	}
	p.text = srcA
	p.check(h.ctx)
	if got := p.OutputState(); got != StateRunning {
		t.Errorf("while the first analysis runs: %q, want %q", got, StateRunning)
	}
	go func() { release <- struct{}{} }()
	e.ConsumeAll()
	if got := p.OutputState(); got != StateReady {
		t.Errorf("after it: %q, want %q", got, StateReady)
	}
	out := app.HTMLString(p.Render())
	if !strings.Contains(out, `data-state="ready"`) || !regexp.MustCompile(`data-result-gen="[1-9]`).MatchString(out) {
		t.Errorf("the results area does not carry its state")
	}
	p.Input(h.ctx, bad)
	if got := p.OutputState(); got != StatePending {
		t.Errorf("while typing: %q, want %q", got, StatePending)
	}
	e.ConsumeAll()
	if got := p.OutputState(); got != StateInvalid {
		t.Errorf("with an error in the text: %q, want %q", got, StateInvalid)
	}
	fail = true
	p.Input(h.ctx, srcB)
	go func() { release <- struct{}{} }()
	e.ConsumeAll()
	e.ConsumeAll()
	if got := p.OutputState(); got != StateError {
		t.Errorf("after a failed analysis: %q, want %q", got, StateError)
	}
}

func TestEmbedSnippetCarriesTheStateAndEscapes(t *testing.T) {
	st := share.State{Model: srcA}
	s, err := EmbedSnippet(`https://wiki.example/tools/bellcheck/?a="b"&c=<d>`, st, true, false)
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`^<iframe data-bellcheck src="([^"]*)" title="[^"<>]*" width="100%" height="\d+" style="[^"]*" loading="lazy"></iframe>$`).FindStringSubmatch(s)
	if m == nil {
		t.Fatalf("snippet is not one well-formed iframe: %s", s)
	}
	src := html.UnescapeString(m[1])
	if !strings.HasPrefix(src, `https://wiki.example/tools/bellcheck/?a="b"&c=<d>#`) {
		t.Errorf("src %q", src)
	}
	got, err := share.Decode(src[strings.IndexByte(src, '#')+1:])
	if err != nil || got.Model != srcA || !got.View.Embed || !got.View.ReadOnly || got.View.EditorCollapsed {
		t.Errorf("snippet state %+v (%v)", got, err)
	}
}

func TestExportTableMatchesTheResultsTable(t *testing.T) {
	m, err := model.Parse("param x\nparam y\n-x^2/2 - (y - x)^2/2\n")
	if err != nil {
		t.Fatal(err)
	}
	secs := Table(resultFor(m), m)
	tb := ExportTable(secs)
	// The exact column and one per fit: the density is Gaussian, so every
	// fit exists (EP keeps both factors exact).
	if len(tb.Columns) != 1+engine.NumMethods || len(tb.Groups) != len(secs) {
		t.Fatalf("%d columns, %d groups; want %d and %d", len(tb.Columns), len(tb.Groups), 1+engine.NumMethods, len(secs))
	}
	for gi, sec := range secs {
		g := tb.Groups[gi]
		if g.Title != sec.Title || len(g.Rows) != len(sec.Rows) {
			t.Errorf("group %d: %q with %d rows, want %q with %d", gi, g.Title, len(g.Rows), sec.Title, len(sec.Rows))
			continue
		}
		for ri, r := range sec.Rows {
			for k, c := range r.Cells {
				ec := g.Rows[ri].Cells[k]
				if ec.Text != c.Text || ec.Note != c.Sub || ec.Best != c.Best {
					t.Errorf("%s/%s column %d: %+v, want %+v", sec.Title, r.Label, k, ec, c)
				}
			}
		}
	}
	if md := export.Markdown(tb); !strings.Contains(md, "| corr(x, y) |") {
		t.Errorf("Markdown lacks the correlation row:\n%s", md)
	}
}

func TestRefusedClipboardOffersTheTextSelected(t *testing.T) {
	h, e := mount(t, analyseFixture)
	p := h.page
	e.ConsumeAll()
	// Natively the clipboard always fails (jsdom.ErrNoBrowser), as a
	// browser that refuses it would.
	p.CopyLink(h.ctx)
	e.ConsumeAll()
	if p.tools.field == "" || !p.tools.warn || !strings.Contains(p.tools.msg, "Ctrl+C") {
		t.Fatalf("no fallback field: %+v", p.tools)
	}
	i := strings.IndexByte(p.tools.field, '#')
	if st, err := share.Decode(p.tools.field[i+1:]); i < 0 || err != nil || st.Model != p.text {
		t.Errorf("the offered link %q does not hold the model (%v)", p.tools.field, err)
	}
	out := app.HTMLString(p.Render())
	if !strings.Contains(out, `id="`+CopyFieldID+`"`) {
		t.Error("the read-only field is not on the page")
	}
	p.copied(h.ctx, "x", "Copied.", nil)
	if p.tools.field != "" || p.tools.msg != "Copied." || p.tools.warn {
		t.Errorf("after a successful copy: %+v", p.tools)
	}
}

func TestHostileModelInAnEmbedLinkIsOnlyText(t *testing.T) {
	evil := "param x\n<script>alert(1)</script><img src=x onerror=alert(2)>\nld_normal(x, 0, 1)\n"
	h, _ := openWith(t, newMemBrowser(embedLinkOf(t, evil, true, false)))
	out := app.HTMLString(h.page.Render())
	// Take out the editor's value (go-app writes a textarea's text as an
	// attribute natively; the browser gets the value property).
	if i := strings.Index(out, `value="param x`); i >= 0 {
		j := strings.Index(out[i:], `\n"`)
		if j < 0 {
			t.Fatal("cannot find the end of the editor's value")
		}
		out = out[:i] + out[i+j+len(`\n"`):]
	}
	if strings.Contains(out, "<script>alert") || strings.Contains(out, "<img src=x") {
		t.Error("a link's model text reached the embed view as markup")
	}
}

// TestRawHTMLNeverTakesUserText lists every app.Raw call of the package:
// each must be given the logo constant, a figure's SVG (which escapes every
// text it holds; app/figure's tests) or the legend swatch built from the
// methods' fixed styles. A new call fails this test until it is reviewed
// and added here.
func TestRawHTMLNeverTakesUserText(t *testing.T) {
	allowed := map[string]bool{
		"logoSVG": true,
		"f.SVG":   true,
		"`<svg class=\"swatch\" viewBox=\"0 0 28 8\" width=\"28\" height=\"8\" aria-hidden=\"true\" focusable=\"false\"><line x1=\"1\" y1=\"4\" x2=\"27\" y2=\"4\" stroke=\"` + s.Colour + `\" stroke-width=\"` + strconv.FormatFloat(s.Width*1.1, 'f', 2, 64) + `\"` + dash + `/></svg>`": true,
	}
	fset := token.NewFileSet()
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	calls := 0
	for _, name := range files {
		if strings.HasSuffix(name, "_test.go") {
			continue
		}
		f, err := parser.ParseFile(fset, name, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		ast.Inspect(f, func(n ast.Node) bool {
			call, ok := n.(*ast.CallExpr)
			if !ok {
				return true
			}
			sel, ok := call.Fun.(*ast.SelectorExpr)
			if !ok || sel.Sel.Name != "Raw" {
				return true
			}
			if id, ok := sel.X.(*ast.Ident); !ok || id.Name != "app" {
				return true
			}
			calls++
			var b strings.Builder
			printer.Fprint(&b, fset, call.Args[0])
			if !allowed[strings.Join(strings.Fields(b.String()), " ")] {
				t.Errorf("%s: app.Raw(%s) is not a reviewed source of HTML", fset.Position(call.Pos()), b.String())
			}
			return true
		})
	}
	if calls == 0 {
		t.Error("no app.Raw call found: the scan is broken")
	}
	// jsdom, the one package with the browser's API, sets no HTML.
	for _, name := range []string{"../jsdom/dom_js.go", "../jsdom/share_js.go", "../jsdom/file_js.go"} {
		src, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		for _, bad := range []string{"innerHTML", "outerHTML", "insertAdjacentHTML", "document.write", `"eval"`, `"Function"`} {
			if strings.Contains(string(src), bad) {
				t.Errorf("%s uses %s", name, bad)
			}
		}
	}
}
