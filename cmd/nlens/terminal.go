package main

import (
	"io"
	"os"
)

// isTerminal reports whether w is a character device (a terminal), so that
// progress is drawn only for people, never into files or pipes.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	if err != nil {
		return false
	}
	return st.Mode()&os.ModeCharDevice != 0
}
