package cli_test

import (
	"bytes"
	"strings"
	"testing"

	"github.com/assay-dev/assay/cli"
)

func TestSizeFlags(t *testing.T) {
	spec := "../testdata/golden/stand_in/spec.toml"
	cases := []struct {
		name   string
		args   []string
		code   int
		stdout string // substring
		stderr string // substring
	}{
		{"sql", []string{"size", "--format", "sql", spec}, cli.ExitOK, "-- Planning query: no variants.", ""},
		{"sql postgres", []string{"size", "--format", "sql", "--dialect", "postgres", spec}, cli.ExitOK, "CAST('all' AS TEXT) AS variant", ""},
		{"sql overlapping period", []string{"size", "--format", "sql", "--start", "2026-04-20T00:00:00Z", "--end", "2026-05-04T00:00:00Z", spec}, cli.ExitInput, "", "overlaps the experiment"},
		{"half a period", []string{"size", "--start", "2026-04-20T00:00:00Z", spec}, cli.ExitInput, "", "both --start and --end"},
		{"no planning table", []string{"size", "../testdata/demo/checkout.toml"}, cli.ExitInput, "", "no [planning] table"},
		{"format", []string{"size", "--format", "html", spec}, cli.ExitInput, "", "--format must be"},
		{"power", []string{"size", "--power", "1.5", spec}, cli.ExitInput, "", "--power must be"},
		{"max weeks", []string{"size", "--max-weeks", "53", spec}, cli.ExitInput, "", "--max-weeks must be"},
		{"target zero", []string{"size", "--target", "0", spec}, cli.ExitInput, "", "--target must be positive"},
		{"scale without target", []string{"size", "--target-scale", "absolute", spec}, cli.ExitInput, "", "needs --target"},
		{"help lists size", []string{"help"}, cli.ExitOK, "assay size [flags] SPEC.toml", ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var o, e bytes.Buffer
			code := cli.Run(tc.args, nil, &o, &e)
			if code != tc.code || !strings.Contains(o.String(), tc.stdout) || !strings.Contains(e.String(), tc.stderr) {
				t.Errorf("exit %d (want %d)\nstdout: %.400s\nstderr: %s", code, tc.code, o.String(), e.String())
			}
		})
	}
}
