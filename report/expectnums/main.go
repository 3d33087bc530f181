// Command expectnums reads a report in the JSON contract (assay run
// --format json) on standard input and prints, one per line, the numbers
// the HTML page of the same run must show (report.ExpectedNumbers), for
// scripts/browser-check:
//
//	go run ./cmd/assay run --format json spec.toml | go run ./report/expectnums > numbers.txt
package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"

	"github.com/assay-dev/assay/report"
)

func main() {
	b, err := io.ReadAll(os.Stdin)
	if err != nil {
		fmt.Fprintln(os.Stderr, "expectnums:", err)
		os.Exit(2)
	}
	var r report.Report
	if err := json.Unmarshal(b, &r); err != nil {
		fmt.Fprintln(os.Stderr, "expectnums: the input is not a JSON report:", err)
		os.Exit(2)
	}
	for _, n := range report.ExpectedNumbers(&r) {
		fmt.Println(n)
	}
}
