package engine

import (
	"context"
	"errors"

	"bellcheck/engine/model"
)

// Analyse computes the exact posterior on a grid, the three Gaussian fits and
// their comparison for a checked model. It stops soon after ctx is cancelled
// and returns ctx's error. progress may be nil.
func Analyse(ctx context.Context, m *model.Model, opts Options, progress ProgressFunc) (*Result, error) {
	return nil, errors.New("engine: analysis not built yet")
}
