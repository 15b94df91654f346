package ui

import (
	"context"
	"math"
	"reflect"
	"testing"
	"time"

	"bellcheck/app/examples"
	"bellcheck/app/figure"
	"bellcheck/app/wire"
	"bellcheck/engine"
	"bellcheck/engine/model"
)

// TestWorkerRepliesKeepEveryResult sends the Result of every gallery
// example, analysed natively as the page would, through the worker's reply
// encoding and checks that the page reads back the same Result bit for bit:
// every float by its IEEE 754 bits (so NaN and Inf where the engine put
// them: the JSON form writes them as null and could not), every nil slice
// and pointer nil. It logs the encoding's size and time for each example.
func TestWorkerRepliesKeepEveryResult(t *testing.T) {
	for _, ex := range examples.All {
		var s Session
		s.SetChoices(ex.Params)
		if !s.Edit(ex.Source) {
			t.Fatalf("%s: the example does not check: %v", ex.ID, s.Errors)
		}
		if testing.Short() && len(s.Model.Params) > 3 {
			continue
		}
		run, _ := s.Begin(nowForTest())
		res, err := engine.Analyse(context.Background(), run.Model, run.Options, nil)
		if err != nil {
			t.Errorf("%s: %v", ex.ID, err)
			continue
		}
		nonFinite := countNonFinite(res)
		began := time.Now()
		b, err := frame(run.Gen, workReply{Kind: replyResult, Result: res})
		if err != nil {
			t.Fatalf("%s: encoding: %v", ex.ID, err)
		}
		enc := time.Since(began)
		began = time.Now()
		var r workReply
		gen, err := unframeInto(b, &r)
		if err != nil || gen != run.Gen {
			t.Fatalf("%s: decoding: %v (generation %d, want %d)", ex.ID, err, gen, run.Gen)
		}
		dec := time.Since(began)
		if d := wire.Diff(res, r.Result); d != "" {
			t.Errorf("%s: the Result read back differs at Result%s", ex.ID, d)
		}
		t.Logf("%s: %d bytes, %d non-finite numbers kept; encode %.2f ms, decode %.2f ms",
			ex.ID, len(b), nonFinite, float64(enc.Microseconds())/1000, float64(dec.Microseconds())/1000)
	}
}

// TestWorkerRequestRebuildsTheModel: the worker rebuilds the page's model
// from a request (the text, the table, the sliders' values) to the same
// canonical form, and a request read back equals the one sent.
func TestWorkerRequestRebuildsTheModel(t *testing.T) {
	src := "#@ vary b=0.02:0.08\nparam u\nparam v\nb = 0.05\nld_normal(u, 0, 10) + ld_normal(v + b * u^2 - 100 * b, 0, 1)\n"
	var s Session
	if !s.Edit(src) {
		t.Fatal(s.Errors)
	}
	s.Constants = map[string]float64{"b": 0.0625}
	run, _ := s.Begin(nowForTest())
	p := &Page{s: s}
	rr := p.newRemoteRun(run, "work")
	b, err := frame(run.Gen, rr.req)
	if err != nil {
		t.Fatal(err)
	}
	var req workRequest
	if _, err := unframeInto(b, &req); err != nil {
		t.Fatal(err)
	}
	if d := wire.Diff(rr.req, req); d != "" {
		t.Fatalf("the request read back differs at %s", d)
	}
	m, file, errs := parseModel(req.Source, req.Data)
	if errs != nil {
		t.Fatal(errs)
	}
	m = withConstants(m, file.Vary, req.Constants)
	if got, want := formatOf(m), req.Canonical; got != want {
		t.Errorf("the worker's model is\n%s\nthe page's\n%s", got, want)
	}
	if c, err := m.Constant("b"); err != nil || c != 0.0625 {
		t.Errorf("the worker's b is %v (%v), want the slider's 0.0625", c, err)
	}
}

// formatOf is the canonical form the request carries (model.Format).
func formatOf(m *model.Model) string { return model.Format(m) }

