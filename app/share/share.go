package share

import (
	"bytes"
	"compress/flate"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"sync"
	"unicode/utf8"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// Version is the link format this package writes. Format 2 differs from
// format 1 in one meaning: a parameter whose scale the link does not name
// is fitted on its default scale (engine.ScaleOf: log or logit for a
// bounded parameter), where format 1 fitted it as it is (State.AsIsDefault).
const Version = 2

// Limits on what a link may hold.
const (
	// MaxFragment is the longest fragment accepted, in bytes.
	MaxFragment = 256 << 10
	// maxJSON bounds the inflated JSON, so a small link cannot expand
	// into a large allocation.
	maxJSON = 2*model.MaxSource + 2*MaxData + 64<<10
	// MinEmbedHeight and MaxEmbedHeight bound View.MaxHeight.
	MinEmbedHeight = 150
	MaxEmbedHeight = 4000
	// MaxData is the most attached data a link carries: its CSV text
	// (data.Table.CSV), in bytes. Larger data stays with the page only.
	MaxData = 64 << 10
	// MaxPoints bounds a parameter's grid points in a link.
	MaxPoints = 4001
	// MaxConstants bounds the live constants' values in a link.
	MaxConstants = 64
)

// Errors returned by Decode.
var (
	ErrEmpty         = errors.New("the link holds no calculator state")
	ErrNotOurs       = errors.New("the link's fragment is not a bellcheck state")
	ErrFutureVersion = errors.New("the link was made by a newer version of bellcheck")
	ErrTooLong       = errors.New("the link is too long")
	ErrBadEncoding   = errors.New("the link is damaged (invalid encoding)")
	ErrBadContent    = errors.New("the link is damaged (invalid content)")
)

// View holds the page's view choices.
type View struct {
	// LogScale shows 1-D densities on a log scale.
	LogScale bool `json:"log,omitempty"`
	// Embed selects the compact view for an iframe.
	Embed bool `json:"embed,omitempty"`
	// ReadOnly hides the editor's input (embed view only).
	ReadOnly bool `json:"ro,omitempty"`
	// EditorCollapsed starts the embed view with the editor folded away.
	EditorCollapsed bool `json:"fold,omitempty"`
	// PlotOnly shows the plots alone (embed view only).
	PlotOnly bool `json:"plot,omitempty"`
	// MaxHeight caps the embed view's height in CSS pixels (0 for no cap;
	// otherwise MinEmbedHeight to MaxEmbedHeight); it scrolls within.
	MaxHeight int `json:"maxh,omitempty"`
}

// State is everything a link restores.
type State struct {
	Model  string                `json:"m"`
	Params []engine.ParamOptions `json:"p,omitempty"`
	View   View                  `json:"v,omitempty"`
	// Data is the attached data table as CSV ("" for none), at most
	// MaxData bytes.
	Data string `json:"d,omitempty"`
	// DataLeft, when the attached table was too large for the link, is
	// its digest (lower-case hex, as the page's saved work names it): the
	// browser that made the link finds the table in its saved work; any
	// other says that it is missing.
	DataLeft string `json:"dl,omitempty"`
	// Constants are the values the sliders set for the model's live
	// constants (those a #@ vary line marks), by name; nil where every
	// constant has the value the text gives. Links made before it existed
	// have none and still open.
	Constants map[string]float64 `json:"c,omitempty"`
	// AsIsDefault, set by Decode on a link of format 1, says that a
	// parameter whose scale neither the link nor the model's own lines
	// name was fitted as it is: the page names the identity scale for
	// each such parameter, so the link opens as it was made.
	AsIsDefault bool `json:"-"`
}

// writers recycles Encode's compressors: a new one allocates some 800 KB
// of tables, a few milliseconds of the page's thread in WebAssembly at
// every save of the state. Reset gives the same output as a new one.
var writers sync.Pool // of *flate.Writer

// Encode returns the fragment (without '#') for s.
func Encode(s State) (string, error) {
	raw, err := json.Marshal(s)
	if err != nil {
		return "", err
	}
	var buf bytes.Buffer
	w, _ := writers.Get().(*flate.Writer)
	if w == nil {
		if w, err = flate.NewWriter(&buf, flate.BestCompression); err != nil {
			return "", err
		}
	} else {
		w.Reset(&buf)
	}
	if _, err := w.Write(raw); err != nil {
		return "", err
	}
	if err := w.Close(); err != nil {
		return "", err
	}
	writers.Put(w)
	frag := "b" + strconv.Itoa(Version) + "." + base64.RawURLEncoding.EncodeToString(buf.Bytes())
	if len(frag) > MaxFragment {
		return "", ErrTooLong
	}
	return frag, nil
}

// Decode parses a fragment (with or without the leading '#') made by Encode.
// It never panics; every failure is one of the package's errors, wrapped
// with detail where that helps.
func Decode(fragment string) (State, error) {
	fragment = strings.TrimPrefix(fragment, "#")
	if fragment == "" {
		return State{}, ErrEmpty
	}
	if len(fragment) > MaxFragment {
		return State{}, ErrTooLong
	}
	version, payload, ok := strings.Cut(fragment, ".")
	if !ok || len(version) < 2 || version[0] != 'b' {
		return State{}, ErrNotOurs
	}
	n, err := strconv.Atoi(version[1:])
	if err != nil || n < 1 {
		return State{}, ErrNotOurs
	}
	if n > Version {
		return State{}, fmt.Errorf("%w (format %d; this page reads format %d)", ErrFutureVersion, n, Version)
	}
	compressed, err := base64.RawURLEncoding.DecodeString(payload)
	if err != nil {
		return State{}, ErrBadEncoding
	}
	raw, err := io.ReadAll(io.LimitReader(flate.NewReader(bytes.NewReader(compressed)), maxJSON+1))
	if err != nil {
		return State{}, ErrBadEncoding
	}
	if len(raw) > maxJSON {
		return State{}, ErrTooLong
	}
	var s State
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&s); err != nil {
		return State{}, fmt.Errorf("%w: %v", ErrBadContent, err)
	}
	if dec.More() {
		return State{}, fmt.Errorf("%w: trailing data", ErrBadContent)
	}
	s.AsIsDefault = n == 1
	if err := validate(s); err != nil {
		return State{}, fmt.Errorf("%w: %v", ErrBadContent, err)
	}
	return s, nil
}

