package ui

import (
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"sort"
	"strings"
	"time"

	"bellcheck/app/share"
	"bellcheck/engine/model"
)

// Keys of the page's local storage.
const (
	// HistoryPrefix starts the key of every model kept in the history: one
	// key per entry, so two tabs never write the same key unknowingly.
	HistoryPrefix = "bellcheck.h."
	// MaxHistory is the most entries the history keeps; the oldest go
	// first.
	MaxHistory = 20

	// WorkKey and EarlierKey are the keys of earlier versions of the page
	// (one slot for the work, one for the work a link displaced); their
	// contents move into the history once, when the page opens.
	WorkKey    = "bellcheck.work"
	EarlierKey = "bellcheck.earlier"
)

// Entry is one model kept in the history.
type Entry struct {
	// Key is the entry's local-storage key.
	Key string
	// At is when the entry was last written.
	At time.Time
	// State is the kept state (model text, options, view).
	State share.State

	raw string // the stored value
	tab string // the tab that wrote it
	// dataKey is the key of the entry's table where it is kept under its
	// own (keptdata.go), digest the table's digest ("" for none).
	dataKey, digest string
}

// work is what makes the entry the user's work (see workOf).
func (e Entry) work() string { return workKey(e.State, e.digest) }

// storedEntry is an entry's value in local storage.
type storedEntry struct {
	At   int64  `json:"at"`            // Unix milliseconds
	Frag string `json:"f"`             // share fragment
	Tab  string `json:"tab,omitempty"` // the tab that wrote it (Browser.TabID)
	Data string `json:"d,omitempty"`   // the key of its table, kept apart (keptdata.go)
}

// History keeps the user's own models in the browser's local storage:
// several entries, each under its own key. A model the page opened (a link,
// an example, a restored entry) becomes an entry only once the user changes
// it, so opening links never overwrites or pushes out the user's work.
//
// A tab writes one entry at a time (its current entry), and continues an
// entry only if it wrote it (a reload); another tab's model is copied into
// a new entry when changed. Before each write a tab checks that the entry
// still holds what it wrote last: if another tab has written it meanwhile
// (a duplicated tab shares the tab's identity), it starts a new entry
// instead, so neither tab's work is lost.
type History struct {
	b   Browser
	tab string // this tab's identity (Browser.TabID)
	// key is the current entry ("" until the user changes the loaded
	// state), last the value this tab last wrote there.
	key, last string
	// base is the work of the state the page loaded; pending reports that
	// the next Record gives it.
	base    string
	pending bool
	// Now is the clock (time.Now unless a test sets it).
	Now func() time.Time
	// cache is the entries as last read, newest first.
	cache []Entry
	// lastCSV and lastDigest are the table last saved and its digest.
	lastCSV, lastDigest string
}

// NewHistory returns the history kept in b. The first Record after it (or
// after Loaded) names the state the page opened with, which is not the
// user's work until changed.
func NewHistory(b Browser) *History {
	h := &History{b: b, tab: b.TabID(), pending: true, Now: time.Now}
	h.Refresh()
	return h
}

// workOf is what makes a state the user's work: the model text, the
// options, the live constants' values and the attached table (not the
// view).
func workOf(st share.State) string { return workKey(st, stateDigest(st)) }

// stateDigest is the digest of a state's table: of the table it carries,
// or the one it names as left out.
func stateDigest(st share.State) string {
	if st.Data != "" {
		return digestOf(st.Data)
	}
	return st.DataLeft
}

// workKey is workOf for a state whose table has the given digest.
func workKey(st share.State, digest string) string {
	raw, _ := json.Marshal(share.State{Model: st.Model, Params: st.Params, Constants: st.Constants, Data: digest})
	return string(raw)
}

// Loaded tells the history that the page loaded a state from elsewhere (a
// link, an example, an entry): the next Record names it. If that state is an
// entry this tab wrote, later edits continue that entry.
func (h *History) Loaded() {
	h.pending = true
	h.key, h.last = "", ""
}

// Record saves st (whose fragment is frag) in the current entry when it is
// the user's work: it differs from the state last loaded, or continues an
// entry. st.Data is the whole attached table: one too large for frag (over
// share.MaxData) and within MaxKeptData is kept under its own key. It
// returns an error when the storage refused even after the oldest entries
// were dropped, and ErrDataNotKept when the entry was saved without its
// table.
func (h *History) Record(st share.State, frag string) error {
	digest := h.digest(st.Data)
	w := workKey(st, digest)
	if h.pending {
		h.pending = false
		h.base = w
		h.key, h.last = "", ""
		for _, e := range h.cache { // newest first
			if e.work() == w && e.tab == h.tab {
				h.key, h.last = e.Key, e.raw
				break
			}
		}
		return nil
	}
	if h.key == "" && w == h.base {
		return nil
	}
	if h.key != "" {
		if cur, ok := h.b.Load(h.key); !ok || cur != h.last {
			h.key = "" // removed, or written by another tab: start a new entry
		}
	}
	fresh := h.key == ""
	if fresh {
		h.key = HistoryPrefix + newEntryID()
	}
	se := storedEntry{At: h.Now().UnixMilli(), Frag: frag, Tab: h.tab}
	var dataErr error
	if keptSeparately(st.Data) {
		se.Data, dataErr = h.saveData(st.Data, digest)
	}
	defer collectData(h.b)
	raw, err := json.Marshal(se)
	if err != nil {
		return err
	}
	val := string(raw)
	err = h.b.Save(h.key, val)
	for tries := 0; err != nil && tries < MaxHistory; tries++ {
		// The storage is full: drop the oldest other entry and retry.
		if !h.dropOldest() {
			break
		}
		err = h.b.Save(h.key, val)
	}
	if err != nil {
		h.key, h.last = "", ""
		return err
	}
	h.last = val
	h.Refresh()
	if fresh {
		for len(h.cache) > MaxHistory && h.dropOldest() {
		}
	}
	return dataErr
}

