package report

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
)

// TestFactsForcings checks that `nlens facts forcings` shows every
// management tag, every fire severity and the sources of each, and that the
// JSON carries the same table.
func TestFactsForcings(t *testing.T) {
	kb := testKB(t)
	var buf bytes.Buffer
	if err := Facts(&buf, kb, "forcings", FormatTable); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, m := range kb.Forcings.Management {
		if !strings.Contains(out, m.ID) {
			t.Errorf("management %s missing:\n%s", m.ID, out)
		}
		for sev := range m.Severity {
			if !strings.Contains(out, "severity "+sev) {
				t.Errorf("%s severity %s missing", m.ID, sev)
			}
		}
		for _, ref := range m.Refs {
			r, ok := kb.Reference(ref)
			if !ok {
				t.Errorf("%s cites unknown reference %s", m.ID, ref)
				continue
			}
			// the citation may be wrapped over lines; compare words
			if !strings.Contains(strings.Join(strings.Fields(out), " "), strings.Fields(r.Cite())[0]) {
				t.Errorf("%s: citation %s missing", m.ID, r.Cite())
			}
		}
	}
	for _, tag := range kb.Forcings.ContextOnly {
		if !strings.Contains(out, tag) {
			t.Errorf("context-only tag %s missing", tag)
		}
	}
	buf.Reset()
	if err := Facts(&buf, kb, "forcings", FormatJSON); err != nil {
		t.Fatal(err)
	}
	var got struct {
		Forcings struct {
			Management []struct{ ID string } `json:"management"`
		} `json:"forcings"`
	}
	if err := json.Unmarshal(buf.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Forcings.Management) != len(kb.Forcings.Management) {
		t.Errorf("JSON lists %d managements, want %d", len(got.Forcings.Management), len(kb.Forcings.Management))
	}
}
