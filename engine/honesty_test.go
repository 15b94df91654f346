package engine

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"bellcheck/engine/model"
)

// The honesty checks that every result must pass, whatever the density:
// the pathological catalogue and the fuzz target apply them to each result.
// A result is honest when every number it reports can be right (a fit's
// covariance is positive definite, a divergence is not negative, a share of
// the mass lies in [0, 1], the ELBO does not exceed log Z) and every
// quantity it leaves out comes with a diagnostic that says why (one of
// the codes the availability record allows for it, absentReasons).

// printedNonFinite matches a formatting error or a non-finite number
// printed into a sentence (Go prints them as NaN, +Inf and -Inf; the
// sentences themselves say "NaN" and "+inf" in words).
var printedNonFinite = regexp.MustCompile(`%!|[+-]Inf|= NaN|\(NaN|\[NaN|NaN[,\])]| NaN %`)

// honestyTol is the slack allowed below zero for a divergence and above 1
// for a share of the mass: rounding in sums of a few million terms.
const honestyTol = 1e-6

// honesty returns the ways in which res misleads, one sentence each; none
// for an honest result. d is the number of parameters.
func honesty(res *Result, d int) []string {
	var bad []string
	fail := func(format string, args ...any) { bad = append(bad, fmt.Sprintf(format, args...)) }
	codes := map[string]bool{}
	for _, dg := range res.Diagnostics {
		codes[dg.Code] = true
		switch dg.Severity {
		case SeverityInfo, SeverityWarning, SeverityError:
		default:
			fail("diagnostic %s has severity %q", dg.Code, dg.Severity)
		}
		if dg.Code == "" || strings.ToLower(dg.Code) != dg.Code || strings.ContainsAny(dg.Code, " -") {
			fail("diagnostic code %q is not a lower-case word", dg.Code)
		}
		// A fit's own error, quoted by fit_failed, may name the non-finite
		// value it met; every other sentence says numbers in words.
		if dg.Message == "" || strings.Contains(dg.Message, "%!") ||
			dg.Code != CodeFitFailed && printedNonFinite.MatchString(dg.Message) {
			fail("diagnostic %s has a broken message: %q", dg.Code, dg.Message)
		}
	}
	reason := func(what Quantity) bool {
		for _, c := range absentReasons[what] {
			if codes[c] {
				return true
			}
		}
		return false
	}
	absentNeedsReason := func(what Quantity, where string) {
		if !reason(what) {
			fail("%s is absent without a reason (want one of %v; have %v)", where, absentReasons[what], codeList(res))
		}
	}
	if len(res.Params) != d || len(res.Scales) != d {
		fail("%d params and %d scales for %d parameters", len(res.Params), len(res.Scales), d)
	}

	// The exact posterior.
	ex := &res.Exact
	switch {
	case math.IsNaN(ex.LogZ):
		absentNeedsReason(QuantityLogZ, "exact log Z")
	case math.IsInf(ex.LogZ, 0):
		fail("exact log Z is %g", ex.LogZ)
	case !(ex.LogZErr >= 0):
		fail("exact log Z %g with error estimate %g", ex.LogZ, ex.LogZErr)
	}
	if len(ex.Mean) != d || len(ex.Cov) != d || len(ex.SD) != d || len(ex.Quantiles) != d || len(ex.Mode) != d {
		fail("exact moments of the wrong length for %d parameters", d)
		return bad
	}
	for k := 0; k < d; k++ {
		if math.IsNaN(ex.Mean[k]) {
			absentNeedsReason(QuantityMean, fmt.Sprintf("exact mean %d", k))
		} else if math.IsInf(ex.Mean[k], 0) {
			fail("exact mean %d is %g", k, ex.Mean[k])
		}
		v := ex.Cov[k][k]
		switch {
		case math.IsNaN(v):
			absentNeedsReason(QuantityVariance, fmt.Sprintf("exact variance %d", k))
		case !(v >= 0) || math.IsInf(v, 0):
			fail("exact variance %d is %g", k, v)
		case math.Abs(ex.SD[k]-math.Sqrt(v)) > 1e-9*math.Sqrt(v):
			fail("exact sd %d is %g, the square root of the variance %g", k, ex.SD[k], v)
		}
		if math.IsNaN(ex.ExcessKurtosis[k]) {
			absentNeedsReason(QuantityKurtosis, fmt.Sprintf("exact excess kurtosis %d", k))
		} else if ex.ExcessKurtosis[k] < -2-honestyTol {
			// Pearson's inequality: kurtosis >= skewness^2 + 1, so excess
			// kurtosis >= -2 (an identity of any distribution).
			fail("exact excess kurtosis %d is %g, below -2", k, ex.ExcessKurtosis[k])
		}
		for l := 0; l < d; l++ {
			if c := ex.Corr[k][l]; math.Abs(c) > 1+honestyTol {
				fail("exact correlation (%d, %d) is %g", k, l, c)
			}
		}
		q := ex.Quantiles[k]
		if math.IsNaN(q[0]) || math.IsNaN(q[1]) || math.IsNaN(q[2]) {
			absentNeedsReason(QuantityQuantiles, fmt.Sprintf("exact quantiles %d", k))
		} else if !(q[0] <= q[1] && q[1] <= q[2]) {
			fail("exact quantiles %d out of order: %v", k, q)
		}
		if math.IsNaN(ex.Mode[k]) {
			absentNeedsReason(QuantityMode, fmt.Sprintf("exact mode %d", k))
		} else if math.IsInf(ex.Mode[k], 0) {
			fail("exact mode %d is %g", k, ex.Mode[k])
		}
	}

	// The modes.
	massSum := 0.0
	for i, m := range res.Modes {
		if len(m.X) != d || !allFiniteF(m.X) {
			fail("mode %d at %v", i, m.X)
		}
		if math.IsNaN(m.Mass) {
			absentNeedsReason(QuantityModeMass, fmt.Sprintf("mode %d's mass", i))
		} else if !(m.Mass >= 0 && m.Mass <= 1+honestyTol) {
			fail("mode %d has mass %g", i, m.Mass)
		}
		if math.IsNaN(m.LogDensity) || math.IsInf(m.LogDensity, 0) {
			fail("mode %d has log density %g", i, m.LogDensity)
		}
		massSum += m.Mass
	}
	if massSum > 1+honestyTol {
		fail("the modes' masses add up to %g", massSum)
	}

	// The fits.
	for _, m := range Methods {
		f := res.Fits[m]
		if f == nil {
			absentNeedsReason(m.quantity(), "the "+m.Key()+" fit")
			continue
		}
		for _, s := range fitHonesty(m, m.Key(), f, res, d, reason(QuantityCoverage), reason(QuantityFitMoments)) {
			fail("%s", s)
		}
	}
	// The candidates: scored like fits, and always there (Analyse refuses
	// a candidate it cannot score).
	for _, c := range res.Candidates {
		if c.Fit == nil {
			fail("candidate %s has no scores", c.Name)
			continue
		}
		for _, s := range fitHonesty(ForwardKL, "candidate "+c.Name, c.Fit, res, d, reason(QuantityCoverage), reason(QuantityFitMoments)) {
			fail("%s", s)
		}
	}

	// The grid.
	if g := res.Grid; !(g.NonFinite >= 0 && g.NonFinite <= 1) || !(g.EdgeMass >= 0 && g.EdgeMass <= 1+honestyTol) {
		fail("grid shares non-finite %g, edge mass %g", g.NonFinite, g.EdgeMass)
	}

	raw, err := json.Marshal(res)
	if err != nil {
		fail("JSON: %v", err)
	} else if !json.Valid(raw) {
		fail("JSON not valid: %.200s", raw)
	}
	return bad
}

