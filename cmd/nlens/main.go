// Command nlens tells an isotope ecologist what an observed δ15N shift
// between treatments could mean. See README.md.
package main

import (
	"os"
)

func main() {
	os.Exit(run(os.Stdout, os.Stderr, os.Args[1:]))
}
