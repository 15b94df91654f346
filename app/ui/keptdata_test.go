package ui

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"bellcheck/app/share"
)

// srcData uses a data column y.
const srcData = "param m\nsum(ld_normal(y, m, 1))\n"

// bigCSV is a column y of n numbers as CSV, with digits significant digits each.
func bigCSV(n, digits int) string {
	var b strings.Builder
	b.WriteString("y\n")
	for i := range n {
		b.WriteString(strconv.FormatFloat(math.Sqrt(float64(i)+0.5), 'g', digits, 64))
		b.WriteByte('\n')
	}
	return b.String()
}

// dataKeys lists the kept tables in b.
func dataKeys(b *memBrowser) []string {
	var out []string
	for _, k := range b.Keys() {
		if strings.HasPrefix(k, DataPrefix) {
			out = append(out, k)
		}
	}
	return out
}

// attachBig types srcData, attaches a table of n rows and returns the page.
func attachBig(t *testing.T, b *memBrowser, n, digits int) *harness {
	t.Helper()
	h, e := openWith(t, b)
	h.page.Input(h.ctx, srcData)
	e.ConsumeAll()
	h.page.AttachData(h.ctx, "big.csv", bigCSV(n, digits), nil)
	e.ConsumeAll()
	if h.page.s.Data == nil || len(h.page.s.Data.Columns[0].Values) != n {
		t.Fatalf("the table of %d rows is not attached: %q", n, h.page.data.problem)
	}
	return h
}

// A table too large for a link (over 64 KiB) is kept in the saved work:
// the link names it, a reload (with the link or without) brings it back,
// another browser says it is missing, and forgetting the model frees it.
func TestBigDataKeptInSavedWork(t *testing.T) {
	b := newMemBrowser("")
	h := attachBig(t, b, 12000, 8) // about 120 KB of CSV
	csv := h.page.data.csv
	if len(csv) <= share.MaxData || len(csv) > MaxKeptData {
		t.Fatalf("the test needs a table between the link's and the storage's bounds: %d bytes", len(csv))
	}
	st, err := share.Decode(b.frag)
	if err != nil {
		t.Fatal(err)
	}
	if st.Data != "" || st.DataLeft != digestOf(csv) {
		t.Fatalf("the link carries %d bytes of data and names %q, want none and %q", len(st.Data), st.DataLeft, digestOf(csv))
	}
	if keys := dataKeys(b); len(keys) != 1 || b.items[keys[0]] != csv {
		t.Fatalf("kept tables %v, want the attached one", keys)
	}
	if v := h.page.dataView(); v.InLink || !strings.Contains(v.Kept, "keeps it") {
		t.Errorf("the data card says %q (in link %v)", v.Kept, v.InLink)
	}

	for _, c := range []struct{ name, frag string }{{"reload with the link", b.frag}, {"reload of the bare address", ""}} {
		b.frag = c.frag
		h2, _ := openWith(t, b)
		if h2.page.s.Data == nil || h2.page.data.csv != csv {
			t.Errorf("%s: the table is not back (%q)", c.name, h2.page.data.problem)
		}
		if h2.page.notice.Text != "" {
			t.Errorf("%s: notice %q", c.name, h2.page.notice.Text)
		}
		b.frag = st2frag(t, st)
	}

	// Another browser: the link opens without the table and says so.
	h3, _ := openWith(t, newMemBrowser(st2frag(t, st)))
	if h3.page.s.Data != nil || !strings.Contains(h3.page.data.problem, "attach the file again") {
		t.Errorf("in another browser: data %v, problem %q", h3.page.s.Data != nil, h3.page.data.problem)
	}

	// Forgetting the model frees its table.
	for _, e := range dedupe(readEntries(b)) {
		h.page.hist().Remove(e.Key)
	}
	if keys := dataKeys(b); len(keys) != 0 {
		t.Errorf("after forgetting every model the tables %v stay", keys)
	}
}

func st2frag(t *testing.T, st share.State) string {
	t.Helper()
	f, err := share.Encode(st)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// A table over MaxKeptData is not kept, and a full storage keeps the model
// without its table: the data card says which.
func TestBigDataBeyondStorage(t *testing.T) {
	b := newMemBrowser("")
	h := attachBig(t, b, 80000, 17) // about 1.4 MB of CSV
	if n := len(h.page.data.csv); n <= MaxKeptData {
		t.Fatalf("the test needs a table over %d bytes, got %d", MaxKeptData, n)
	}
	if keys := dataKeys(b); len(keys) != 0 {
		t.Errorf("a table over the bound is kept: %v", keys)
	}
	if got := kept(b); len(got) != 1 || got[0] != srcData {
		t.Errorf("the model is not kept without its table: %q", got)
	}
	if v := h.page.dataView(); !strings.Contains(v.Kept, "more than the 1024 KiB") {
		t.Errorf("the data card says %q", v.Kept)
	}

	full := newMemBrowser("")
	full.quota = 20000 // room for entries, not for a table of 110 KB
	h = attachBig(t, full, 12000, 8)
	if keys := dataKeys(full); len(keys) != 0 {
		t.Errorf("a full storage holds the tables %v", keys)
	}
	if got := kept(full); len(got) != 1 || got[0] != srcData {
		t.Errorf("with a full storage the model is not kept: %q", got)
	}
	if v := h.page.dataView(); !strings.Contains(v.Kept, "storage is full") {
		t.Errorf("with a full storage the data card says %q", v.Kept)
	}
}
