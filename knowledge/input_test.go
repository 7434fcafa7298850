package knowledge

import (
	"errors"
	"testing"

	"nlens/knowledge/input"
)

// The old names still work: knowledge.Recover stops a parser's panic (it
// must be input.Recover itself, not a wrapper, or the panic would escape),
// and a knowledge.InputError is an *input.Error.
func TestOldNamesStillWork(t *testing.T) {
	t.Parallel()
	parse := func() (err error) {
		defer Recover("s.yaml", "study", &err)
		var items []int
		_ = items[len("x")]
		return nil
	}
	err := parse()
	var ie *input.Error
	if !errors.As(err, &ie) || ie.File != "s.yaml" || ie.Line != 1 {
		t.Fatalf("got %#v", err)
	}
	var old *InputError = ie
	// The flow list opened on line 1 is still open when the text ends, on
	// line 2 (counted by hand).
	if _, err := Decode("f.yaml", []byte("a: [\n"), &struct{}{}); !errors.As(err, &old) || old.Line != 2 {
		t.Errorf("Decode through the old name: %v", err)
	}
}
