package cohort

import (
	"errors"
	"fmt"
)

// Sentinel causes of input errors.
var (
	ErrNoColumn  = errors.New("cohort: column not found")
	ErrNotNumber = errors.New("cohort: not a number")
	ErrNonFinite = errors.New("cohort: value is infinite or out of range")
	ErrRagged    = errors.New("cohort: wrong number of fields")
	ErrEmpty     = errors.New("cohort: no data")
	ErrDuplicate = errors.New("cohort: duplicate")
	ErrNotText   = errors.New("cohort: not a text table")
	ErrOrder     = errors.New("cohort: window order not readable")
	ErrMismatch  = errors.New("cohort: files do not agree")
	ErrMissingID = errors.New("cohort: participant id is empty")
	ErrOpen      = errors.New("cohort: cannot read input")
	ErrTooFew    = errors.New("cohort: too few participants")
	ErrBadOption = errors.New("cohort: invalid option")
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
	// Cause is the error of the system or library beneath, when there is one (a missing file:
	// errors.Is(err, fs.ErrNotExist) holds); its words are already in Msg.
	Cause error
}

func (e *InputError) Error() string {
	if e.File == "" && e.Line == 0 && e.Field == "" {
		return e.Msg
	}
	pos := e.File
	if pos == "" {
		pos = "input"
	}
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

// Unwrap gives the sentinel cause and the error beneath, so that errors.Is finds either.
func (e *InputError) Unwrap() []error {
	if e.Cause == nil {
		return []error{e.Err}
	}
	return []error{e.Err, e.Cause}
}
