package ui

import (
	"context"
	"strings"
	"testing"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/app/examples"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// TestGalleryResultsRenderCleanly runs the real engine on each example and
// renders its table, figures and page: no panic, and no raw NaN or Inf
// reaches the page (a quantity that does not exist is shown as absent).
func TestGalleryResultsRenderCleanly(t *testing.T) {
	for _, ex := range examples.All {
		m, err := model.Parse(ex.Source)
		if err != nil {
			t.Fatal(err)
		}
		if testing.Short() && len(m.Params) > 3 {
			continue
		}
		var s Session
		for name, o := range ex.Params {
			s.SetParam(name, o)
		}
		s.Edit(ex.Source)
		run, _ := s.Begin(nowForTest())
		res, err := engine.Analyse(context.Background(), run.Model, run.Options, nil)
		if err != nil {
			t.Errorf("%s: %v", ex.ID, err)
			continue
		}
		s.Finish(run, res, nil, 0, 0)
		for _, sec := range Table(res, run.Model) {
			for _, row := range sec.Rows {
				for _, c := range row.Cells {
					for _, txt := range []string{c.Text, c.Sub} {
						if strings.Contains(txt, "NaN") || strings.Contains(txt, "Inf") {
							t.Errorf("%s: %s %s shows %q", ex.ID, sec.Title, row.Label, txt)
						}
					}
				}
			}
		}
		fs := BuildFigures(res, View{})
		if fs == nil {
			t.Errorf("%s: no figures", ex.ID)
			continue
		}
		p := NewPage()
		p.s = s
		p.figs = fs
		p.sections = Table(res, run.Model)
		html := app.HTMLString(p.Render())
		// The results, not the language reference in the footer (which
		// documents NaN).
		html = html[strings.Index(html, "<main"):strings.Index(html, "</main>")]
		for _, bad := range []string{"NaN", "+Inf", "-Inf"} {
			if strings.Contains(html, bad) {
				t.Errorf("%s: the page shows %q", ex.ID, bad)
			}
		}
	}
}
