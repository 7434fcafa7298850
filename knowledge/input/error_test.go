package input

import (
	"errors"
	"fmt"
	"io/fs"
	"testing"
)

// numeric is a stand-in for a numerical failure that carries its number
// (as forward.ConditionError carries the condition number).
type numeric struct{ cond float64 }

func (e *numeric) Error() string { return fmt.Sprintf("condition number %g", e.cond) }

// The text of an Error is "file:line: field: message", like a compiler's;
// the message holds the cause's text, and a cause alone stands for it. Expected texts are
// written from that rule (DESIGN §7).
func TestErrorText(t *testing.T) {
	t.Parallel()
	cause := errors.New("no such file or directory")
	tests := []struct {
		name string
		e    Error
		want string
	}{
		{"all parts", Error{File: "s.yaml", Line: 3, Column: 7, Field: "groups.a.n", Msg: "expected a number"}, "s.yaml:3: groups.a.n: expected a number"},
		{"no line", Error{File: "s.yaml", Msg: "the file is empty"}, "s.yaml: the file is empty"},
		{"no field", Error{File: "s.yaml", Line: 2, Msg: "YAML syntax: x"}, "s.yaml:2: YAML syntax: x"},
		{"message with a cause", Error{File: "s.yaml", Msg: "cannot read study file: gone", Err: cause}, "s.yaml: cannot read study file: gone"},
		{"cause only", Error{File: "site.yaml", Line: 6, Field: "transfers", Err: &numeric{8e12}}, "site.yaml:6: transfers: condition number 8e+12"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			t.Parallel()
			if got := tt.e.Error(); got != tt.want {
				t.Errorf("got %q, want %q", got, tt.want)
			}
		})
	}
}

// A numerical failure wrapped at a position, then in a list, then with
// fmt.Errorf's %w, is still found by errors.As with its number; an I/O
// cause by errors.Is.
func TestErrorKeepsItsCause(t *testing.T) {
	t.Parallel()
	var d struct {
		Transfers []struct {
			Rate float64 `yaml:"rate"`
		} `yaml:"transfers"`
	}
	doc, err := Decode("site.yaml", []byte("transfers:\n  - {rate: 1}\n"), &d)
	if err != nil {
		t.Fatal(err)
	}
	wrapped := fmt.Errorf("load site: %w", Errors{doc.WrapAt([]any{"transfers"}, &numeric{8e12})})
	var ne *numeric
	if !errors.As(wrapped, &ne) || ne.cond != 8e12 {
		t.Fatalf("errors.As lost the number: %v", wrapped)
	}
	if got, want := wrapped.Error(), "load site: site.yaml:2: transfers: condition number 8e+12"; got != want {
		t.Errorf("got %q, want %q", got, want)
	}
	var ie *Error
	if !errors.As(wrapped, &ie) || ie.Line != 2 || ie.Column != 3 {
		t.Errorf("position lost: %+v", ie)
	}
	notExist := &Error{File: "x", Msg: "cannot read", Err: fs.ErrNotExist}
	if !errors.Is(fmt.Errorf("w: %w", notExist), fs.ErrNotExist) {
		t.Error("errors.Is does not reach the cause")
	}
}

// ErrorAt names the field by its path, written once; a path that ends in
// a missing key is placed on the deepest node that exists (line and
// column counted by hand in the invented text).
func TestErrorAt(t *testing.T) {
	t.Parallel()
	var d map[string]any
	doc, err := Decode("f.yaml", []byte("pools:\n  organic: 10\ntransfers:\n  - {rate: 2}\n"), &d)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		path      []any
		line, col int
		want      string
	}{
		{[]any{"transfers", 0, "rate"}, 4, 12, "f.yaml:4: transfers[0].rate: bad"},
		{[]any{"pools", "nitrate"}, 2, 0, "f.yaml:2: pools.nitrate: bad"},
	}
	for _, tt := range tests {
		e := doc.ErrorAt(tt.path, "bad")
		if e.Error() != tt.want || e.Line != tt.line || e.Column != tt.col {
			t.Errorf("ErrorAt(%v) = %q at %d:%d, want %q at %d:%d", tt.path, e.Error(), e.Line, e.Column, tt.want, tt.line, tt.col)
		}
	}
}

// Flatten finds every *Error in a tree of lists, joins and wraps, in order.
func TestFlatten(t *testing.T) {
	t.Parallel()
	a, b, c := &Error{File: "a"}, &Error{File: "b"}, &Error{File: "c"}
	err := errors.Join(Errors{a, b}, fmt.Errorf("x: %w", c), errors.New("not an input error"))
	got := Flatten(err)
	if len(got) != 3 || got[0] != a || got[1] != b || got[2] != c {
		t.Errorf("Flatten = %v", got)
	}
	if Errors(nil).Err() != nil {
		t.Error("an empty list should be no error")
	}
}

// Recover turns a panic in a parser into a positioned error.
func TestRecover(t *testing.T) {
	t.Parallel()
	parse := func() (err error) {
		defer Recover("s.yaml", "study", &err)
		var items []int
		_ = items[len("x")] // a programmer's mistake reached by input
		return nil
	}
	err := parse()
	want := "s.yaml:1: nlens could not read this study (internal error: runtime error: index out of range [1] with length 0); please report it with the file"
	if err == nil || err.Error() != want {
		t.Errorf("got %v, want %q", err, want)
	}
}
