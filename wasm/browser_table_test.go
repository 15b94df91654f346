//go:build browser && !(js && wasm)

package main

// Reading the page's results table and comparing it with the command line's
// JSON to the precision the table prints.

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// tableCell is one cell of the results table as the page shows it.
type tableCell struct {
	V    string `json:"v"`
	Sub  string `json:"sub"`
	Best bool   `json:"best"`
}

type tableRow struct {
	Label string      `json:"label"`
	Cells []tableCell `json:"cells"`
}

type tableSection struct {
	Title string     `json:"title"`
	Rows  []tableRow `json:"rows"`
}

type resultsTable struct {
	Methods  []string       `json:"methods"`
	Sections []tableSection `json:"sections"`
	Stale    bool           `json:"stale"`
}

// readTableJS reads table.results: the method names of the header, and per
// section its title and rows of (label, cells with value and small print).
const readTableJS = `(() => {
  const t = document.querySelector("table.results");
  if (!t) return null;
  const txt = (el) => el ? el.textContent.trim() : "";
  const methods = [...t.querySelectorAll("thead th.mcol")].map((th) => txt(th.querySelector(".mname")));
  const sections = [];
  for (const tb of t.querySelectorAll("tbody")) {
    const sec = {title: "", rows: []};
    for (const tr of tb.querySelectorAll("tr")) {
      if (tr.classList.contains("sec")) { sec.title = txt(tr); continue; }
      sec.rows.push({label: txt(tr.querySelector("th")), cells: [...tr.querySelectorAll("td")].map((td) => ({
        v: txt(td.querySelector(".v")), sub: txt(td.querySelector(".sub")), best: td.classList.contains("best")}))});
    }
    sections.push(sec);
  }
  return {methods, sections, stale: t.classList.contains("stale")};
})()`

func (t *tab) table(tb testing.TB) resultsTable {
	tb.Helper()
	tab := eval[*resultsTable](tb, t, 10*time.Second, readTableJS)
	if tab == nil {
		tb.Fatal("the page has no results table")
	}
	return *tab
}

// cliJSON is the part of the command line's JSON (bellcheck fit --json)
// the table shows. Pointers are null in the JSON (non-finite values).
type cliJSON struct {
	Params []string `json:"params"`
	Scales []string `json:"scales"`
	Exact  struct {
		LogZ      *float64     `json:"log_z"`
		LogZErr   *float64     `json:"log_z_err"`
		Mean      []*float64   `json:"mean"`
		MeanErr   []*float64   `json:"mean_err"`
		SD        []*float64   `json:"sd"`
		Corr      [][]*float64 `json:"corr"`
		Quantiles [][]*float64 `json:"quantiles"`
	} `json:"exact"`
	Fits map[string]*cliFit `json:"fits"`
}

type cliFit struct {
	Mean       []*float64   `json:"mean"`
	SD         []*float64   `json:"sd"`
	Corr       [][]*float64 `json:"corr"`
	Interval95 [][]*float64 `json:"interval95"`
	// FittingScale is the fit's normal on the fitting scale; the page shows
	// its correlations for pairs fitted on a log or logit scale.
	FittingScale struct {
		Corr [][]*float64 `json:"corr"`
	} `json:"fitting_scale"`
	LogZ        *float64   `json:"log_z"`
	ELBO        *float64   `json:"elbo"`
	EvidenceErr *float64   `json:"evidence_err"`
	KLqp        *float64   `json:"kl_q_p"`
	KLpq        *float64   `json:"kl_p_q"`
	Hellinger   *float64   `json:"hellinger"`
	MeanErrSD   []*float64 `json:"mean_err_sd"`
	SDRatio     []*float64 `json:"sd_ratio"`
	Coverage95  *float64   `json:"coverage95"`
	Iterations  int        `json:"iterations"`
	Converged   bool       `json:"converged"`
}

// methodKeys maps the table's column names to the JSON's fit names ("" for
// the exact column).
var methodKeys = map[string]string{
	"exact": "", "Laplace": "laplace", "reverse KL": "reverse_kl", "mean-field": "mean_field", "forward KL": "forward_kl",
	"EP": "ep",
}

