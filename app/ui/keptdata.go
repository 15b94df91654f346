package ui

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"slices"
	"strings"

	"bellcheck/app/share"
)

// Attached data too large for a link (over share.MaxData of CSV) is kept
// with the saved work in local storage under a key of its own, named by a
// digest of the CSV, so that the entries holding the same table share one
// copy; an entry names the key. Tables over MaxKeptData are not kept (the
// page says so).
const (
	// DataPrefix starts the key of every kept table.
	DataPrefix = "bellcheck.d."
	// MaxKeptData is the largest table the saved work keeps, as CSV: 1 MiB
	// (local storage holds about 5 MiB per site in common browsers, shared
	// by the history's entries).
	MaxKeptData = 1 << 20
)

// ErrDataNotKept reports an entry saved without its table: the browser's
// storage had no room for it.
var ErrDataNotKept = errors.New("the attached data could not be kept: the browser's storage is full")

// digestOf names a table for the history: a digest of its CSV ("" for no
// table).
func digestOf(csv string) string {
	if csv == "" {
		return ""
	}
	sum := sha256.Sum256([]byte(csv))
	return hex.EncodeToString(sum[:12])
}

// keptSeparately reports whether a table is kept under its own key (too
// large for a link, small enough to keep).
func keptSeparately(csv string) bool {
	return len(csv) > share.MaxData && len(csv) <= MaxKeptData
}

// digest returns the digest of csv, reusing the last one computed (the
// page hands the same table at every save).
func (h *History) digest(csv string) string {
	if csv != h.lastCSV { // the same string compares in constant time
		h.lastCSV, h.lastDigest = csv, digestOf(csv)
	}
	return h.lastDigest
}

// saveData keeps a table under its key, making room by dropping the
// oldest other entries when the storage is full; it returns the key, or
// ErrDataNotKept.
func (h *History) saveData(csv, digest string) (string, error) {
	key := DataPrefix + digest
	if cur, ok := h.b.Load(key); ok && cur == csv {
		return key, nil
	}
	err := h.b.Save(key, csv)
	for tries := 0; err != nil && tries < MaxHistory; tries++ {
		if !h.dropOldest() {
			break
		}
		err = h.b.Save(key, csv)
	}
	if err != nil {
		return "", ErrDataNotKept
	}
	return key, nil
}

// collectData removes the kept tables no entry names any more.
func collectData(b Browser) {
	keys := b.Keys()
	if !slices.ContainsFunc(keys, func(k string) bool { return strings.HasPrefix(k, DataPrefix) }) {
		return // no table kept: nothing to read
	}
	used := map[string]bool{}
	for _, k := range keys {
		if !strings.HasPrefix(k, HistoryPrefix) {
			continue
		}
		if se, ok := loadStored(b, k); ok && se.Data != "" {
			used[se.Data] = true
		}
	}
	for _, k := range keys {
		if strings.HasPrefix(k, DataPrefix) && !used[k] {
			b.Remove(k)
		}
	}
}

// WithData returns an entry's state with its table, read from its own key
// where it is kept there (a table that is gone leaves the state without
// data).
func (h *History) WithData(e Entry) share.State {
	return entryWithData(h.b, e)
}

func entryWithData(b Browser, e Entry) share.State {
	st := e.State
	if st.Data == "" && e.digest != "" {
		if csv, ok := b.Load(DataPrefix + e.digest); ok {
			st.Data, st.DataLeft = csv, ""
		}
	}
	return st
}
