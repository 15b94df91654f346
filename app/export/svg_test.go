package export

import (
	"encoding/base64"
	"encoding/xml"
	"errors"
	"io"
	"strings"
	"testing"

	"bellcheck/app/figure"
)

// xmlElements parses s strictly with encoding/xml and returns the names of
// its elements in document order, with each element's attributes.
func xmlElements(t *testing.T, s string) ([]string, []map[string]string) {
	t.Helper()
	dec := xml.NewDecoder(strings.NewReader(s))
	dec.Strict = true
	var names []string
	var attrs []map[string]string
	depth := 0
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG does not parse as XML: %v\n%.300s", err, s)
		}
		switch e := tok.(type) {
		case xml.StartElement:
			depth++
			names = append(names, e.Name.Local)
			m := map[string]string{}
			for _, a := range e.Attr {
				k := a.Name.Local
				if a.Name.Space != "" {
					k = a.Name.Space + ":" + k
				}
				m[k] = a.Value
			}
			attrs = append(attrs, m)
		case xml.EndElement:
			depth--
		}
	}
	if depth != 0 {
		t.Fatalf("unclosed elements in SVG")
	}
	return names, attrs
}

// A tiny valid PNG (1x1 pixel), base64.
const onePixelPNG = "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mP8z8BQDwAEhQGAhKmMIQAAAABJRU5ErkJggg=="

func TestStandaloneSVGParsesWithTheHeatMapInside(t *testing.T) {
	r := analysed(t)
	if r.Plots == nil || len(r.Plots.Pairs) == 0 || len(r.Plots.Marginals) < 2 {
		t.Fatal("the fixture has no pair to draw")
	}
	if _, err := base64.StdEncoding.DecodeString(onePixelPNG); err != nil {
		t.Fatal(err)
	}
	o := figure.Options{ID: "bc-t", XLabel: hostile, YLabel: "s"}
	pair := figure.Pair(&r.Plots.Pairs[0], &r.Plots.Marginals[0], &r.Plots.Marginals[1], o)
	marg := figure.Marginal(&r.Plots.Marginals[0], o)
	if pair == nil || marg == nil || pair.Heat == nil {
		t.Fatal("no figure")
	}
	h := pair.Heat.Box
	out, err := StandaloneSVG(pair.SVG, pair.W, pair.H, &Raster{DataURL: "data:image/png;base64," + onePixelPNG, X: h.X0, Y: h.Y0, Width: h.W(), Height: h.H()})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(out, `<?xml version="1.0" encoding="UTF-8"?>`) {
		t.Error("no XML declaration")
	}
	names, attrs := xmlElements(t, out)
	if names[0] != "svg" || attrs[0]["width"] != "480" || attrs[0]["height"] != "480" || attrs[0]["viewBox"] == "" {
		t.Errorf("root %s %v, want svg with width, height and viewBox", names[0], attrs[0])
	}
	if names[1] != "rect" || attrs[1]["fill"] != "#ffffff" {
		t.Errorf("first child %s %v, want the white background", names[1], attrs[1])
	}
	img := -1
	for i, n := range names {
		if n == "image" {
			img = i
		}
		if n == "script" || n == "foreignObject" {
			t.Errorf("element %s in the SVG (from the hostile label)", n)
		}
	}
	if img != 2 {
		t.Fatalf("the heat map image is element %d, want 2 (under the drawing)", img)
	}
	// The xlink namespace resolves, so readers find the image.
	if attrs[img]["http://www.w3.org/1999/xlink:href"] != "data:image/png;base64,"+onePixelPNG {
		t.Errorf("image attributes %v", attrs[img])
	}
	// The hostile label is text, not markup.
	if !strings.Contains(out, "&lt;script&gt;") {
		t.Error("the label's markup is not escaped")
	}

	// A 1-D figure has no raster.
	out1, err := StandaloneSVG(marg.SVG, marg.W, marg.H, nil)
	if err != nil {
		t.Fatal(err)
	}
	names1, _ := xmlElements(t, out1)
	for _, n := range names1 {
		if n == "image" {
			t.Error("image in a figure without a raster")
		}
	}
}

func TestStandaloneSVGRefusesWhatIsNotAnImageOrSVG(t *testing.T) {
	svg := `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 10 10"><path d="M0 0"/></svg>`
	bad := []string{
		`data:image/png;base64,AAAA"/><script>alert(1)</script><x a="`,
		"javascript:alert(1)",
		"https://example.org/x.png",
		"data:image/svg+xml;base64,PHN2Zz4=",
		"data:image/png;base64,",
	}
	for _, u := range bad {
		if _, err := StandaloneSVG(svg, 10, 10, &Raster{DataURL: u, Width: 1, Height: 1}); err == nil {
			t.Errorf("accepted image URL %q", u)
		}
	}
	for _, s := range []string{"", "<div>no</div>", "text <svg viewBox='0 0 1 1'></svg>"} {
		if _, err := StandaloneSVG(s, 1, 1, nil); !errors.Is(err, ErrNotSVG) {
			t.Errorf("StandaloneSVG(%q) error %v, want ErrNotSVG", s, err)
		}
	}
	// A self-closing root gets a body.
	out, err := StandaloneSVG(`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 4 4"/>`, 4, 4, nil)
	if err != nil {
		t.Fatal(err)
	}
	names, _ := xmlElements(t, out)
	if strings.Join(names, ",") != "svg,rect" {
		t.Errorf("elements %v", names)
	}
}
