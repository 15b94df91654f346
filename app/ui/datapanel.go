package ui

import (
	"errors"
	"strconv"
	"strings"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
	"bellcheck/engine/data"
	"bellcheck/engine/model"
)

// Element ids of the data panel.
const (
	DataPasteID = "bc-data-paste"
	DataFileID  = "bc-data-file"
)

// DataHost is what the data panel reports to: the page implements it.
type DataHost interface {
	// AttachData reads text (pasted, or a file's, named by source) as a
	// table and attaches its columns to the model as named vectors; err is
	// a failure to read the file.
	AttachData(ctx app.Context, source, text string, err error)
	// RemoveData detaches the table.
	RemoveData(ctx app.Context)
	// DataToText writes the attached table into the model text as
	// definitions and detaches it.
	DataToText(ctx app.Context)
}

// DataColumn is an attached column as the panel lists it.
type DataColumn struct {
	Name string
	N    int
}

// DataView is what the data panel shows.
type DataView struct {
	// Source names where the table came from ("pasted columns", a file's
	// name); Columns are its columns (none when nothing is attached).
	Source  string
	Columns []DataColumn
	// CSVBytes is the size of the table as stored; InLink reports whether
	// a link carries it (share.MaxData).
	CSVBytes int
	InLink   bool
	// ToText reports whether the table fits into the model text.
	ToText bool
	// Kept says whether the saved work keeps a table too large for a
	// link (a sentence; "" for a table a link carries).
	Kept string
	// Problem is the last paste's or file's error, for a person (data's
	// Detail: the line, a caret, the hint).
	Problem string
}

// DataPanel attaches columns of numbers to the model: pasted from a
// spreadsheet, or a CSV file chosen or dropped on the page. Its inputs
// never hold user text as HTML: names and errors are text nodes.
type DataPanel struct {
	app.Compo
	Host DataHost
	View DataView
}

// Render draws the attached table's summary, or the paste field and the
// file input.
func (d *DataPanel) Render() app.UI {
	v := d.View
	body := []app.UI{}
	if len(v.Columns) > 0 {
		items := make([]app.UI, 0, len(v.Columns))
		for _, c := range v.Columns {
			items = append(items, app.Li().Body(
				app.Span().Class("mono").Text(c.Name),
				app.Span().Class("muted").Text(" "+plural(c.N, "value")),
			))
		}
		link := "The link and the saved work carry it."
		if !v.InLink {
			link = "It is " + kib(v.CSVBytes) + " as CSV, more than the " + kib(share.MaxData) + " a link carries: links hold the model without it. " + v.Kept
		}
		body = append(body,
			app.P().Class("data-source").Body(app.Text("Attached from "), app.Strong().Text(v.Source),
				app.Text(": each column is a vector of the model, by its name.")),
			app.Ul().Class("data-cols").Body(items...),
			app.P().Class("muted data-link").Text(link),
			app.Div().Class("data-actions").Body(
				app.Button().Type("button").Class("tool-btn").Disabled(!v.ToText).
					Title("write the columns into the model text as NAME = [ ... ] and detach them").
					Text("Put into the model text").
					OnClick(func(ctx app.Context, e app.Event) { d.Host.DataToText(ctx) }),
				app.Button().Type("button").Class("tool-btn").Text("Remove the data").
					OnClick(func(ctx app.Context, e app.Event) { d.Host.RemoveData(ctx) }),
			),
		)
	}
	label := "Paste columns from a spreadsheet (a header row naming them; tab, comma or space separated)"
	if len(v.Columns) > 0 {
		label = "Paste other columns to replace them"
	}
	body = append(body,
		app.Label().For(DataPasteID).Class("data-label").Text(label),
		app.Textarea().ID(DataPasteID).Class("data-paste mono").Rows(3).Spellcheck(false).
			Placeholder("x\ty\n1.2\t3.4\n…").
			OnInput(func(ctx app.Context, e app.Event) {
				text, err := jsdom.Value(DataPasteID)
				if err != nil || strings.TrimSpace(text) == "" {
					return
				}
				d.Host.AttachData(ctx, "pasted columns", text, nil)
			}),
		app.Div().Class("data-file").Body(
			app.Label().For(DataFileID).Text("or choose a CSV file (or drop one anywhere on the page): "),
			app.Input().ID(DataFileID).Type("file").Accept(".csv,.tsv,.txt,text/csv,text/plain").
				OnChange(func(ctx app.Context, e app.Event) {
					jsdom.ReadInputFile(DataFileID, data.MaxBytes, func(name, text string, err error) {
						ctx.Dispatch(func(ctx app.Context) { d.Host.AttachData(ctx, name, text, err) })
					})
				}),
		),
	)
	if v.Problem != "" {
		body = append(body, app.Pre().Class("data-error").Attr("role", "alert").Text(v.Problem))
	}
	return app.Div().Class("data-panel").Body(body...)
}

func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return strconv.Itoa(n) + " " + what + "s"
}

func kib(n int) string {
	if n < 1024 {
		return strconv.Itoa(n) + " bytes"
	}
	return strconv.Itoa((n+1023)/1024) + " KiB"
}

