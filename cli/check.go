package cli

import (
	"fmt"
	"io"

	"github.com/assay-dev/assay/compiler"
)

func cmdCheck(args []string, stdout, stderr io.Writer) int {
	fs := flagSet("check", "check SPEC.toml|LIBRARY.toml", stderr)
	var place string
	registerPlace(fs, &place) // library.go
	path, code, ok := parse(fs, args)
	if !ok {
		return code
	}
	if src, lib := isLibraryFile(path); lib { // library.go: a library checks on its own
		return checkLibrary(path, src, stdout, stderr)
	}
	spec, ok := loadFor(path, place, stderr)
	if !ok {
		return ExitInput
	}
	plan, ds := compiler.Compile(spec, compiler.Options{})
	printDiags(stderr, ds, nil)
	if ds.HasErrors() {
		return ExitInput
	}
	fmt.Fprintf(stdout, "%s: ok (%d variants, %d metrics, %d eligibility rules, %d sources)\n", path, len(plan.Variants), len(plan.Metrics), len(plan.Rules), len(spec.Sources))
	return ExitOK
}