// countNonFinite counts the NaN and infinite floats anywhere in v.
func countNonFinite(v any) int {
	n := 0
	var walk func(reflect.Value)
	walk = func(v reflect.Value) {
		switch v.Kind() {
		case reflect.Float64, reflect.Float32:
			if f := v.Float(); math.IsNaN(f) || math.IsInf(f, 0) {
				n++
			}
		case reflect.Pointer, reflect.Interface:
			if !v.IsNil() {
				walk(v.Elem())
			}
		case reflect.Slice, reflect.Array:
			for i := 0; i < v.Len(); i++ {
				walk(v.Index(i))
			}
		case reflect.Map:
			it := v.MapRange()
			for it.Next() {
				walk(it.Value())
			}
		case reflect.Struct:
			for i := 0; i < v.NumField(); i++ {
				walk(v.Field(i))
			}
		}
	}
	walk(reflect.ValueOf(v))
	return n
}

// exampleResult analyses the gallery example id as the page would.
func exampleResult(tb testing.TB, id string) *engine.Result {
	tb.Helper()
	ex, _ := examples.ByID(id)
	var s Session
	s.SetChoices(ex.Params)
	s.Edit(ex.Source)
	run, _ := s.Begin(nowForTest())
	res, err := engine.Analyse(context.Background(), run.Model, run.Options, nil)
	if err != nil {
		tb.Fatal(err)
	}
	return res
}

// BenchmarkWorkerReplyClock times the reply of the 4-D clock example's
// Result: encode in the worker, decode on the page.
func BenchmarkWorkerReplyClock(b *testing.B) {
	res := exampleResult(b, "clock")
	b.Run("encode", func(b *testing.B) {
		for b.Loop() {
			if _, err := frame(1, workReply{Kind: replyResult, Result: res}); err != nil {
				b.Fatal(err)
			}
		}
	})
	msg, _ := frame(1, workReply{Kind: replyResult, Result: res})
	b.Run("decode", func(b *testing.B) {
		for b.Loop() {
			var r workReply
			if _, err := unframeInto(msg, &r); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkClockFiguresPageOrWorker weighs where the 4-D clock example's
// figures should be built: on the page from the decoded Result (build), or
// in the worker and sent (decode: what the page would then do instead).
func BenchmarkClockFiguresPageOrWorker(b *testing.B) {
	res := exampleResult(b, "clock")
	fs := BuildFigures(res, View{})
	var figs []*figure.Figure
	for _, row := range fs.Grid {
		for _, p := range row {
			if p != nil {
				figs = append(figs, p.Fig)
			}
		}
	}
	msg, err := wire.Marshal(figs)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("%d panels, %d bytes encoded", len(figs), len(msg))
	b.Run("build", func(b *testing.B) {
		for b.Loop() {
			BuildFigures(res, View{})
		}
	})
	b.Run("decode", func(b *testing.B) {
		for b.Loop() {
			var out []*figure.Figure
			if err := wire.Unmarshal(msg, &out); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// TestWorkerFiguresEqualThePages: the figures the worker draws and sends,
// linked to the Result the page decoded, equal those the page draws from
// that Result itself, for a 1-D, a 2-D, a 3-D and a 4-D example and a view
// with a method hidden and log densities.
func TestWorkerFiguresEqualThePages(t *testing.T) {
	views := []View{{}, {Log: true, Hidden: [len(View{}.Hidden)]bool{true}}}
	for _, id := range []string{"decay", "banana", "sensor", "clock"} {
		res := exampleResult(t, id)
		for _, v := range views {
			sv := sentView(v)
			b, err := frame(1, workReply{Kind: replyResult, Result: res, Figures: sendFigures(BuildFigures(res, sv.view()))})
			if err != nil {
				t.Fatal(err)
			}
			var r workReply
			if _, err := unframeInto(b, &r); err != nil {
				t.Fatal(err)
			}
			got, want := linkFigures(r.Figures, r.Result), BuildFigures(r.Result, v)
			if d := wire.Diff(got, want); d != "" {
				t.Errorf("%s, view %+v: the worker's figures differ from the page's at %s", id, v, d)
			}
		}
	}
	if sentView(View{Pin: &engine.Result{}}) != nil {
		t.Error("a view with a pinned result is sent to the worker")
	}
}
