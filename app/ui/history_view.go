package ui

import (
	"strconv"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
)

// IDs of the history card, for tests.
const (
	// HistoryID is the list of kept models.
	HistoryID = "bc-history"
)

// hist returns the page's history, made on first use; in the browser it
// also follows the other tabs' writes.
func (p *Page) hist() *History {
	if p.history == nil {
		p.history = NewHistory(p.browser)
		if p.ctx != nil {
			ctx := *p.ctx
			_ = jsdom.OnStorage(func() {
				ctx.Dispatch(func(app.Context) { p.history.Refresh() })
			})
		}
	}
	return p.history
}

// RestoreHistory implements Host: it opens a kept model (later edits
// continue that entry).
func (p *Page) RestoreHistory(ctx app.Context, key string) {
	if p.browser == nil {
		return
	}
	h := p.hist()
	h.Refresh()
	e, ok := h.Find(key)
	if !ok {
		p.notice = Notice{Text: "That model is no longer kept (another tab removed it).", Warn: true}
		return
	}
	cur := p.shareState()
	p.loadLink(ctx, h.WithData(e))
	p.notice = Notice{Text: "Opened a model from your history.", Action: "Back to the model before", Offer: &cur}
}

// ForgetHistory implements Host: it deletes a kept model.
func (p *Page) ForgetHistory(ctx app.Context, key string) {
	if p.browser != nil {
		p.hist().Remove(key)
	}
}

// historyCard is the card listing the kept models (none in the embed view,
// which never touches them).
func (p *Page) historyCard() app.UI {
	var items []HistoryItem
	current := ""
	if p.browser != nil && !p.mode.Embed {
		h := p.hist()
		current = h.Current()
		now := time.Now()
		for _, e := range h.Entries() {
			items = append(items, HistoryItem{Key: e.Key, Title: entryTitle(e.State), When: ago(now, e.At), Current: e.Key == current})
		}
	}
	return card("Your models", "bc-h-history", &HistoryList{Host: p, Items: items})
}

// HistoryItem is one kept model as the list shows it.
type HistoryItem struct {
	Key, Title, When string
	Current          bool
}

// HistoryList lists the kept models, each with a button to open it and one
// to forget it.
type HistoryList struct {
	app.Compo
	Host  Host
	Items []HistoryItem
}

// Render draws the list.
func (l *HistoryList) Render() app.UI {
	if len(l.Items) == 0 {
		return app.P().ID(HistoryID).Class("muted").Text("Models you type are kept here, in this browser only; opening a link never replaces them.")
	}
	rows := make([]app.UI, len(l.Items))
	for i, it := range l.Items {
		idx := i
		label := it.When
		if it.Current {
			label += " · open now"
		}
		rows[i] = app.Li().Class("history-item").DataSet("key", it.Key).Body(
			app.Button().Type("button").Class("history-open").Title("open this model").
				OnClick(func(ctx app.Context, e app.Event) {
					if idx < len(l.Items) {
						l.Host.RestoreHistory(ctx, l.Items[idx].Key)
					}
				}).
				Body(
					app.Span().Class("history-title").Text(it.Title),
					app.Span().Class("history-when muted").Text(label),
				),
			app.Button().Type("button").Class("history-forget").Aria("label", "forget this model").Text("×").
				OnClick(func(ctx app.Context, e app.Event) {
					if idx < len(l.Items) {
						l.Host.ForgetHistory(ctx, l.Items[idx].Key)
					}
				}),
		)
	}
	return app.Ul().ID(HistoryID).Class("history").Body(rows...)
}

// ago says how long ago t was, coarsely.
func ago(now, t time.Time) string {
	d := now.Sub(t)
	switch {
	case d < time.Minute:
		return "just now"
	case d < time.Hour:
		return strconv.Itoa(int(d/time.Minute)) + " min ago"
	case d < 24*time.Hour:
		return strconv.Itoa(int(d/time.Hour)) + " h ago"
	}
	return t.Format("2 Jan 2006")
}
