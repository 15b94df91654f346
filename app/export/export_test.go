package export

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"

	"bellcheck/engine"
	"bellcheck/engine/model"
)

// A two-parameter model, one parameter fitted on the log scale, so the
// export sees pairs, transformed fits and every fit (a Gaussian times a
// gamma density, all fits exist).
const twoParam = "param mu\nparam s in [0, inf]\nld_normal(mu, 1, 2) + ld_gamma(s, 4, 2) + 0.1*mu*log(s)\n"

var (
	resOnce sync.Once
	resVal  *engine.Result
	resErr  error
)

// analysed runs the real engine once for the tests.
func analysed(t *testing.T) *engine.Result {
	t.Helper()
	resOnce.Do(func() {
		m, err := model.Parse(twoParam)
		if err != nil {
			resErr = err
			return
		}
		opts := engine.Options{Plots: true, Params: []engine.ParamOptions{{}, {Scale: engine.Log}}}
		resVal, resErr = engine.Analyse(context.Background(), m, opts, nil)
	})
	if resErr != nil {
		t.Fatal(resErr)
	}
	return resVal
}

func TestJSONIsTheCommandLineSchemaWithoutPlots(t *testing.T) {
	r := analysed(t)
	if r.Plots == nil {
		t.Fatal("the fixture has no plots to leave out")
	}
	b, err := JSON(r)
	if err != nil {
		t.Fatal(err)
	}
	// The command line encodes with json.Encoder, two-space indent: the
	// same bytes as the standard library's own encoding of the result
	// without plots.
	c := *r
	c.Plots = nil
	var want bytes.Buffer
	enc := json.NewEncoder(&want)
	enc.SetIndent("", "  ")
	if err := enc.Encode(c); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b, want.Bytes()) {
		t.Error("JSON differs from the command line's encoding")
	}
	if r.Plots == nil {
		t.Error("JSON cleared the caller's plots")
	}
	var top map[string]json.RawMessage
	if err := json.Unmarshal(b, &top); err != nil {
		t.Fatalf("JSON does not parse: %v", err)
	}
	var keys []string
	for k := range top {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	// The field names of engine.Result's json tags (engine/result.go);
	// curvature is there because both the Laplace and the reverse-KL fits
	// exist (candidates and live are omitted when there are none).
	wantKeys := []string{"curvature", "diagnostics", "exact", "fits", "form", "grid", "modes", "params", "scales", "timing_ms"}
	if strings.Join(keys, ",") != strings.Join(wantKeys, ",") {
		t.Errorf("top-level keys %v, want %v", keys, wantKeys)
	}
	if _, err := JSON(nil); err != ErrNoResult {
		t.Errorf("JSON(nil) error %v, want ErrNoResult", err)
	}
}

// csvRecords parses CSV output with encoding/csv and indexes the rows by
// quantity, param, param2 and method.
func csvRecords(t *testing.T, b []byte) (header []string, rows map[string][]string, n int) {
	t.Helper()
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("CSV does not parse: %v", err)
	}
	if len(recs) == 0 {
		t.Fatal("empty CSV")
	}
	rows = map[string][]string{}
	for _, r := range recs[1:] {
		if len(r) != len(CSVHeader) {
			t.Fatalf("row %v has %d fields, want %d", r, len(r), len(CSVHeader))
		}
		k := r[0] + "|" + r[1] + "|" + r[2] + "|" + r[3]
		if _, dup := rows[k]; dup {
			t.Errorf("duplicate row %s", k)
		}
		rows[k] = r
	}
	return recs[0], rows, len(recs) - 1
}

// parseValue reads a CSV value back: "" is NaN (absent).
func parseValue(t *testing.T, s string) float64 {
	t.Helper()
	if s == "" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("value %q does not parse: %v", s, err)
	}
	return v
}

func same(a, b float64) bool {
	return a == b || math.IsNaN(a) && math.IsNaN(b)
}