// numberRE matches a printed number: sign, digits, decimals, exponent.
var numberRE = regexp.MustCompile(`[-+]?[0-9]+(?:\.([0-9]+))?(?:e([-+]?[0-9]+))?`)

// printed is a number read from the page with the half-width of its last
// printed digit.
type printed struct {
	v, half float64
	text    string
}

// parsePrinted reads the numbers in s (the page writes a minus as U+2212)
// with their printed precision: "1.234" is 1.234 ± 0.0005, "1.2e−5" is
// 1.2e-5 ± 0.05e-5, "12300" is 12300 ± 50.
func parsePrinted(s string) []printed {
	s = strings.ReplaceAll(s, "−", "-")
	var out []printed
	for _, m := range numberRE.FindAllStringSubmatchIndex(s, -1) {
		text := s[m[0]:m[1]]
		v, err := strconv.ParseFloat(text, 64)
		if err != nil {
			continue
		}
		decimals := 0
		if m[2] >= 0 {
			decimals = m[3] - m[2]
		}
		exp := 0
		if m[4] >= 0 {
			exp, _ = strconv.Atoi(s[m[4]:m[5]])
		}
		half := 0.5 * math.Pow(10, float64(exp-decimals))
		if m[2] < 0 && m[4] < 0 {
			mant := strings.TrimLeft(text, "+-")
			if mant == "0" {
				half = 0 // the page prints an exact zero as "0"
			} else {
				zeros := len(mant) - len(strings.TrimRight(mant, "0"))
				half = 0.5 * math.Pow(10, float64(zeros))
			}
		}
		out = append(out, printed{v: v, half: half, text: text})
	}
	return out
}

// tableCheck compares printed cells with expected values and collects the
// mismatches.
type tableCheck struct {
	problems []string
	checked  int
}

func (c *tableCheck) fail(where, format string, args ...any) {
	c.problems = append(c.problems, where+": "+fmt.Sprintf(format, args...))
}

// numbers checks that text holds exactly len(want) numbers equal to want
// to printed precision; scale multiplies the expected values (100 for a
// percentage). A nil expected value (null in the JSON) must be printed as
// "—" or "∞".
func (c *tableCheck) numbers(where, text string, scale float64, want ...*float64) {
	c.numbersFloor(where, text, scale, 0, want...)
}

// numbersFloor is numbers with an absolute tolerance floor, for error
// estimates: where the grid resolves a quantity to rounding level, its
// estimated error is rounding noise (1e-15 natively, another 1e-15 in
// WebAssembly) and agrees only to the floor.
func (c *tableCheck) numbersFloor(where, text string, scale, floor float64, want ...*float64) {
	got := parsePrinted(text)
	if len(want) == 1 && want[0] == nil {
		if !strings.Contains(text, "—") && !strings.Contains(text, "∞") {
			c.fail(where, "page shows %q where the JSON has null", text)
		}
		c.checked++
		return
	}
	if len(got) != len(want) {
		c.fail(where, "page shows %q: %d numbers, want %d", text, len(got), len(want))
		return
	}
	for i, w := range want {
		if w == nil {
			c.fail(where, "JSON has null where the page prints %q", text)
			continue
		}
		x := *w * scale
		tol := max(got[i].half*(1+1e-9)+1e-12*math.Abs(x), floor)
		if math.Abs(got[i].v-x) > tol {
			c.fail(where, "page shows %s (±%g), JSON has %.10g", got[i].text, got[i].half, x)
		}
		c.checked++
	}
}

func idx(v []*float64, i int) *float64 {
	if i < len(v) {
		return v[i]
	}
	return nil
}

func idx2(v [][]*float64, i, j int) *float64 {
	if i < len(v) {
		return idx(v[i], j)
	}
	return nil
}

func abs(p *float64) *float64 {
	if p == nil {
		return nil
	}
	v := math.Abs(*p)
	return &v
}

