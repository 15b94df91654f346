// Package data reads columns of numbers pasted from a spreadsheet or saved
// as a CSV or TSV file: a header row naming the columns, then one row per
// observation, the cells separated by tabs, commas or spaces. Each column
// becomes a named vector that a model can use by name (see model.ParseWith).
//
// Every problem is an *Error at line:col of the text, naming the column;
// a table larger than the documented limits (MaxBytes, MaxColumns,
// MaxColumnValues, MaxValues) is refused with a clear error.
package data