// attached is the page's attached table and what the panel shows of it.
type attached struct {
	source  string
	csv     string // the table as stored: data.Table.CSV
	digest  string // digestOf(csv): its name in the saved work (keptdata.go)
	problem string
	// notKept reports that the saved work could not keep a table too
	// large for a link (the storage was full).
	notKept bool
}

// dataView is what the data panel shows now.
func (p *Page) dataView() DataView {
	v := DataView{Source: p.data.source, Problem: p.data.problem}
	if tb := p.s.Data; tb != nil {
		for _, c := range tb.Columns {
			v.Columns = append(v.Columns, DataColumn{Name: c.Name, N: len(c.Values)})
		}
		v.CSVBytes = len(p.data.csv)
		v.InLink = len(p.data.csv) <= share.MaxData
		v.Kept = keptSentence(len(p.data.csv), p.data.notKept)
		v.ToText = len(p.text)+len(tb.Definitions())+1 <= model.MaxSource
	}
	return v
}

// AttachData implements DataHost: a table read without error replaces the
// attached one and the model is checked again with its columns; an error
// is shown under the paste field and the attached table stays.
func (p *Page) AttachData(ctx app.Context, source, text string, err error) {
	if err != nil {
		if errors.Is(err, jsdom.ErrNoFile) {
			return
		}
		p.data.problem = "The file could not be read: " + strings.TrimPrefix(err.Error(), "jsdom: ")
		return
	}
	tb, err := data.Parse(text)
	if err != nil {
		var e *data.Error
		if errors.As(err, &e) {
			p.data.problem = source + ": " + e.Detail(text)
		} else {
			p.data.problem = source + ": " + err.Error()
		}
		return
	}
	p.setData(tb, source)
	_ = jsdom.SetValue(DataPasteID, "")
	p.checked(ctx, p.s.Edit(p.text))
}

// setData attaches tb (nil for none).
func (p *Page) setData(tb *data.Table, source string) {
	p.s.Data = tb
	p.data = attached{}
	if tb != nil {
		csv := tb.CSV()
		p.data = attached{source: source, csv: csv, digest: digestOf(csv)}
	}
}

// RemoveData implements DataHost.
func (p *Page) RemoveData(ctx app.Context) {
	p.setData(nil, "")
	p.checked(ctx, p.s.Edit(p.text))
}

// DataToText implements DataHost: the columns become definitions at the
// top of the model text.
func (p *Page) DataToText(ctx app.Context) {
	tb := p.s.Data
	if tb == nil {
		return
	}
	text := tb.Definitions() + p.text
	if len(text) > model.MaxSource {
		p.data.problem = "The columns do not fit into the model text (at most " + kib(model.MaxSource) + "): they stay attached."
		return
	}
	p.setData(nil, "")
	p.load(text, p.view)
	p.checked(ctx, p.s.Edit(text))
}

// linkData is the attached table for a link: its CSV when a link carries
// it, "" otherwise.
func (p *Page) linkData() string {
	if len(p.data.csv) > share.MaxData {
		return ""
	}
	return p.data.csv
}

// openData attaches the table a link or saved work carries: its CSV, or
// one it names as too large for a link, found in the saved work of this
// browser (never in the embed view, which leaves the saved work alone).
func (p *Page) openData(st share.State) {
	csv, source := st.Data, "the link"
	if csv == "" && st.DataLeft != "" {
		kept, ok := "", false
		if p.browser != nil && !p.mode.Embed {
			kept, ok = p.browser.Load(DataPrefix + st.DataLeft)
		}
		if !ok {
			p.setData(nil, "")
			p.data.problem = "The model came with attached data too large for a link (over " + kib(share.MaxData) +
				"), and this browser does not keep it: attach the file again."
			return
		}
		csv, source = kept, "your saved work"
	}
	if csv == "" {
		p.setData(nil, "")
		return
	}
	tb, err := data.Parse(csv)
	if err != nil {
		p.setData(nil, "")
		p.data.problem = "The data the link carries could not be read: " + err.Error()
		return
	}
	p.setData(tb, source)
}

// watchDrops makes the whole page a drop target for data files.
func (p *Page) watchDrops(ctx app.Context) {
	_ = jsdom.OnDropFile(RootID, data.MaxBytes, func(name, text string, err error) {
		c := ctx
		if p.ctx != nil {
			c = *p.ctx
		}
		c.Dispatch(func(ctx app.Context) { p.AttachData(ctx, name, text, err) })
	})
}

// keptSentence says whether the saved work keeps a table of n bytes of
// CSV that a link does not carry.
func keptSentence(n int, notKept bool) string {
	switch {
	case n > MaxKeptData:
		return "It is also more than the " + kib(MaxKeptData) + " the browser keeps with your saved work: keep the file to attach it again."
	case notKept:
		return "The browser's storage is full, so your saved work holds the model without it: keep the file, or remove models from your history."
	}
	return "Your saved work in this browser keeps it (up to " + kib(MaxKeptData) + "): a reload, your history or the link opened here brings it back; elsewhere, attach the file again."
}

// record saves st (whose link fragment is frag) in the history, with the
// whole attached table, and notes whether a table too large for a link was
// kept.
func (p *Page) record(st share.State, frag string) {
	st.Data, st.DataLeft = p.data.csv, ""
	err := p.hist().Record(st, frag)
	p.data.notKept = errors.Is(err, ErrDataNotKept)
}
