package main

import (
	"io"

	"nlens/rank/report"
)

// humanOut is where a command writes its result: through
// report.EscapeWriter for the human-readable formats, so that no control
// character from a user's file reaches the terminal raw; JSON is written
// as it is (its encoder escapes control characters itself).
func humanOut(w io.Writer, format string) io.Writer {
	if format == report.FormatJSON {
		return w
	}
	return report.EscapeWriter(w)
}
