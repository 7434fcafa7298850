package main

import (
	"bytes"
	"strings"
	"testing"
	"unicode/utf8"
)

// Terminal output stays readable on an 80-column terminal (issue 3): no
// line of the table formats is wider than 80 characters.
func TestTablesFit80Columns(t *testing.T) {
	t.Parallel()
	for _, args := range [][]string{
		{"demo", "--draws", "8"},
		{"check", "../../testdata/demo/study.yaml"},
		{"facts"},
		{"simulate", "--site", "temperate-deciduous-forest", "--change", "denitrification=x3", "--years", "5", "--trajectory"},
		{"calc", "mix", "--source", "fertilizer=0:0.5", "--source", "manure=10:0.5", "--mixture", "4:0.5"},
	} {
		var out, errb bytes.Buffer
		if code := runEnv(&env{stdout: &out, stderr: &errb}, args); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errb.String())
		}
		for i, line := range strings.Split(out.String(), "\n") {
			if n := utf8.RuneCountInString(line); n > 80 {
				t.Errorf("%v line %d is %d characters: %q", args, i+1, n, line)
			}
		}
	}
}
