package export

import (
	"encoding/xml"
	"io"
	"strings"
	"testing"
)

// A publication figure is well-formed XML (checked with Go's encoding/xml,
// an independent reader) holding the figure, a legend line per entry and
// the caption, with markup in a name escaped.
func TestPublicationSVG(t *testing.T) {
	fig := `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 480 250"><text x="240" y="245">x</text></svg>`
	legend := []LegendEntry{{Label: "exact", Colour: "#1b2127", Width: 2.2}, {Label: "a<b&c", Colour: "#c0143c", Dash: "16 4", Width: 2.3}}
	caption := strings.Repeat("Marginal density of x: exact (shaded) and each fit. ", 4)
	doc, w, h, err := PublicationSVG(fig, 480, 250, nil, legend, caption)
	if err != nil {
		t.Fatal(err)
	}
	if w != 480+legendWidth || h <= 250 {
		t.Errorf("size %g x %g, want %d wide and taller than the figure", w, h, 480+legendWidth)
	}
	dec := xml.NewDecoder(strings.NewReader(doc))
	var texts []string
	lines := 0
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("not well-formed XML: %v", err)
		}
		switch el := tok.(type) {
		case xml.StartElement:
			if el.Name.Local == "line" {
				lines++
			}
		case xml.CharData:
			if s := strings.TrimSpace(string(el)); s != "" {
				texts = append(texts, s)
			}
		}
	}
	all := strings.Join(texts, "|")
	if lines != 2 || !strings.Contains(all, "a<b&c") || !strings.Contains(all, "exact") {
		t.Errorf("%d legend lines, texts %q", lines, all)
	}
	if strings.Count(all, "Marginal density") != 4 || !strings.Contains(all, "|") {
		t.Errorf("caption not all there or not wrapped: %q", all)
	}
}
