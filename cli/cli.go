// Package cli implements the assay command line. Run is the whole program
// with its streams passed in, so tests drive a command, its output and its
// exit code in-process.
package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
)

// Exit codes. They are part of the documented interface.
const (
	ExitOK     = 0 // success
	ExitInput  = 1 // invalid spec, flags or arguments
	ExitEngine = 2 // the database could not be opened or a query failed
	ExitSRM    = 4 // sample-ratio mismatch alarm
	ExitHarm   = 5 // a guard metric shows harm (only with --fail-on-harm)
	// ExitHold: assay rampcheck found something to fix before the rollout
	// is widened (its fix-first list is not empty).
	ExitHold = 6
	// ExitInterrupted is the conventional code for a run stopped by SIGINT.
	ExitInterrupted = 130
)

const usage = `assay compiles experiment metric definitions into SQL and analyses the results.

Usage:
  assay check SPEC.toml              validate a spec (or a shared library file); print every problem
  assay compile [flags] SPEC.toml    print the SQL for a spec
  assay run [flags] SPEC.toml        run the SQL on DuckDB (or --dsn PostgreSQL/MySQL) and print the analysis
  assay analyze SPEC.toml --aggregates FILE
                                     analyse a result set your own pipeline exported (CSV or JSON)
  assay calibrate [flags] SPEC.toml  re-split units at random many times (A/A) and
                                     report each metric's false-positive rate
  assay rampcheck [flags] SPEC.toml  early read of the first rollout step: is it safe to widen?
                                     (sample ratio, logging, guards at a looser level; a fix-first list)
  assay size [flags] SPEC.toml       before launch: baselines, traffic and the whole-week
                                     duration a target effect needs, from a pre-period
  assay fleet --out DIR [--store FILE] SPEC|DIR|GLOB...
                                     run many specs on one connection: a report file and a status
                                     line each, results appended to a store, one exit status
  assay history --store FILE EXPERIMENT METRIC
                                     how a metric's estimate and interval moved across stored runs
  assay reach METRIC SPEC|DIR...     list the specs that use a shared library metric
  assay version                      print the version

Run 'assay COMMAND --help' for a command's flags.

Exit codes: 0 ok, 1 input error, 2 engine error, 3 stale SQL (compile --check),
4 sample-ratio mismatch, 5 guard harm (with --fail-on-harm), 6 something to fix
first (rampcheck), 130 interrupted.
`

// Run runs the assay command line with args (without the program name).
func Run(args []string, stdin io.Reader, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "assay: internal error: %v\nPlease report this with the spec that caused it.\n", r)
			code = ExitEngine
		}
	}()
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return ExitInput
	}
	switch args[0] {
	case "-h", "--help", "help":
		fmt.Fprint(stdout, usage)
		return ExitOK
	case "-v", "--version", "version":
		fmt.Fprintf(stdout, "assay %s\n", compiler.Version)
		return ExitOK
	case "check":
		return cmdCheck(args[1:], stdout, stderr)
	case "compile":
		return cmdCompile(args[1:], stdout, stderr)
	case "run":
		return cmdRun(args[1:], stdout, stderr)
	case "analyze":
		return cmdAnalyze(args[1:], stdout, stderr)
	case "calibrate":
		return cmdCalibrate(args[1:], stdout, stderr)
	case "rampcheck":
		return cmdRampCheck(args[1:], stdout, stderr)
	case "size":
		return cmdSize(args[1:], stdout, stderr)
	case "reach":
		return cmdReach(args[1:], stdout, stderr) // library.go
	case "fleet":
		return cmdFleet(args[1:], stdout, stderr) // fleet.go
	case "history":
		return cmdHistory(args[1:], stdout, stderr) // history.go
	}
	fmt.Fprintf(stderr, "assay: unknown command %q\n\n%s", args[0], usage)
	return ExitInput
}

// flagSet makes a flag set that prints to stderr and parses flags given
// after the spec path too.
func flagSet(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet("assay "+name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "Usage: assay %s\n\n", synopsis)
		fs.PrintDefaults()
	}
	return fs
}

// parse parses flags that may come before or after the single positional
// spec argument.
func parse(fs *flag.FlagSet, args []string) (string, int, bool) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return "", ExitOK, false
			}
			return "", ExitInput, false
		}
		if fs.NArg() == 0 {
			break
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
	if len(pos) != 1 {
		fmt.Fprintf(fs.Output(), "%s: expected one spec file, got %d\n", fs.Name(), len(pos))
		fs.Usage()
		return "", ExitInput, false
	}
	return pos[0], 0, true
}

// load reads and checks a spec, printing diagnostics to stderr.
func load(path string, stderr io.Writer) (*metrics.Spec, bool) {
	return loadFor(path, "", stderr) // library.go
}

// loadReport prints diagnostics and reports whether the spec can be used.
func loadReport(path string, spec *metrics.Spec, ds metrics.Diagnostics, stderr io.Writer) (*metrics.Spec, bool) {
	if spec == nil || ds.HasErrors() {
		n := 0
		for _, d := range ds {
			if d.Severity == metrics.Error {
				n++
			}
		}
		fmt.Fprintf(stderr, "%s: %d error(s)\n", path, n)
		return nil, false
	}
	return spec, true
}

func printDiags(w io.Writer, ds metrics.Diagnostics, src []byte) {
	for _, d := range ds {
		fmt.Fprint(w, d.Long(src))
	}
}