// compareTable checks every number of the page's table against the JSON
// result of the same model, and returns the mismatches.
func compareTable(tab resultsTable, res cliJSON) (problems []string, checked int) {
	var c tableCheck
	if len(tab.Methods) != len(methodKeys) {
		c.fail("header", "methods %v, want the exact column and %d fits", tab.Methods, len(methodKeys)-1)
		return c.problems, 0
	}
	keys := make([]string, len(tab.Methods))
	for i, m := range tab.Methods {
		k, ok := methodKeys[m]
		if !ok {
			c.fail("header", "unknown method column %q", m)
			return c.problems, 0
		}
		keys[i] = k
	}
	param := map[string]int{}
	for i, p := range res.Params {
		param[p] = i
	}
	identity := func(i int) bool { return i >= len(res.Scales) || res.Scales[i] == "identity" }
	pairRE := regexp.MustCompile(`^corr\((.+), (.+)\)$`)
	seen := map[string]bool{}
	for _, sec := range tab.Sections {
		seen[sec.Title] = true
		for _, row := range sec.Rows {
			if len(row.Cells) != len(keys) {
				c.fail(sec.Title+"/"+row.Label, "%d cells, want %d", len(row.Cells), len(keys))
				continue
			}
			for k, cell := range row.Cells {
				key := keys[k]
				where := sec.Title + "/" + row.Label + "/" + tab.Methods[k]
				fit := res.Fits[key]
				if key != "" && fit == nil {
					if cell.V != "—" {
						c.fail(where, "page shows %q for a fit the JSON does not have", cell.V)
					}
					continue
				}
				if i, ok := param[sec.Title]; ok {
					switch row.Label {
					case "mean":
						if key == "" {
							c.numbers(where, cell.V, 1, idx(res.Exact.Mean, i))
							if cell.Sub != "" {
								c.numbersFloor(where+" (error)", cell.Sub, 1, 1e-12*deref(idx(res.Exact.SD, i)), abs(idx(res.Exact.MeanErr, i)))
							}
						} else {
							c.numbers(where, cell.V, 1, idx(fit.Mean, i))
							// A deviation of a fit that equals the exact moments (the
							// forward-KL fit) is rounding noise, which differs between
							// the native and the WebAssembly math: agreement to 1e-12 sd.
							c.numbersFloor(where+" (deviation)", cell.Sub, 1, 1e-12, idx(fit.MeanErrSD, i))
						}
					case "sd":
						if key == "" {
							c.numbers(where, cell.V, 1, idx(res.Exact.SD, i))
						} else {
							c.numbers(where, cell.V, 1, idx(fit.SD, i))
							c.numbers(where+" (ratio)", cell.Sub, 1, idx(fit.SDRatio, i))
						}
					case "95 % interval":
						if key == "" {
							c.numbers(where, cell.V, 1, idx2(res.Exact.Quantiles, i, 0), idx2(res.Exact.Quantiles, i, 2))
						} else {
							c.numbers(where, cell.V, 1, idx2(fit.Interval95, i, 0), idx2(fit.Interval95, i, 1))
						}
					default:
						c.fail(where, "unexpected row")
					}
					continue
				}
				if m := pairRE.FindStringSubmatch(row.Label); m != nil {
					i, ok1 := param[m[1]]
					j, ok2 := param[m[2]]
					if !ok1 || !ok2 {
						c.fail(where, "unknown parameters")
						continue
					}
					if key == "" {
						c.numbers(where, cell.V, 1, idx2(res.Exact.Corr, i, j))
					} else if identity(i) && identity(j) {
						c.numbers(where, cell.V, 1, idx2(fit.Corr, i, j))
					} else {
						// The page shows a transformed pair's correlation on
						// the fitting scale, marked so.
						c.numbers(where, cell.V, 1, idx2(fit.FittingScale.Corr, i, j))
					}
					continue
				}
				switch row.Label {
				case "log-evidence":
					switch {
					case key == "":
						c.numbers(where, cell.V, 1, res.Exact.LogZ)
						c.numbersFloor(where+" (error)", cell.Sub, 1, 1e-12, abs(res.Exact.LogZErr))
					case fit.LogZ != nil:
						c.numbers(where, cell.V, 1, fit.LogZ)
						c.numbers(where+" (difference)", cell.Sub, 1, fit.EvidenceErr)
					case fit.ELBO != nil:
						if !strings.HasPrefix(cell.V, "≥") {
							c.fail(where, "ELBO %q not shown as a lower bound", cell.V)
						}
						c.numbers(where, cell.V, 1, fit.ELBO)
						c.numbers(where+" (difference)", cell.Sub, 1, fit.EvidenceErr)
					default:
						if cell.V != "—" {
							c.fail(where, "page shows %q, the JSON has no evidence estimate", cell.V)
						}
					}
				case "KL(q‖p)", "KL(p‖q)", "Hellinger", "95 % coverage":
					if key == "" {
						continue // the reference column
					}
					v, scale := fit.KLqp, 1.0
					switch row.Label {
					case "KL(p‖q)":
						v = fit.KLpq
					case "Hellinger":
						v = fit.Hellinger
					case "95 % coverage":
						v, scale = fit.Coverage95, 100
					}
					c.numbers(where, cell.V, scale, v)
				case "optimiser":
					if key == "" || key == "forward_kl" {
						continue
					}
					want := "not converged"
					if fit.Converged {
						want = "converged"
					}
					if cell.V != want {
						c.fail(where, "page shows %q, JSON says %q", cell.V, want)
					}
					c.numbers(where+" (steps)", strings.SplitN(cell.Sub, ",", 2)[0], 1, ptr(float64(fit.Iterations)))
				default:
					c.fail(where, "unexpected row")
				}
			}
		}
	}
	for _, p := range res.Params {
		if !seen[p] {
			c.fail("sections", "no section for parameter %s (sections %v)", p, titles(tab))
		}
	}
	return c.problems, c.checked
}