func TestCSVParsesBackToTheSameNumbers(t *testing.T) {
	r := analysed(t)
	b, err := CSV(r)
	if err != nil {
		t.Fatal(err)
	}
	header, rows, n := csvRecords(t, b)
	if strings.Join(header, ",") != "quantity,param,param2,method,value,error,scale" {
		t.Errorf("header %v", header)
	}
	fits := map[string]*engine.Fit{}
	for _, m := range engine.Methods {
		fits[m.Key()] = r.Fits[m]
	}
	nf := 0
	for _, f := range fits {
		if f != nil {
			nf++
		}
	}
	if nf != 4 {
		t.Fatalf("the fixture has %d fits, want all 4", nf)
	}
	type check struct {
		key   string
		value float64
		err   float64 // NaN: the error column is empty
		scale string
	}
	nan := math.NaN()
	checks := []check{
		{"mean|mu||exact", r.Exact.Mean[0], r.Exact.MeanErr[0], "original"},
		{"mean|s||exact", r.Exact.Mean[1], r.Exact.MeanErr[1], "original"},
		{"sd|s||exact", r.Exact.SD[1], r.Exact.CovErr[1][1] / (2 * r.Exact.SD[1]), "original"},
		{"q025|mu||exact", r.Exact.Quantiles[0][0], nan, "original"},
		{"median|s||exact", r.Exact.Quantiles[1][1], nan, "original"},
		{"q975|s||exact", r.Exact.Quantiles[1][2], nan, "original"},
		{"cov|mu|s|exact", r.Exact.Cov[0][1], r.Exact.CovErr[0][1], "original"},
		{"corr|mu|s|exact", r.Exact.Corr[0][1], nan, "original"},
		{"log_z|||exact", r.Exact.LogZ, r.Exact.LogZErr, "original"},
		{"log_z|||laplace", *r.Fits[engine.Laplace].LogZ, nan, "original"},
		{"elbo|||reverse_kl", *r.Fits[engine.ReverseKL].ELBO, nan, "original"},
		{"evidence_err|||mean_field", *r.Fits[engine.MeanField].EvidenceErr, nan, "original"},
		{"points|s||grid", float64(r.Grid.Points[1]), nan, "original"},
		{"lo|s||grid", r.Grid.FittingScale.Lo[1], nan, "log"},
		{"edge_mass|||grid", r.Grid.EdgeMass, nan, "original"},
	}
	for key, f := range fits {
		checks = append(checks,
			check{"mean|mu||" + key, f.Mean[0], nan, "original"},
			check{"mean|s||" + key, f.FittingScale.Mean[1], nan, "log"},
			check{"sd|s||" + key, f.FittingScale.SD[1], nan, "log"},
			check{"interval95_lo|s||" + key, f.Interval95[1][0], nan, "original"},
			check{"interval95_hi|mu||" + key, f.Interval95[0][1], nan, "original"},
			check{"cov|mu|s|" + key, f.FittingScale.Cov[0][1], nan, "identity/log"},
			check{"corr|mu|s|" + key, f.FittingScale.Corr[0][1], nan, "identity/log"},
			check{"kl_q_p|||" + key, f.KLqp, nan, "original"},
			check{"kl_p_q|||" + key, f.KLpq, nan, "original"},
			check{"hellinger|||" + key, f.Hellinger, nan, "original"},
			check{"coverage95|||" + key, f.Coverage95, nan, "original"},
			check{"iterations|||" + key, float64(f.Iterations), nan, "original"},
		)
	}
	for _, c := range checks {
		row, ok := rows[c.key]
		if !ok {
			t.Errorf("no row %s", c.key)
			continue
		}
		if v := parseValue(t, row[4]); !same(v, c.value) {
			t.Errorf("%s: value %v, want exactly %v", c.key, v, c.value)
		}
		if e := parseValue(t, row[5]); !same(e, c.err) {
			t.Errorf("%s: error %v, want %v", c.key, e, c.err)
		}
		if row[6] != c.scale {
			t.Errorf("%s: scale %q, want %q", c.key, row[6], c.scale)
		}
	}
	// Row count: 9 exact rows per parameter, 2 per pair and log Z; per
	// fit 6 per parameter, 2 per pair, 7 global rows, its evidence rows and
	// its precision's upper triangle (d(d+1)/2) where it has one; grid 3
	// per parameter and 2.
	d, pairs := 2, 1
	want := 9*d + 2*pairs + 1 + 3*d + 2
	for _, f := range fits {
		want += 6*d + 2*pairs + 7
		if f.Precision != nil {
			want += d * (d + 1) / 2
		}
		for _, p := range []*float64{f.LogZ, f.ELBO, f.EvidenceErr} {
			if p != nil {
				want++
			}
		}
	}
	if n != want {
		t.Errorf("%d rows, want %d", n, want)
	}
}

func TestCSVWritesAbsentAndInfiniteValues(t *testing.T) {
	inf, nan := math.Inf(1), math.NaN()
	r := &engine.Result{
		Params: []string{"weird,name\"q"},
		Scales: []engine.Scale{engine.Identity},
		Exact:  engine.Exact{LogZ: nan, LogZErr: nan, Mean: []float64{0.5}, SD: []float64{nan}, Quantiles: [][3]float64{{-1, 0, 1}}},
		Fits: engine.Fits{engine.Laplace: &engine.Fit{Mean: []float64{1e-300}, SD: []float64{2}, KLqp: inf, KLpq: -inf, Coverage95: 0.5,
			FittingScale: engine.FitNormal{Mean: []float64{1e-300}, SD: []float64{2}}}},
	}
	b, err := CSV(r)
	if err != nil {
		t.Fatal(err)
	}
	_, rows, _ := csvRecords(t, b)
	cases := []struct {
		key, value string
	}{
		{`sd|weird,name"q||exact`, ""},
		{`log_z|||exact`, ""},
		{`kl_q_p|||laplace`, "inf"},
		{`kl_p_q|||laplace`, "-inf"},
		{`mean|weird,name"q||laplace`, "1e-300"},
		{`skewness|weird,name"q||exact`, ""},
	}
	for _, c := range cases {
		row, ok := rows[c.key]
		if !ok {
			t.Errorf("no row %s (the parameter name must survive quoting)", c.key)
			continue
		}
		if row[4] != c.value {
			t.Errorf("%s: value %q, want %q", c.key, row[4], c.value)
		}
	}
	if v, err := strconv.ParseFloat(rows[`kl_q_p|||laplace`][4], 64); err != nil || !math.IsInf(v, 1) {
		t.Errorf("inf does not parse back as +Inf: %v %v", v, err)
	}
	if _, ok := rows["mean|weird,name\"q||reverse_kl"]; ok {
		t.Error("an absent fit has rows")
	}
}
