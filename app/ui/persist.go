package ui

import (
	"errors"
	"time"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
	"bellcheck/engine/model"
)

// Browser is where the page keeps its state between visits: the URL's
// fragment and the browser's local storage. The page uses the real one;
// tests use a map.
type Browser interface {
	Fragment() string
	SetFragment(fragment string)
	Load(key string) (string, bool)
	// Save writes a key; it fails when the storage is full or blocked.
	Save(key, value string) error
	// Keys lists the storage's keys.
	Keys() []string
	// Remove deletes a key.
	Remove(key string)
	// TabID returns the tab's identity, kept across reloads of the tab
	// (session storage) and new in every other tab.
	TabID() string
}

// realBrowser reaches the browser through jsdom; failures (storage blocked
// or full) leave the page working without persistence.
type realBrowser struct{}

func (realBrowser) Fragment() string {
	f, err := jsdom.Fragment()
	if err != nil {
		return ""
	}
	return f
}

func (realBrowser) SetFragment(f string) { _ = jsdom.ReplaceFragment(f) }

func (realBrowser) Load(key string) (string, bool) {
	v, ok, err := jsdom.LoadItem(key)
	return v, ok && err == nil
}

func (realBrowser) Save(key, value string) error { return jsdom.SaveItem(key, value) }

func (realBrowser) Keys() []string {
	k, _ := jsdom.StorageKeys()
	return k
}

func (realBrowser) Remove(key string) { _ = jsdom.RemoveItem(key) }

// tabKey is the session-storage key of the tab's identity.
const tabKey = "bellcheck.tab"

func (realBrowser) TabID() string {
	if id, ok, err := jsdom.LoadSessionItem(tabKey); err == nil && ok && id != "" {
		return id
	}
	id := newEntryID()
	_ = jsdom.SaveSessionItem(tabKey, id)
	return id
}

// Notice is a plain message above the results, with at most one offer.
type Notice struct {
	Text string
	// Action labels a button that loads Offer; "" for none.
	Action string
	Offer  *share.State
	// Forget offers to delete the offered history entry, Key.
	Forget bool
	Key    string
	// Warn marks a problem (a link that could not be opened).
	Warn bool
}

// toShare returns the state in the link format: options by parameter index
// of the model text (or of the last valid model while the text has errors).
func toShare(src string, m *model.Model, params ParamChoices, v View) share.State {
	return share.State{Model: src, Params: params.ByIndex(m), View: share.View{LogScale: v.Log}}
}

// Opening decides what the page opens with, from the URL's fragment and the
// models kept in the history, and never drops work silently (opening a link
// writes nothing: the user's models stay in the history until they change
// the link's model):
//
//   - a valid link is opened; when it is not one of the kept models, the
//     newest kept model is offered back;
//   - a broken link gives a plain notice and the default example; the
//     newest kept model is offered;
//   - without a link the newest kept model comes back.
//
// The single slots of earlier versions of the page move into the history
// first. ok is false when the default example should be shown.
func Opening(b Browser) (st share.State, ok bool, n Notice) {
	importLegacy(b, time.Now())
	kept := dedupe(readEntries(b))
	var newest *share.State
	if len(kept) > 0 {
		st := entryWithData(b, kept[0])
		newest = &st
	}
	frag := b.Fragment()
	if frag != "" {
		link, err := share.Decode(frag)
		if err != nil {
			n = Notice{Text: "The link could not be opened: " + linkProblem(err) + " The default example is shown instead.", Warn: true}
			if newest != nil {
				n.Action, n.Offer = "Open the model you were editing", newest
			}
			return share.State{}, false, n
		}
		if newest != nil && !keptWork(kept, link) {
			n = Notice{Text: "Opened the shared model. Your own models are kept under \u201cYour models\u201d.",
				Action: "Back to my model", Offer: newest}
		}
		if problems := LinkProblems(link); len(problems) > 0 {
			n = linkNotice(n, problems)
		}
		return link, true, n
	}
	if newest != nil {
		st, ok = *newest, true
	}
	return st, ok, n
}

// keptWork reports whether st's work is one of the kept entries.
func keptWork(kept []Entry, st share.State) bool {
	w := workOf(st)
	for _, e := range kept {
		if e.work() == w {
			return true
		}
	}
	return false
}

// linkProblem says in words what is wrong with a link.
func linkProblem(err error) string {
	switch {
	case errors.Is(err, share.ErrFutureVersion):
		return "it was made by a newer version of bellcheck."
	case errors.Is(err, share.ErrTooLong):
		return "it is too long."
	case errors.Is(err, share.ErrNotOurs):
		return "it does not hold a bellcheck model."
	case errors.Is(err, share.ErrBadEncoding), errors.Is(err, share.ErrBadContent):
		return "it is damaged (perhaps cut short when it was copied)."
	}
	return "it is not valid."
}

// flushPending saves at once a change still waiting to be saved: text
// typed less than CheckDelay ago (not yet checked) or checked less than
// PersistDelay ago. The page calls it when it is left, closed or hidden
// (jsdom.OnLeave), where the waiting timer would never fire and the last
// edit would be lost. It runs in the browser's event handler, so it writes
// before the page goes.
func (p *Page) flushPending() {
	if p.browser == nil || !(p.persistPending || p.pending) {
		return
	}
	p.persistSeq++ // the waiting timer has nothing left to do
	p.persist()
}