// analyseRecorded runs Analyse and returns its availability record too:
// the same path, a scouting grid first and the full grid where the nested
// rule does not stand (it ran the full grid alone, and a wiggly density
// whose rule was 2.7e-3 off in log Z passed the catalogue while the page
// showed the rule's number).
func analyseRecorded(ctx context.Context, m *model.Model, opts Options) (*Result, *availability, error) {
	a := &analysis{ctx: ctx, m: m, opts: opts, tr: newTracker(nil), scout: true}
	res, err := a.run()
	if errors.Is(err, errFullGrid) {
		a = &analysis{ctx: ctx, m: m, opts: opts, tr: a.tr}
		res, err = a.run()
	}
	return res, &a.avail, err
}

// recordHonesty returns the ways in which the availability record of res
// is wrong: an absence recorded with a code that absentReasons does not
// allow for the quantity, or whose diagnostic is not in the Result, or a
// fit recorded absent that the Result has (or present that it lacks).
func recordHonesty(res *Result, av *availability) []string {
	var bad []string
	codes := map[string]bool{}
	for _, dg := range res.Diagnostics {
		codes[dg.Code] = true
	}
	for e, code := range av.absent {
		if !slices.Contains(absentReasons[e.q], code) {
			bad = append(bad, fmt.Sprintf("record: %s (%d, %d) absent for %s, not one of %v", e.q, e.i, e.j, code, absentReasons[e.q]))
		}
		if !codes[code] {
			bad = append(bad, fmt.Sprintf("record: %s (%d, %d) absent for %s, which no diagnostic says", e.q, e.i, e.j, code))
		}
	}
	for _, m := range Methods {
		if gone := !av.present(m.quantity()); gone != (res.Fits[m] == nil) {
			bad = append(bad, fmt.Sprintf("record: the %s fit recorded absent %v, but the Result has it %v", m.Key(), gone, res.Fits[m] != nil))
		}
	}
	return bad
}

