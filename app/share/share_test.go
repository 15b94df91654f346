package share

import (
	"bytes"
	"compress/flate"
	"encoding/base64"
	"encoding/json"
	"errors"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"bellcheck/engine"
)

func ptr(v float64) *float64 { return &v }

func TestRoundTrip(t *testing.T) {
	cases := []State{
		{Model: "-x^2/2"},
		{Model: "# comment\nparam s in [0, inf]\nld_gamma(s, 2, 1)",
			Params: []engine.ParamOptions{{Scale: engine.Log, Points: 801}}},
		{Model: "a = [1, 2, 3]\nsum(-(a - m)^2)/2",
			Params: []engine.ParamOptions{{Lo: ptr(-3.5), Hi: ptr(7.25)}},
			View:   View{LogScale: true, Embed: true, ReadOnly: true, EditorCollapsed: true}},
		{Model: "ünïcödé = 1 # ∑ λ\n-x^2"},
		{Model: "<script>alert(1)</script>\n\"'&"},
		{Model: strings.Repeat("-x^2/2 + 0.001*x\n", 3000)},
		{Model: "param m\nsum(ld_normal(y, m, 1))", Data: "y\n1.5\n-2\n3e-07\n"},
		{Model: "param m\nsum(ld_normal(y, m, 1))", DataLeft: "0123456789abcdef01234567"},
	}
	for i, want := range cases {
		frag, err := Encode(want)
		if err != nil {
			t.Fatalf("case %d: Encode: %v", i, err)
		}
		for _, f := range []string{frag, "#" + frag} {
			got, err := Decode(f)
			if err != nil {
				t.Fatalf("case %d: Decode: %v", i, err)
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("case %d: round trip gave %+v, want %+v", i, got, want)
			}
		}
	}
}

func TestLinksAreURLSafe(t *testing.T) {
	frag, err := Encode(State{Model: "<>&?#/ %+=" + strings.Repeat("x", 100)})
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range frag {
		ok := r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_.", r)
		if !ok {
			t.Fatalf("fragment %q holds %q, which is not URL-safe", frag, r)
		}
	}
}

// deflateB64 builds a payload by hand, for hostile inputs Encode would not make.
func deflateB64(t *testing.T, raw []byte) string {
	t.Helper()
	var buf bytes.Buffer
	w, _ := flate.NewWriter(&buf, flate.BestCompression)
	w.Write(raw)
	w.Close()
	return base64.RawURLEncoding.EncodeToString(buf.Bytes())
}

