package data

import (
	"strconv"
	"strings"
)

// Definitions writes the table as model text: one definition per column,
// NAME = [v1, v2, ...], every value in the shortest form that reads back to
// the same number, ten values to a line. Pasted into a model (within its
// 64 KiB), it defines the same vectors as attaching the table with
// model.ParseWith.
func (t *Table) Definitions() string {
	var b strings.Builder
	for _, c := range t.Columns {
		b.WriteString(c.Name + " = [")
		for i, v := range c.Values {
			switch {
			case i == 0:
			case i%10 == 0:
				b.WriteString(",\n    ")
			default:
				b.WriteString(", ")
			}
			b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
		}
		b.WriteString("]\n")
	}
	return b.String()
}