// fitHonesty checks one fit that is present: its normal on the fitting
// scale, and its moments on the original scale, which may be absent only
// for a reason (momentReason).
// label names the fit in the sentences.
func fitHonesty(m Method, label string, f *Fit, res *Result, d int, coverageReason, momentReason bool) []string {
	var bad []string
	fail := func(format string, args ...any) { bad = append(bad, label+": "+fmt.Sprintf(format, args...)) }
	fs := &f.FittingScale
	if len(f.Mean) != d || len(f.Cov) != d || len(f.SD) != d || len(f.Interval95) != d || len(fs.Mean) != d || len(fs.Cov) != d || len(fs.SD) != d {
		fail("moments of the wrong length")
		return bad
	}
	// The normal on the fitting scale, and the moments on the original
	// one: finite, symmetric, positive definite.
	if !allFiniteF(fs.Mean) {
		fail("mean %v", fs.Mean)
	}
	for _, mo := range []struct {
		scale string
		mean  []float64
		cov   [][]float64
		sd    []float64
	}{{"fitting scale", fs.Mean, fs.Cov, fs.SD}, {"original scale", f.Mean, f.Cov, f.SD}} {
		cov := mat.NewSymDense(d, nil)
		absent := false
		for k := 0; k < d; k++ {
			if len(mo.cov[k]) != d {
				fail("%s: covariance row %d of length %d", mo.scale, k, len(mo.cov[k]))
				return bad
			}
			if math.IsNaN(mo.mean[k]) {
				absent = true
			} else if math.IsInf(mo.mean[k], 0) {
				fail("%s: mean %d is %g", mo.scale, k, mo.mean[k])
			}
			for l := 0; l < d; l++ {
				c := mo.cov[k][l]
				if math.IsNaN(c) {
					absent = true
					continue
				}
				if math.IsInf(c, 0) {
					fail("%s: covariance (%d, %d) is %g", mo.scale, k, l, c)
					return bad
				}
				if c != mo.cov[l][k] {
					fail("%s: covariance not symmetric at (%d, %d)", mo.scale, k, l)
				}
				if l >= k {
					cov.SetSym(k, l, c)
				}
			}
			if v := mo.cov[k][k]; !math.IsNaN(v) {
				if sd := mo.sd[k]; !(sd > 0) || math.Abs(sd-math.Sqrt(v)) > 1e-9*sd {
					fail("%s: sd %d is %g for variance %g", mo.scale, k, sd, v)
				}
			}
		}
		if absent {
			if mo.scale == "fitting scale" || !momentReason {
				fail("%s: moments absent without a reason", mo.scale)
			}
			continue
		}
		var chol mat.Cholesky
		if !chol.Factorize(cov) {
			fail("%s: covariance %v is not positive definite", mo.scale, mo.cov)
		}
	}
	for k := 0; k < d; k++ {
		iv := f.Interval95[k]
		if !(iv[0] <= iv[1]) {
			fail("interval %d is %v", k, iv)
		}
	}
	for _, v := range []struct {
		what string
		x    float64
	}{{"KL(q||p)", f.KLqp}, {"KL(p||q)", f.KLpq}} {
		if v.x < -honestyTol {
			fail("%s is %g, below zero", v.what, v.x)
		}
	}
	if h := f.Hellinger; h < -honestyTol || h > 1+honestyTol {
		fail("Hellinger distance %g outside [0, 1]", h)
	}
	switch c := f.Coverage95; {
	case math.IsNaN(c):
		if !coverageReason {
			fail("coverage absent without a reason")
		}
	case c < -honestyTol || c > 1+honestyTol:
		fail("coverage %g outside [0, 1]", c)
	}
	lz, lzErr := res.Exact.LogZ, res.Exact.LogZErr
	tol := 1e-6*(1+math.Abs(lz)) + 3*lzErr
	if f.ELBO != nil {
		e := *f.ELBO
		switch {
		case math.IsNaN(e) || math.IsInf(e, 0):
			fail("ELBO %g", e)
		case !math.IsNaN(lz) && f.Converged && e > lz+tol:
			// The ELBO is a lower bound on log Z for every q (Jensen's
			// inequality); only the quadrature's error may lift it above.
			fail("ELBO %.10g above log Z %.10g (error estimate %.3g)", e, lz, lzErr)
		}
	}
	if f.LogZ != nil && (math.IsNaN(*f.LogZ) || math.IsInf(*f.LogZ, 0)) {
		fail("Laplace log Z %g", *f.LogZ)
	}
	if f.EvidenceErr != nil && math.IsNaN(lz) && !math.IsNaN(*f.EvidenceErr) {
		fail("evidence error %g against an absent log Z", *f.EvidenceErr)
	}
	if !f.Converged && (m == ReverseKL || m == MeanField) && !hasCode(res, CodeNoConvergence) {
		fail("not converged, and no diagnostic says so")
	}
	return bad
}

