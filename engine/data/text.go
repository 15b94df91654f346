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

// CSV writes the table as comma-separated text that Parse reads back to the
// same table, values bit for bit (FuzzDataFile checks it): the header, then
// one row per value, a shorter column ending in empty cells, every value in
// its shortest exact form. It suits storing attached data, in a link say.
func (t *Table) CSV() string {
	var b strings.Builder
	rows := 0
	for i, c := range t.Columns {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(c.Name)
		rows = max(rows, len(c.Values))
	}
	b.WriteByte('\n')
	for r := 0; r < rows; r++ {
		for i, c := range t.Columns {
			if i > 0 {
				b.WriteByte(',')
			}
			if r < len(c.Values) {
				b.WriteString(strconv.FormatFloat(c.Values[r], 'g', -1, 64))
			}
		}
		b.WriteByte('\n')
	}
	return b.String()
}
