package ui

import (
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/maxence-charriere/go-app/v10/pkg/app"

	"bellcheck/engine"
)

// RunState is where the analysis stands, as the run status shows it.
type RunState struct {
	// Running reports an analysis in progress; ShowProgress that it has
	// run long enough for a progress bar, at Fraction (0 to 1) in Stage.
	Running, ShowProgress bool
	Fraction              float64
	Stage                 string
	// Pending reports a check due after typing, Invalid a text with
	// errors, Failed a failed analysis.
	Pending, Invalid, Failed bool
	// HasResult reports a result shown, analysed in Elapsed.
	HasResult bool
	Elapsed   time.Duration
	// Stopped reports that the user stopped the last analysis after
	// StoppedAfter; no analysis has started since.
	Stopped      bool
	StoppedAfter time.Duration
}

// StopHost is what the status line's buttons report to: the page
// implements it.
type StopHost interface {
	// StopAnalysis cancels the running analysis.
	StopAnalysis(ctx app.Context)
	// RunAgain starts the analysis of the current model again.
	RunAgain(ctx app.Context)
}

// IDs of the status line's buttons.
const (
	StopID     = "bc-stop"
	RunAgainID = "bc-run-again"
)

// RunStatus is the one-line status of the analysis in the header. With a
// Host, an analysis that has run long enough for its progress bar has a
// Stop button beside it, and a stopped one a button to run it again.
type RunStatus struct {
	app.Compo
	Host StopHost
	Run  RunState
}

// Render draws the status line.
func (r *RunStatus) Render() app.UI {
	s := r.Run
	st := app.Div().Class("run-status").Attr("role", "status")
	switch {
	case s.Running && s.ShowProgress:
		frac := max(0, min(1, s.Fraction))
		stage := s.Stage
		if stage == "" {
			stage = "starting"
		}
		return st.Body(
			app.Label().For("bc-progress").Text("analysing: "+stageName(stage)),
			app.Progress().ID("bc-progress").Max(1).Value(strconv.FormatFloat(frac, 'f', 3, 64)),
			app.If(r.Host != nil, func() app.UI {
				return app.Button().Type("button").ID(StopID).Class("tool-btn stop-btn").
					Title("Stop this analysis; the model and settings stay as they are").Text("Stop").
					OnClick(func(ctx app.Context, e app.Event) { r.Host.StopAnalysis(ctx) })
			}),
		)
	case s.Running:
		return st.Body(app.Span().Class("muted").Text("analysing…"))
	case s.Pending:
		return st.Body(app.Span().Class("muted").Text("editing…"))
	case s.Invalid:
		return st.Body(app.Span().Class("warn-text").Text("the model has errors: results shown are for the last valid model"))
	case s.Stopped:
		return st.Body(
			app.Span().Class("warn-text").Text("stopped after "+fmtSeconds(s.StoppedAfter)),
			app.If(r.Host != nil, func() app.UI {
				return app.Button().Type("button").ID(RunAgainID).Class("tool-btn").Text("Run again").
					OnClick(func(ctx app.Context, e app.Event) { r.Host.RunAgain(ctx) })
			}),
		)
	case s.Failed:
		return st.Body(app.Span().Class("warn-text").Text("the analysis failed"))
	case s.HasResult:
		return st.Body(app.Span().Class("muted").Text("analysed in " + fmtMillis(s.Elapsed)))
	}
	return st
}

// stageName names an analysis stage for the status line; a fit's stage is
// named by its method (engine.MethodOf).
func stageName(s string) string {
	if m, ok := engine.MethodOf(s); ok {
		return m.Label() + " fit"
	}
	switch s {
	case "grid":
		return "exact density on the grid"
	case "modes":
		return "searching modes"
	case "exact":
		return "exact posterior by quadrature"
	case "compare":
		return "comparing"
	case "plots":
		return "plots"
	}
	return strings.ReplaceAll(s, "_", " ")
}

// fmtSeconds writes a duration in seconds with one decimal.
func fmtSeconds(d time.Duration) string {
	return strconv.FormatFloat(d.Seconds(), 'f', 1, 64) + " s"
}

func fmtMillis(d time.Duration) string {
	ms := float64(d) / float64(time.Millisecond)
	if ms < 10 {
		return strconv.FormatFloat(ms, 'f', 1, 64) + " ms"
	}
	return strconv.FormatFloat(math.Round(ms), 'f', 0, 64) + " ms"
}

// NoticeHost is what the notice's buttons report to: the page implements
// it.
type NoticeHost interface {
	// TakeOffer loads the state the notice offers.
	TakeOffer(ctx app.Context)
	// ForgetEarlier deletes the work kept in the browser.
	ForgetEarlier(ctx app.Context)
	// DismissNotice hides the notice.
	DismissNotice(ctx app.Context)
}

// NoticeBar is the plain message above the results, with its buttons.
type NoticeBar struct {
	app.Compo
	Host   NoticeHost
	Notice Notice
}

// Render draws the notice, or its empty slot.
func (b *NoticeBar) Render() app.UI {
	n := b.Notice
	if n.Text == "" {
		return app.Div().Class("notice-slot")
	}
	cls := "notice"
	if n.Warn {
		cls += " notice-warn"
	}
	return app.Div().Class("notice-slot").Body(
		app.Div().Class(cls).Attr("role", "status").Body(
			app.Span().Class("notice-text").Text(n.Text),
			app.If(n.Action != "", func() app.UI {
				return app.Button().Type("button").Class("notice-action").Text(n.Action).OnClick(func(ctx app.Context, e app.Event) { b.Host.TakeOffer(ctx) })
			}),
			app.If(n.Forget, func() app.UI {
				return app.Button().Type("button").Class("notice-action").Text("Forget it").OnClick(func(ctx app.Context, e app.Event) { b.Host.ForgetEarlier(ctx) })
			}),
			app.Button().Type("button").Class("notice-close").Aria("label", "dismiss this notice").Text("×").
				OnClick(func(ctx app.Context, e app.Event) { b.Host.DismissNotice(ctx) }),
		),
	)
}
