// Package input is how nlens reads its users' files: bounded, typed reads
// (ReadFile: regular files only, a size cap per kind of file) and strict,
// positioned YAML decoding (Decode and Doc), with problems returned as
// values of type *Error, shaped like encoding/csv.ParseError: the file, the
// 1-based line and column, the field as a path ("transfers[2].rate"), a
// message saying what was expected, and the wrapped cause (Unwrap), so that
// errors.As still finds an I/O error or a numerical failure with its number.
// Several problems found together are an Errors list.
//
// The package knows nothing of nlens's model: the knowledge base, site
// files, study files, sample tables and rules files all go through it.
package input
