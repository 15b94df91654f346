package ui

import (
	"strings"
	"testing"

	"bellcheck/app/share"
)

// srcVary has a live constant k in [0.5, 3], 1.5 in the text.
const srcVary = "#@ vary k=0.5:3\nk = 1.5\nparam alpha\nld_normal(alpha, 0, 1/k)\n"

// runConstant is the value of k in the model the page analyses now.
func runConstant(t *testing.T, p *Page) float64 {
	t.Helper()
	m := p.s.runModel()
	if m == nil {
		t.Fatal("no model to analyse")
	}
	v, err := m.Constant("k")
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// A slider's value goes into the link and the saved work: a reload, and a
// link opened elsewhere, come back at the value the user moved to; a link
// made without it opens at the text's value, and a value beyond the range
// is brought to its end.
func TestSliderValueInLinkAndSavedWork(t *testing.T) {
	b := newMemBrowser("")
	h, e := openWith(t, b)
	h.page.Input(h.ctx, srcVary)
	e.ConsumeAll()
	h.page.SetConstant(h.ctx, 0, 2.25)
	e.ConsumeAll()
	st, err := share.Decode(b.frag)
	if err != nil {
		t.Fatal(err)
	}
	if st.Constants["k"] != 2.25 || len(st.Constants) != 1 {
		t.Fatalf("the link holds the constants %v, want k = 2.25", st.Constants)
	}
	if got := kept(b); len(got) != 1 || got[0] != srcVary {
		t.Fatalf("the history holds %q", got)
	}
	// A reload of the bare address restores the work with the slider's value.
	b.frag = ""
	h2, e2 := openWith(t, b)
	if got := runConstant(t, h2.page); got != 2.25 {
		t.Errorf("after a reload k = %g, want 2.25", got)
	}
	if items := h2.page.s.liveItems(); len(items) != 1 || items[0].Value != 2.25 || items[0].FromText != 1.5 {
		t.Errorf("after a reload the slider shows %+v", items)
	}
	// Moving the slider again continues the same entry.
	h2.page.SetConstant(h2.ctx, 0, 0.75)
	e2.ConsumeAll()
	if es := dedupe(readEntries(b)); len(es) != 1 || es[0].State.Constants["k"] != 0.75 {
		t.Errorf("after a second move the history holds %+v", es)
	}

	for _, c := range []struct {
		name   string
		state  share.State
		want   float64
		notice string
	}{
		{"link with a value", share.State{Model: srcVary, Constants: map[string]float64{"k": 2.5}}, 2.5, ""},
		{"link made before values were kept", share.State{Model: srcVary}, 1.5, ""},
		{"value beyond the range", share.State{Model: srcVary, Constants: map[string]float64{"k": 9}}, 3, "outside its range 0.5 to 3"},
		{"value of a constant not marked to vary", share.State{Model: srcVary, Constants: map[string]float64{"alpha2": 9}}, 1.5, "does not mark"},
	} {
		frag, err := share.Encode(c.state)
		if err != nil {
			t.Fatal(err)
		}
		h3, _ := openWith(t, newMemBrowser(frag))
		if got := runConstant(t, h3.page); got != c.want {
			t.Errorf("%s: k = %g, want %g", c.name, got, c.want)
		}
		if n := h3.page.notice.Text; (c.notice == "") != (n == "") || !strings.Contains(n, c.notice) {
			t.Errorf("%s: notice %q, want one saying %q", c.name, n, c.notice)
		}
	}
}
