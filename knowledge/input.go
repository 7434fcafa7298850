package knowledge

import "nlens/knowledge/input"

// The positioned decoding of input files moved to package input; these
// names remain so that callers keep compiling until they use the new ones.

// InputError is input.Error.
type InputError = input.Error

// InputErrors is input.Errors.
type InputErrors = input.Errors

// Doc is input.Doc.
type Doc = input.Doc

// Decode is input.Decode.
func Decode(file string, data []byte, v any) (*Doc, error) { return input.Decode(file, data, v) }

// Flatten is input.Flatten.
func Flatten(err error) []*InputError { return input.Flatten(err) }

// Recover is input.Recover. It is a variable holding that function, not a
// wrapper, because recover stops a panic only when called directly by the
// deferred function: defer knowledge.Recover(…) must defer input.Recover
// itself.
var Recover = input.Recover