func allFiniteF(x []float64) bool {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

func codeList(res *Result) string {
	var s []string
	for _, d := range res.Diagnostics {
		s = append(s, d.Code)
	}
	return "[" + strings.Join(s, " ") + "]"
}

// resultDoc returns a result's JSON decoded into generic values (the form
// scripts see) and the set of its diagnostic codes.
func resultDoc(t *testing.T, res *Result) (any, map[string]bool) {
	t.Helper()
	raw, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	var doc any
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	codes := map[string]bool{}
	for _, d := range res.Diagnostics {
		codes[d.Code] = true
	}
	return doc, codes
}

// jsonAt walks a dotted path ("exact.cov.0.0", "fits.forward_kl") through a
// decoded JSON document.
func jsonAt(doc any, path string) (any, bool) {
	cur := doc
	for _, p := range strings.Split(path, ".") {
		switch v := cur.(type) {
		case map[string]any:
			next, ok := v[p]
			if !ok {
				return nil, false
			}
			cur = next
		case []any:
			i, err := strconv.Atoi(p)
			if err != nil || i < 0 || i >= len(v) {
				return nil, false
			}
			cur = v[i]
		default:
			return nil, false
		}
	}
	return cur, true
}

// allNull reports whether v is null or an array or object made only of
// nulls.
func allNull(v any) bool {
	switch x := v.(type) {
	case nil:
		return true
	case []any:
		for _, e := range x {
			if !allNull(e) {
				return false
			}
		}
		return true
	case map[string]any:
		for _, e := range x {
			if !allNull(e) {
				return false
			}
		}
		return true
	}
	return false
}

// present reports whether v is an object, a number, or an array made only
// of numbers (no null anywhere).
func present(v any) bool {
	switch x := v.(type) {
	case nil:
		return false
	case []any:
		for _, e := range x {
			if !present(e) {
				return false
			}
		}
	}
	return true
}
