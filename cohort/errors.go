package cohort

import (
	"errors"
	"fmt"
)

// Sentinel causes of input errors.
var (
	ErrNoColumn  = errors.New("column not found")
	ErrNotNumber = errors.New("not a number")
	ErrNonFinite = errors.New("value is infinite or out of range")
	ErrRagged    = errors.New("wrong number of fields")
	ErrEmpty     = errors.New("no data")
	ErrDuplicate = errors.New("duplicate")
	ErrNotText   = errors.New("not a text table")
	ErrOrder     = errors.New("window order not readable")
	ErrMismatch  = errors.New("files do not agree")
	ErrMissingID = errors.New("participant id is empty")
	ErrOpen      = errors.New("cannot read input")
	ErrTooFew    = errors.New("too few participants")
	ErrBadOption = errors.New("invalid option")
)

// InputError locates a problem in an input table. Line and Column are 1-based (Column counts bytes);
// either is 0 when it does not apply.
type InputError struct {
	File   string
	Line   int
	Column int
	Field  string // the column's name, when there is one
	Msg    string // what is wrong, and what to change
	Err    error  // sentinel cause
}

func (e *InputError) Error() string {
	pos := e.File
	if e.Line > 0 {
		pos += fmt.Sprintf(":%d", e.Line)
		if e.Column > 0 {
			pos += fmt.Sprintf(":%d", e.Column)
		}
	}
	if e.Field != "" {
		return pos + ": " + e.Field + ": " + e.Msg
	}
	return pos + ": " + e.Msg
}

func (e *InputError) Unwrap() error { return e.Err }
