// Command assay compiles experiment metric definitions into SQL and turns
// the results into statistics. See README.md.
package main

import (
	"os"

	"github.com/assay-dev/assay/cli"
)

func main() { os.Exit(cli.Run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr)) }