func ptr(v float64) *float64 { return &v }

func deref(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

func titles(t resultsTable) []string {
	var s []string
	for _, sec := range t.Sections {
		s = append(s, sec.Title)
	}
	return s
}

// TestBrowserTableReading checks the table reader itself (no browser
// needed): printed precision, and that compareTable notices a number off
// by more than half its last digit.
func TestBrowserTableReading(t *testing.T) {
	for _, c := range []struct {
		text string
		v    []float64
		half []float64
	}{
		{"1.234", []float64{1.234}, []float64{0.0005}},
		{"−1.2e−5", []float64{-1.2e-5}, []float64{5e-7}},
		{"[−0.51, 2.30]", []float64{-0.51, 2.30}, []float64{0.005, 0.005}},
		{"12300", []float64{12300}, []float64{50}},
		{"0", []float64{0}, []float64{0}},
		{"≥ −3.231", []float64{-3.231}, []float64{0.0005}},
		{"95.6 %", []float64{95.6}, []float64{0.05}},
		{"×1.02", []float64{1.02}, []float64{0.005}},
		{"±4.6e−12", []float64{4.6e-12}, []float64{5e-14}},
	} {
		got := parsePrinted(c.text)
		if len(got) != len(c.v) {
			t.Errorf("parsePrinted(%q) = %v, want %d numbers", c.text, got, len(c.v))
			continue
		}
		for i := range got {
			if math.Abs(got[i].v-c.v[i]) > 1e-15*math.Abs(c.v[i]) || math.Abs(got[i].half-c.half[i]) > 1e-9*c.half[i] {
				t.Errorf("parsePrinted(%q)[%d] = %v ± %v, want %v ± %v", c.text, i, got[i].v, got[i].half, c.v[i], c.half[i])
			}
		}
	}
	one := func(v float64) []*float64 { return []*float64{&v} }
	res := cliJSON{Params: []string{"x"}, Scales: []string{"identity"}}
	res.Exact.Mean, res.Exact.SD = one(1.2344), one(0.5)
	tab := resultsTable{Methods: []string{"exact", "Laplace", "reverse KL", "mean-field", "forward KL", "EP"},
		Sections: []tableSection{{Title: "x", Rows: []tableRow{{Label: "mean", Cells: []tableCell{{V: "1.234"}, {V: "—"}, {V: "—"}, {V: "—"}, {V: "—"}, {V: "—"}}}}}}}
	if problems, n := compareTable(tab, res); len(problems) != 0 || n != 1 {
		t.Errorf("1.234 against 1.2344: problems %v, %d checked; want none, 1", problems, n)
	}
	res.Exact.Mean = one(1.2346)
	if problems, _ := compareTable(tab, res); len(problems) != 1 {
		t.Errorf("1.234 against 1.2346: problems %v, want one", problems)
	}
}