func TestHostileFragments(t *testing.T) {
	valid, _ := Encode(State{Model: "-x^2"})
	cases := []struct {
		name     string
		fragment string
		want     error
	}{
		{"empty", "", ErrEmpty},
		{"just hash", "#", ErrEmpty},
		{"foreign fragment", "#section-2", ErrNotOurs},
		{"no version", "#.abc", ErrNotOurs},
		{"version zero", "#b0." + valid[3:], ErrNotOurs},
		{"future version", "#b3." + valid[3:], ErrFutureVersion},
		{"huge version", "#b99999999999999999999." + valid[3:], ErrNotOurs},
		{"invalid base64", "#b1.!!!!", ErrBadEncoding},
		{"truncated", "#" + valid[:len(valid)-4], ErrBadEncoding},
		{"not deflate", "#b1." + base64.RawURLEncoding.EncodeToString([]byte("plain text here")), ErrBadEncoding},
		{"ten megabytes", "#b1." + strings.Repeat("A", 10<<20), ErrTooLong},
		{"inflates too far", "#b1." + deflateB64(t, bytes.Repeat([]byte(" "), 4<<20)), ErrTooLong},
		{"not JSON", "#b1." + deflateB64(t, []byte("<script>alert(1)</script>")), ErrBadContent},
		{"unknown field", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","eval":"alert(1)"}`)), ErrBadContent},
		{"model too long", "#b1." + deflateB64(t, []byte(`{"m":"`+strings.Repeat("x", 70000)+`"}`)), ErrBadContent},
		{"bad scale", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","p":[{"scale":"cube"}]}`)), ErrBadContent},
		{"negative points", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","p":[{"points":-5}]}`)), ErrBadContent},
		{"too many points", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","p":[{"points":100000000}]}`)), ErrBadContent},
		{"bounds reversed", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","p":[{"lo":3,"hi":1}]}`)), ErrBadContent},
		{"five params", "#b1." + deflateB64(t, []byte(`{"m":"-x^2","p":[{},{},{},{},{}]}`)), ErrBadContent},
		{"trailing data", "#b1." + deflateB64(t, []byte(`{"m":"-x^2"}{"m":"y"}`)), ErrBadContent},
		{"wrong type", "#b1." + deflateB64(t, []byte(`{"m":42}`)), ErrBadContent},
	}
	for _, c := range cases {
		_, err := Decode(c.fragment)
		if !errors.Is(err, c.want) {
			t.Errorf("%s: error %v, want %v", c.name, err, c.want)
		}
	}
}

// TestScriptPayloadStaysText: the decoder returns a hostile model text as it
// was written, byte for byte; the page shows it only as text.
func TestScriptPayloadStaysText(t *testing.T) {
	payload := `"><img src=x onerror=alert(1)><script>alert(document.cookie)</script>`
	frag, err := Encode(State{Model: payload})
	if err != nil {
		t.Fatal(err)
	}
	got, err := Decode(frag)
	if err != nil || got.Model != payload {
		t.Fatalf("Decode = %q, %v; want the payload unchanged", got.Model, err)
	}
}

func FuzzDecode(f *testing.F) {
	for _, s := range []State{{Model: "-x^2/2"}, {Model: "param s in [0, inf]\nld_gamma(s,2,1)", Params: []engine.ParamOptions{{Scale: engine.Log}}}} {
		frag, _ := Encode(s)
		f.Add(frag)
	}
	f.Add("#b1.")
	f.Add("b9.zzz")
	f.Fuzz(func(t *testing.T, fragment string) {
		s, err := Decode(fragment)
		if err != nil {
			return
		}
		// Whatever decodes must encode and decode to the same state.
		again, err := Encode(s)
		if err != nil {
			t.Fatalf("Encode of a decoded state: %v", err)
		}
		back, err := Decode(again)
		if err != nil || !reflect.DeepEqual(back, s) {
			t.Fatalf("re-decode gave %+v, %v; want %+v", back, err, s)
		}
	})
}

// A link carries attached data up to MaxData bytes of CSV, and the largest
// data beside the largest model still fits in a fragment: digits chosen at
// random compress worst of all (a linear congruential generator, Knuth's
// MMIX constants, from memory).
func TestDataInLinks(t *testing.T) {
	var b strings.Builder
	b.WriteString("y\n")
	x := uint64(1)
	for b.Len() < MaxData-24 {
		x = x*6364136223846793005 + 1442695040888963407
		b.WriteString(strconv.FormatUint(x>>11, 10))
		b.WriteByte('\n')
	}
	st := State{Model: strings.Repeat("-x^2/2 + 0.001*x\n", 3800), Data: b.String()}
	frag, err := Encode(st)
	if err != nil {
		t.Fatalf("Encode of %d bytes of data: %v", len(st.Data), err)
	}
	got, err := Decode(frag)
	if err != nil || got.Data != st.Data {
		t.Fatalf("Decode: %v (data equal: %v)", err, got.Data == st.Data)
	}
	st.Data = strings.Repeat("1\n", MaxData/2+1)
	frag, err = Encode(st)
	if err != nil {
		t.Fatalf("Encode: %v", err)
	}
	if _, err := Decode(frag); !errors.Is(err, ErrBadContent) {
		t.Errorf("Decode of a link with %d bytes of data: %v, want ErrBadContent", len(st.Data), err)
	}
}

// A link keeps the sliders' values of the live constants; a link made
// before they were kept (this fragment was written by the earlier format's
// encoder, with no constants) still opens, with none.
func TestConstantsInLinks(t *testing.T) {
	want := State{Model: "#@ vary k=0.5:3\nk = 1.5\nparam a\n-k*a^2/2", Constants: map[string]float64{"k": 2.25, "tau_2": -1e-9}}
	frag, err := Encode(want)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Decode(frag)
	if err != nil || !reflect.DeepEqual(got, want) {
		t.Fatalf("round trip: %+v, %v", got, err)
	}
	const old = "b1.BMBRCgIhEAbgqwx_b7Ftq-HLgNA9smAeIsIcxUwI8e77DSQwDlfqUv8U_bY6vgSN5MmsLmiRKokk6Cke5WHPFgsK-DZQ8lvbF2w3M-8LOnjgk1_gVn_POfcAAAD__w"
	st, err := Decode(old)
	if err != nil {
		t.Fatalf("an earlier link no longer opens: %v", err)
	}
	if st.Model != "#@ vary k=0.5:3\nk = 1.5\nparam a\n-k*a^2/2" || st.Constants != nil || !st.View.LogScale || len(st.Params) != 1 || st.Params[0].Points != 201 {
		t.Errorf("the earlier link decodes to %+v", st)
	}
	for _, bad := range []string{
		`{"m":"x","c":{"2k":1}}`,           // not a name
		`{"m":"x","c":{"":1}}`,             // empty name
		`{"m":"x","c":{"k":1e999}}`,        // not a finite number
		`{"m":"x","c":{"k":"1"}}`,          // not a number
		`{"m":"x","c":[["k",1]]}`,          // not an object
		`{"m":"x","dl":"ABC"}`,             // not lower-case hex
		`{"m":"x","dl":"../x"}`,            // not hex
		`{"m":"x","d":"y\n1\n","dl":"ab"}`, // carries and leaves out its data
	} {
		if _, err := Decode("b1." + deflateB64(t, []byte(bad))); !errors.Is(err, ErrBadContent) {
			t.Errorf("%s: %v, want ErrBadContent", bad, err)
		}
	}
	many := map[string]float64{}
	for i := range MaxConstants + 1 {
		many["c"+strconv.Itoa(i)] = 1
	}
	raw, _ := json.Marshal(State{Model: "x", Constants: many})
	if _, err := Decode("b1." + deflateB64(t, raw)); !errors.Is(err, ErrBadContent) {
		t.Errorf("%d constants: %v, want ErrBadContent", len(many), err)
	}
}

// Encode's recycled compressors (Reset) write the bytes a new compressor
// writes: a link made after many others is the link made first. The
// expected fragment is built here with a new writer of compress/flate.
func TestRecycledCompressorWritesTheSameLink(t *testing.T) {
	states := []State{
		{Model: strings.Repeat("-x^2/2 + 0.001*x\n", 3000)}, // a long text first: its tables stay in the writer
		{Model: "-x^2/2"},
		{Model: "param m\nsum(ld_normal(y, m, 1))", Data: "y\n1.5\n-2\n3e-07\n"},
	}
	fresh := func(s State) string {
		raw, err := json.Marshal(s)
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		w, err := flate.NewWriter(&buf, flate.BestCompression)
		if err != nil {
			t.Fatal(err)
		}
		w.Write(raw)
		w.Close()
		return "b" + strconv.Itoa(Version) + "." + base64.RawURLEncoding.EncodeToString(buf.Bytes())
	}
	for round := range 3 {
		for i, s := range states {
			got, err := Encode(s)
			if err != nil {
				t.Fatal(err)
			}
			if want := fresh(s); got != want {
				t.Errorf("round %d, state %d: the link differs from a new compressor's (%d and %d characters)", round, i, len(got), len(want))
			}
		}
	}
}
