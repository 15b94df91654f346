package ui

import (
	"errors"

	"bellcheck/app/jsdom"
	"bellcheck/app/share"
	"bellcheck/engine/model"
)

// Keys of the page's local storage. Both hold share fragments.
const (
	// WorkKey holds the state being edited, saved on every change.
	WorkKey = "bellcheck.work"
	// EarlierKey holds the work a shared link displaced, so opening a link
	// never silently replaces unsaved work.
	EarlierKey = "bellcheck.earlier"
)

// Browser is where the page keeps its state between visits: the URL's
// fragment and the browser's local storage. The page uses the real one;
// tests use a map.
type Browser interface {
	Fragment() string
	SetFragment(fragment string)
	Load(key string) (string, bool)
	Save(key, value string)
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

func (realBrowser) Save(key, value string) { _ = jsdom.SaveItem(key, value) }

// Notice is a plain message above the results, with at most one offer.
type Notice struct {
	Text string
	// Action labels a button that loads Offer; "" for none.
	Action string
	Offer  *share.State
	// Forget offers to delete the kept earlier work.
	Forget bool
	// Warn marks a problem (a link that could not be opened).
	Warn bool
}

// toShare returns the state in the link format: options by parameter index
// of the model text (or of the last valid model while the text has errors).
func toShare(src string, m *model.Model, params ParamChoices, v View) share.State {
	return share.State{Model: src, Params: params.ByIndex(m), View: share.View{LogScale: v.Log}}
}

// Opening decides what the page opens with, from the URL's fragment and the
// work saved in the browser, and never drops work silently:
//
//   - a valid link is opened; the saved work it displaces is kept under
//     EarlierKey and offered back;
//   - a broken link gives a plain notice and the default example; the saved
//     work is kept under EarlierKey and offered;
//   - without a link the saved work comes back, and work kept earlier under
//     EarlierKey is offered (or forgotten, at the user's word).
//
// ok is false when the default example should be shown.
func Opening(b Browser) (st share.State, ok bool, n Notice) {
	load := func(key string) (*share.State, string) {
		raw, found := b.Load(key)
		if !found || raw == "" {
			return nil, ""
		}
		s, err := share.Decode(raw)
		if err != nil {
			return nil, ""
		}
		return &s, raw
	}
	saved, savedRaw := load(WorkKey)
	frag := b.Fragment()
	if frag != "" {
		link, err := share.Decode(frag)
		if err != nil {
			n = Notice{Text: "The link could not be opened: " + linkProblem(err) + " The default example is shown instead.", Warn: true}
			if saved != nil {
				b.Save(EarlierKey, savedRaw)
				n.Action, n.Offer = "Open the model you were editing", saved
			}
			return share.State{}, false, n
		}
		if saved != nil && saved.Model != link.Model {
			b.Save(EarlierKey, savedRaw)
			n = Notice{Text: "Opened the shared model. The model you were editing before is kept.",
				Action: "Back to my model", Offer: saved}
		}
		return link, true, n
	}
	earlier, _ := load(EarlierKey)
	if saved != nil {
		st, ok = *saved, true
	}
	if earlier != nil && (saved == nil || earlier.Model != saved.Model) {
		n = Notice{Text: "Another model you worked on is kept in this browser.", Action: "Open it", Offer: earlier, Forget: true}
	}
	return st, ok, n
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
