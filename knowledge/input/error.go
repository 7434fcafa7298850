package input

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// Error is a problem in an input file, positioned like
// encoding/csv.ParseError: Line and Column are 1-based and 0 when unknown;
// Field names the offending value as a path such as "transfers[2].rate"
// (empty when the problem is not one value's, as for a YAML syntax error).
// Msg says in words what is wrong and what was expected, including the
// cause's own text where there is a cause; Err, when set, is that cause (an
// I/O error, ErrTooLarge, ErrNotRegular, a numerical failure such as
// forward.ConditionError carrying its condition number), kept so that
// errors.Is and errors.As reach it.
//
// Error prints "file:line: field: message"; the column is left out of the
// text, to keep messages short, and is there for programs that place a
// cursor.
type Error struct {
	File   string
	Line   int
	Column int
	Field  string
	Msg    string
	Err    error
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		b.WriteString(":")
		b.WriteString(strconv.Itoa(e.Line))
	}
	b.WriteString(": ")
	if e.Field != "" {
		b.WriteString(e.Field)
		b.WriteString(": ")
	}
	if e.Msg == "" && e.Err != nil {
		b.WriteString(e.Err.Error())
	} else {
		b.WriteString(e.Msg)
	}
	return b.String()
}

// Unwrap returns the cause, or nil.
func (e *Error) Unwrap() error { return e.Err }

// Errors is a list of input problems reported together, in file order.
type Errors []*Error

func (es Errors) Error() string {
	parts := make([]string, len(es))
	for i, e := range es {
		parts[i] = e.Error()
	}
	return strings.Join(parts, "\n")
}

// Unwrap lets errors.As find the first *Error (and its cause).
func (es Errors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}

// Err returns nil for an empty list and the list otherwise.
func (es Errors) Err() error {
	if len(es) == 0 {
		return nil
	}
	return es
}

// Flatten collects every *Error in err's tree (Errors, joined or wrapped
// errors), in order.
func Flatten(err error) []*Error {
	var out []*Error
	var walk func(error)
	walk = func(err error) {
		var ie *Error
		switch x := err.(type) {
		case nil:
		case interface{ Unwrap() []error }:
			for _, e := range x.Unwrap() {
				walk(e)
			}
		default:
			if errors.As(err, &ie) {
				out = append(out, ie)
			}
		}
	}
	walk(err)
	return out
}

// Recover, deferred at the boundary of a parser, turns a panic while
// reading file into an *Error: bad input must never crash nlens, and the
// user should learn which file to send with the report. what names the
// kind of file ("site file").
//
// It must be the deferred function itself (defer input.Recover(…)), since
// recover only stops a panic when called directly by a deferred function.
func Recover(file, what string, err *error) {
	if r := recover(); r != nil {
		*err = &Error{File: file, Line: 1, Msg: fmt.Sprintf("nlens could not read this %s (internal error: %v); please report it with the file", what, r)}
	}
}
