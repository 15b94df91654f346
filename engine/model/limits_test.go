package model

import (
	"strings"
	"testing"
)

// firstError parses src with the given limits and returns the first
// error's text, or "" when the model is valid.
func firstError(t *testing.T, src string, lim limits) string {
	t.Helper()
	m, err := parse(src, lim)
	if err == nil {
		checkComplete(t, m)
		return ""
	}
	list, ok := err.(ErrorList)
	if !ok || len(list) == 0 {
		t.Fatalf("error %v (%T), want an ErrorList", err, err)
	}
	checkErrorList(t, src, list)
	return list[0].Error()
}

// bigSource lifts the size limit so that the other limits can be reached.
var bigSource = limits{maxSource: 1 << 30, maxDepth: MaxDepth, maxVector: MaxVectorLen, maxParams: MaxParams, maxUnrolled: MaxUnrolled}

func TestDepthLimit(t *testing.T) {
	const tooDeep = "expression is nested too deeply: more than 200 levels"
	cases := []struct {
		name, src, want string
		lim             limits
	}{
		// One level for the name, one for each parenthesis: 199 fit.
		{"199 parentheses", strings.Repeat("(", 199) + "a" + strings.Repeat(")", 199), "", defaultLimits},
		{"200 parentheses", strings.Repeat("(", 200) + "a" + strings.Repeat(")", 200), "1:201: " + tooDeep, defaultLimits},
		{"199 unary minuses", strings.Repeat("-", 199) + "a", "", defaultLimits},
		{"200 unary minuses", strings.Repeat("-", 200) + "a", "1:201: " + tooDeep, defaultLimits},
		{"199 powers", strings.Repeat("a^", 199) + "a", "", defaultLimits},
		{"200 powers", strings.Repeat("a^", 200) + "a", "1:401: " + tooDeep, defaultLimits},
		{"nested calls", strings.Repeat("exp(", 300) + "a" + strings.Repeat(")", 300), "1:801: " + tooDeep, defaultLimits},
		{"nested vectors", "v = " + strings.Repeat("[", 300) + "a" + strings.Repeat("]", 300) + "\na", "1:205: " + tooDeep, defaultLimits},
		{"60000 parentheses", strings.Repeat("(", 60000) + "a", "1:201: " + tooDeep, defaultLimits},
		// 100000 of them exceed the size limit first; with that limit lifted
		// the depth limit stops the parser without exhausting the stack.
		{"100000 parentheses", strings.Repeat("(", 100000) + "a", "1:65537: model text is too long: 100001 bytes, the limit is 65536", defaultLimits},
		{"100000 parentheses, no size limit", strings.Repeat("(", 100000) + "a", "1:201: " + tooDeep, bigSource},
		{"100000 unary minuses, no size limit", strings.Repeat("-", 100000) + "a", "1:201: " + tooDeep, bigSource},
		{"100000 brackets, no size limit", "v = " + strings.Repeat("[", 100000) + "\na", "1:205: " + tooDeep, bigSource},
		// A long flat sum is not nesting.
		{"flat sum of 16000 terms", strings.Repeat("a + ", 16000) + "a", "", defaultLimits},
	}
	for _, tc := range cases {
		if got := firstError(t, tc.src, tc.lim); got != tc.want {
			t.Errorf("%s: got %q, want %q", tc.name, got, tc.want)
		}
	}
}

func TestSizeLimit(t *testing.T) {
	exact := "a" + strings.Repeat(" ", MaxSource-1)
	if got := firstError(t, exact, defaultLimits); got != "" {
		t.Errorf("model of exactly %d bytes: %s", MaxSource, got)
	}
	// One byte over: the error is at the first byte past the limit. The
	// text has 99 lines of 1000 bytes ("a +" and 996 spaces and a newline).
	line := "a +" + strings.Repeat(" ", 996) + "\n"
	over := strings.Repeat(line, 99)
	want := "66:537: model text is too long: 99000 bytes, the limit is 65536" // 65536 = 65*1000 + 536
	if got := firstError(t, over, defaultLimits); got != want {
		t.Errorf("got %q, want %q", got, want)
	}
}

func TestVectorLimit(t *testing.T) {
	vector := func(n int) string {
		var b strings.Builder
		b.WriteString("t = [")
		for i := 0; i < n; i++ {
			if i > 0 {
				b.WriteString(", ")
			}
			b.WriteString("1")
		}
		b.WriteString("]\nsum(t)*a")
		return b.String()
	}
	// 100000 values do not fit in the size limit...
	if got, want := firstError(t, vector(MaxVectorLen), defaultLimits), "1:65537: model text is too long: 300013 bytes, the limit is 65536"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
	// ... but with it lifted, 100000 are accepted and one more is not.
	m, err := parse(vector(MaxVectorLen), bigSource)
	if err != nil {
		t.Fatalf("vector of %d: %v", MaxVectorLen, err)
	}
	if m.Defs[0].Shape.Len != MaxVectorLen {
		t.Errorf("length %d", m.Defs[0].Shape.Len)
	}
	col := len("t = [") + 3*MaxVectorLen + 1 // the 100001st "1"
	want := "1:" + itoa(col) + ": vector has more than 100000 elements"
	if got := firstError(t, vector(MaxVectorLen+1), bigSource); got != want {
		t.Errorf("got %q, want %q", got, want)
	}
	// The same limit, lowered, on a small vector.
	small := limits{maxSource: MaxSource, maxDepth: MaxDepth, maxVector: 3, maxParams: MaxParams, maxUnrolled: MaxUnrolled}
	if got, want := firstError(t, "t = [1, 2, 3, 4]\nsum(t)*a", small), "1:15: vector has more than 3 elements"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
	if got := firstError(t, "t = [1, 2, 3]\nsum(t)*a", small); got != "" {
		t.Errorf("3 elements: %s", got)
	}
}

func itoa(n int) string {
	var b []byte
	for n > 0 || len(b) == 0 {
		b = append([]byte{byte('0' + n%10)}, b...)
		n /= 10
	}
	return string(b)
}