// dropOldest removes the oldest entry other than the current one; it
// reports whether there was one.
func (h *History) dropOldest() bool {
	all := readEntries(h.b)
	for i := len(all) - 1; i >= 0; i-- {
		if all[i].Key != h.key {
			h.b.Remove(all[i].Key)
			collectData(h.b)
			h.Refresh()
			return true
		}
	}
	return false
}

// Remove deletes an entry (at the user's word).
func (h *History) Remove(key string) {
	if !strings.HasPrefix(key, HistoryPrefix) {
		return
	}
	h.b.Remove(key)
	collectData(h.b)
	if key == h.key {
		h.key, h.last = "", ""
		h.base = "" // the state shown is the user's again on the next edit
	}
	h.Refresh()
}

// Refresh rereads the entries (another tab may have written).
func (h *History) Refresh() { h.cache = dedupe(readEntries(h.b)) }

// Entries returns the kept models, newest first, one per distinct work.
func (h *History) Entries() []Entry { return h.cache }

// Current returns the key of the entry this tab writes ("" for none).
func (h *History) Current() string { return h.key }

// Find returns the entry with the given key.
func (h *History) Find(key string) (Entry, bool) {
	for _, e := range h.cache {
		if e.Key == key {
			return e, true
		}
	}
	return Entry{}, false
}

// readEntries reads every entry of the storage, newest first; entries that
// do not decode are skipped.
func readEntries(b Browser) []Entry {
	var out []Entry
	for _, k := range b.Keys() {
		if !strings.HasPrefix(k, HistoryPrefix) {
			continue
		}
		raw, ok := b.Load(k)
		if !ok {
			continue
		}
		var se storedEntry
		if json.Unmarshal([]byte(raw), &se) != nil {
			continue
		}
		st, err := share.Decode(se.Frag)
		if err != nil {
			continue
		}
		e := Entry{Key: k, At: time.UnixMilli(se.At), State: st, raw: raw, tab: se.Tab, digest: stateDigest(st)}
		if strings.HasPrefix(se.Data, DataPrefix) && st.Data == "" {
			e.dataKey, e.digest = se.Data, strings.TrimPrefix(se.Data, DataPrefix)
		}
		out = append(out, e)
	}
	sort.SliceStable(out, func(i, j int) bool {
		if !out[i].At.Equal(out[j].At) {
			return out[i].At.After(out[j].At)
		}
		return out[i].Key < out[j].Key
	})
	return out
}

// dedupe keeps the newest entry of each distinct work.
func dedupe(all []Entry) []Entry {
	seen := map[string]bool{}
	var out []Entry
	for _, e := range all {
		w := e.work()
		if seen[w] {
			continue
		}
		seen[w] = true
		out = append(out, e)
	}
	return out
}

// importLegacy moves the single work slot and the earlier-work slot of
// earlier versions of the page into the history.
func importLegacy(b Browser, now time.Time) {
	have := map[string]bool{}
	for _, e := range readEntries(b) {
		have[e.work()] = true
	}
	for i, k := range []string{EarlierKey, WorkKey} {
		raw, ok := b.Load(k)
		if !ok {
			continue
		}
		if st, err := share.Decode(raw); err == nil && !have[workOf(st)] {
			val, _ := json.Marshal(storedEntry{At: now.Add(time.Duration(i) * time.Millisecond).UnixMilli(), Frag: raw})
			if b.Save(HistoryPrefix+"v0-"+strings.TrimPrefix(k, "bellcheck."), string(val)) != nil {
				continue // keep the old key when the new one cannot be written
			}
			have[workOf(st)] = true
		}
		b.Remove(k)
	}
}

// newEntryID returns a random entry id.
func newEntryID() string {
	var b [8]byte
	if _, err := rand.Read(b[:]); err != nil {
		return strings.ReplaceAll(time.Now().Format("20060102150405.000000000"), ".", "")
	}
	return hex.EncodeToString(b[:])
}

// entryTitle is a short description of an entry: the model's first
// non-blank, non-comment line.
func entryTitle(st share.State) string {
	for _, line := range strings.Split(st.Model, "\n") {
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		return model.Visible(shorten(line, 60))
	}
	return "(an empty model)"
}

func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// loadStored reads the stored entry under key k.
func loadStored(b Browser, k string) (storedEntry, bool) {
	var se storedEntry
	raw, ok := b.Load(k)
	if !ok || json.Unmarshal([]byte(raw), &se) != nil {
		return se, false
	}
	return se, true
}