// validate checks what JSON decoding cannot: sizes, ranges and names.
func validate(s State) error {
	if len(s.Model) > model.MaxSource {
		return fmt.Errorf("model text of %d bytes exceeds %d", len(s.Model), model.MaxSource)
	}
	if !utf8.ValidString(s.Model) {
		return errors.New("model text is not valid UTF-8")
	}
	if h := s.View.MaxHeight; h != 0 && (h < MinEmbedHeight || h > MaxEmbedHeight) {
		return fmt.Errorf("embed height cap %d, want 0 or %d to %d", h, MinEmbedHeight, MaxEmbedHeight)
	}
	if len(s.Data) > MaxData {
		return fmt.Errorf("attached data of %d bytes exceeds %d", len(s.Data), MaxData)
	}
	if len(s.DataLeft) > 64 || strings.Trim(s.DataLeft, "0123456789abcdef") != "" {
		return errors.New("the digest of the data left out is not lower-case hex of at most 64 digits")
	}
	if s.DataLeft != "" && s.Data != "" {
		return errors.New("the link both carries its data and leaves it out")
	}
	if len(s.Constants) > MaxConstants {
		return fmt.Errorf("%d constants' values, at most %d", len(s.Constants), MaxConstants)
	}
	for name, v := range s.Constants {
		if p := model.NameProblem(name); p != "" {
			return fmt.Errorf("constant %q: the name %s", name, p)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("constant %s: the value is not a finite number", name)
		}
	}
	if len(s.Params) > model.MaxParams {
		return fmt.Errorf("%d parameter settings, at most %d", len(s.Params), model.MaxParams)
	}
	for i, p := range s.Params {
		switch p.Scale {
		case "", engine.Identity, engine.Log, engine.Logit:
		default:
			return fmt.Errorf("parameter %d: unknown scale %q", i+1, p.Scale)
		}
		if p.Points < 0 || p.Points > MaxPoints {
			return fmt.Errorf("parameter %d: %d grid points, want 0 to %d", i+1, p.Points, MaxPoints)
		}
		for _, b := range []*float64{p.Lo, p.Hi} {
			if b != nil && (math.IsNaN(*b) || math.IsInf(*b, 0)) {
				return fmt.Errorf("parameter %d: bound is not a finite number", i+1)
			}
		}
		if p.Lo != nil && p.Hi != nil && !(*p.Lo < *p.Hi) {
			return fmt.Errorf("parameter %d: lower bound %g is not below upper bound %g", i+1, *p.Lo, *p.Hi)
		}
	}
	return nil
}
