package wire

import (
	"errors"
	"math"
	"testing"
)

type inner struct {
	F  float64
	P  *float64
	N  *int
	S  []float64
	PS [][2]float64
}

type sample struct {
	Name   string
	Ints   []int
	Small  int8
	U      uint16
	F32    float32
	Flag   bool
	Arr    [3]float64
	Nested []inner
	ByKey  map[int][3][][2]float64
	Str    map[string]float64
	Bytes  []byte
	Ptr    *inner
}

func TestRoundTripKeepsEveryBit(t *testing.T) {
	zero, negZero := 0.0, math.Copysign(0, -1)
	// A NaN with a payload other than Go's math.NaN(): IEEE 754 lets a
	// NaN carry any non-zero fraction, and the encoding must keep it.
	payloadNaN := math.Float64frombits(0x7ff8_0000_0000_0abc)
	in := sample{
		Name:  "x\x00y é",
		Ints:  []int{},
		Small: -128,
		U:     65535,
		F32:   float32(math.Inf(-1)),
		Flag:  true,
		Arr:   [3]float64{math.NaN(), math.Inf(1), negZero},
		Nested: []inner{
			{F: payloadNaN, P: &zero, S: []float64{}, PS: [][2]float64{{math.Inf(-1), 1e-310}}},
			{F: -1.5, P: &negZero, N: new(int), S: nil, PS: nil},
		},
		ByKey: map[int][3][][2]float64{2: {{{1, 2}}, nil, {}}},
		Str:   map[string]float64{},
		Bytes: []byte{0, 1, 255},
		Ptr:   nil,
	}
	b, err := Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	var out sample
	if err := Unmarshal(b, &out); err != nil {
		t.Fatal(err)
	}
	if d := Diff(in, out); d != "" {
		t.Errorf("round trip differs at %s", d)
	}
	// Diff itself must see what DeepEqual misses (IEEE 754: -0 == 0, and
	// NaN != NaN).
	if Diff(zero, negZero) == "" {
		t.Error("Diff finds 0 and -0 alike")
	}
	if Diff(math.NaN(), payloadNaN) == "" {
		t.Error("Diff finds two NaNs of different bits alike")
	}
	if Diff(math.NaN(), math.NaN()) != "" {
		t.Error("Diff finds a NaN unlike itself")
	}
	if Diff([]float64{}, []float64(nil)) == "" {
		t.Error("Diff finds an empty slice and nil alike")
	}
	// Every cut-short message is an error, not a panic.
	for n := 0; n < len(b); n++ {
		var cut sample
		if err := Unmarshal(b[:n], &cut); err == nil {
			t.Fatalf("a message cut to %d of %d bytes decoded", n, len(b))
		}
	}
	// Another version is refused.
	b[0]++
	if err := Unmarshal(b, &out); !errors.Is(err, ErrVersion) {
		t.Errorf("another version: %v", err)
	}
}

func TestRefusesWhatItCannotRebuild(t *testing.T) {
	type hidden struct {
		A int
		b int
	}
	if _, err := Marshal(hidden{}); err == nil {
		t.Error("a struct with an unexported field was encoded")
	}
	if _, err := Marshal(struct{ F func() }{}); err == nil {
		t.Error("a function was encoded")
	}
	if _, err := Marshal(struct{ I any }{I: 1}); err == nil {
		t.Error("an interface was encoded")
	}
	// A length far beyond the message's bytes is refused before any
	// allocation.
	if err := Unmarshal([]byte{version, 0xff, 0xff, 0xff, 0xff, 0x0f}, new([]float64)); err == nil {
		t.Error("a huge length decoded")
	}
}
