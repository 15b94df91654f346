package ui

import (
	"context"
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
	"bellcheck/app/share"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// memBrowser is a Browser kept in memory.
type memBrowser struct {
	frag  string
	items map[string]string
}

func (b *memBrowser) Fragment() string             { return b.frag }
func (b *memBrowser) SetFragment(f string)         { b.frag = f }
func (b *memBrowser) Load(k string) (string, bool) { v, ok := b.items[k]; return v, ok }
func (b *memBrowser) Save(k, v string)             { b.items[k] = v }
func newMemBrowser(frag string) *memBrowser {
	return &memBrowser{frag: frag, items: map[string]string{}}
}
func analyseFixture(ctx context.Context, m *model.Model, o engine.Options, pr engine.ProgressFunc) (*engine.Result, error) {
	return resultFor(m), nil
}

// openWith mounts a page over the browser b and opens its state.
func openWith(t *testing.T, b Browser) (*harness, app.TestEngine) {
	t.Helper()
	h, e := mount(t, analyseFixture)
	h.page.browser = b
	h.page.open(h.ctx)
	e.ConsumeAll()
	return h, e
}

func link(t *testing.T, src string) string {
	t.Helper()
	f, err := share.Encode(share.State{Model: src})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func TestWorkSurvivesAReload(t *testing.T) {
	b := newMemBrowser("")
	h, e := openWith(t, b)
	h.page.Input(h.ctx, srcA)
	e.ConsumeAll()
	h.page.SetParam(h.ctx, "alpha", engine.ParamOptions{Points: 99})
	e.ConsumeAll()
	if b.frag == "" || b.items[WorkKey] != b.frag {
		t.Fatal("the state is not in the URL and the storage")
	}
	b.frag = "" // a reload of the bare address
	h2, _ := openWith(t, b)
	if h2.page.text != srcA || h2.page.s.Param("alpha").Points != 99 {
		t.Errorf("after a reload: text %q, options %+v", h2.page.text, h2.page.s.Param("alpha"))
	}
	if h2.page.notice.Text != "" {
		t.Errorf("a plain restore needs no notice: %q", h2.page.notice.Text)
	}
}

func TestLinkNeverSilentlyReplacesWork(t *testing.T) {
	b := newMemBrowser(link(t, srcB))
	b.items[WorkKey] = link(t, srcA) // unsaved work from before
	h, e := openWith(t, b)
	p := h.page
	if p.text != srcB {
		t.Fatalf("the link was not opened: %q", p.text)
	}
	if p.notice.Offer == nil || p.notice.Offer.Model != srcA || b.items[EarlierKey] == "" {
		t.Fatalf("the displaced work is not kept and offered: %+v", p.notice)
	}
	p.TakeOffer(h.ctx)
	e.ConsumeAll()
	if p.text != srcA || p.notice.Offer == nil || p.notice.Offer.Model != srcB {
		t.Errorf("taking the offer: text %q, offer %+v", p.text, p.notice.Offer)
	}
	if kept, _ := share.Decode(b.items[EarlierKey]); kept.Model != srcB {
		t.Errorf("the shared model is not kept after switching: %q", kept.Model)
	}
	// A later visit without a link offers the other model, until forgotten.
	b.frag = ""
	h2, _ := openWith(t, b)
	if h2.page.notice.Offer == nil || !h2.page.notice.Forget {
		t.Fatalf("the kept model is not offered: %+v", h2.page.notice)
	}
	h2.page.ForgetEarlier(h2.ctx)
	b.frag = ""
	h3, _ := openWith(t, b)
	if h3.page.notice.Text != "" {
		t.Errorf("forgotten work offered again: %+v", h3.page.notice)
	}
}

func TestBrokenAndHostileLinks(t *testing.T) {
	def, _ := examples.ByID(examples.Default)
	future := "b9." + strings.TrimPrefix(link(t, srcA), "b1.")
	for _, c := range []struct {
		name, frag, says string
	}{
		{"truncated", link(t, srcA)[:12], "damaged"},
		{"not ours", "section-2", "does not hold"},
		{"future", future, "newer version"},
		{"huge", "b1." + strings.Repeat("A", share.MaxFragment), "too long"},
	} {
		b := newMemBrowser(c.frag)
		b.items[WorkKey] = link(t, srcA)
		h, _ := openWith(t, b)
		p := h.page
		if !p.notice.Warn || !strings.Contains(p.notice.Text, c.says) {
			t.Errorf("%s: notice %q, want one saying %q", c.name, p.notice.Text, c.says)
		}
		if p.text != def.Source {
			t.Errorf("%s: the default example is not shown", c.name)
		}
		if p.notice.Offer == nil || p.notice.Offer.Model != srcA {
			t.Errorf("%s: the saved work is not offered", c.name)
		}
	}
	// Model text from a link is only ever text on the page.
	evil := "param x\n<script>alert(1)</script>\nld_normal(x, 0, 1)\n"
	h, _ := openWith(t, newMemBrowser(link(t, evil)))
	html := app.HTMLString(h.page.Render())
	// go-app writes a textarea's text as its value (an attribute when it
	// encodes HTML, the value property in the browser): take that out, and
	// nothing of the model may remain unescaped.
	// (The attributes come in any order; the value ends with the text's
	// final line break, written \n.)
	if i := strings.Index(html, `value="param x`); i >= 0 {
		j := strings.Index(html[i:], `\n"`)
		if j < 0 {
			t.Fatal("cannot find the end of the editor's value")
		}
		html = html[:i] + html[i+j+len(`\n"`):]
	}
	if strings.Contains(html, "<script>alert") || !strings.Contains(html, "&lt;/script&gt;") {
		t.Error("a link's model text reached the page as markup")
	}
}
