package ui

import (
	"strconv"
	"strings"

	"bellcheck/app/share"
)

// linkMemo keeps the last link made from a state, so the page encodes (and
// compresses) a state once rather than at every render.
type linkMemo struct {
	key, value string
}

// get returns the value made for key, making it when key changed.
func (m *linkMemo) get(key string, build func() string) string {
	if m.key != key || m.value == "" {
		m.key, m.value = key, build()
	}
	return m.value
}

// stateKey is a text that differs between states that encode differently;
// extra distinguishes the uses of one state.
func stateKey(st share.State, extra ...string) string {
	var b strings.Builder
	b.WriteString(st.Model)
	b.WriteByte(0)
	b.WriteString(st.Data)
	b.WriteByte(0)
	b.WriteString(strconv.FormatBool(st.View.PlotOnly) + "," + strconv.Itoa(st.View.MaxHeight) + ",")
	for _, f := range []bool{st.View.LogScale, st.View.Embed, st.View.ReadOnly, st.View.EditorCollapsed} {
		b.WriteString(strconv.FormatBool(f))
		b.WriteByte(',')
	}
	bound := func(v *float64) string {
		if v == nil {
			return "auto"
		}
		return strconv.FormatFloat(*v, 'g', -1, 64)
	}
	for _, o := range st.Params {
		b.WriteString(string(o.Scale) + " " + strconv.Itoa(o.Points) + " " + bound(o.Lo) + " " + bound(o.Hi) + ";")
	}
	for _, e := range extra {
		b.WriteByte(0)
		b.WriteString(e)
	}
	return b.String()
}
