package eval

import (
	"errors"
	"fmt"

	"bellcheck/engine/model"
)

// Sentinel errors, wrapped by *Error.
var (
	// ErrNotChecked: the model has a name that was not resolved (Kind is
	// Unresolved) or an index out of range: it did not come from model.Parse.
	ErrNotChecked = errors.New("model is not checked")
	// ErrUnknownFunction: a call of a function eval does not implement.
	ErrUnknownFunction = errors.New("unknown function")
	// ErrArity: a call with the wrong number of arguments.
	ErrArity = errors.New("wrong number of arguments")
	// ErrShape: a vector where a scalar is needed, or vectors of different
	// lengths in an elementwise operation.
	ErrShape = errors.New("shape mismatch")
	// ErrTooManyParams: more than model.MaxParams parameters, or none.
	ErrTooManyParams = errors.New("unsupported number of parameters")
	// ErrTooLarge: the unrolled model has more operations than the limit.
	ErrTooLarge = errors.New("model too large once unrolled")
	// ErrTooManyFactors: the density splits into more scalar terms, or
	// terms of more operations in all, than SplitFactors builds (a
	// trajectory's steps adding into its terms).
	ErrTooManyFactors = errors.New("too many factors")
)

// Error is a compile error at a position of the model text.
type Error struct {
	Pos model.Pos
	Msg string
	Err error // one of the sentinel errors above
}

// Error returns "line:col: msg".
func (e *Error) Error() string {
	return fmt.Sprintf("%d:%d: %s", e.Pos.Line, e.Pos.Col, e.Msg)
}

// Unwrap returns the sentinel error.
func (e *Error) Unwrap() error { return e.Err }
