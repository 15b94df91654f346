package export

import (
	"bytes"
	"encoding/json"
	"errors"

	"bellcheck/engine"
)

// ErrNoResult is returned when there is no result to export.
var ErrNoResult = errors.New("export: no result")

// JSON returns the result in the command line's schema (engine.Result's
// MarshalJSON, indented by two spaces, with a final line break), without the
// plot data, exactly as `bellcheck fit --json` prints it.
func JSON(r *engine.Result) ([]byte, error) {
	if r == nil {
		return nil, ErrNoResult
	}
	c := *r
	c.Plots = nil
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetIndent("", "  ")
	if err := enc.Encode(c); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}
