package dialects_test

// Golden SQL for specs that use the local-time functions. Each folder
// under testdata/golden holds one case, laid out as ../testdata/golden:
//
//	testdata/golden/<case>/spec.toml       the input spec
//	testdata/golden/<case>/<dialect>.sql   what `assay compile --dialect <dialect>` prints
//
// Refresh the expected files with
//
//	go test ./dialects/ -run Golden -update
//
// and review the diff like any other code change.

import (
	"flag"
	"os"
	"path/filepath"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

var update = flag.Bool("update", false, "rewrite golden files")

func TestLocalTimeGolden(t *testing.T) {
	specs, err := filepath.Glob("testdata/golden/*/spec.toml")
	if err != nil || len(specs) == 0 {
		t.Fatalf("no golden cases found (%v)", err)
	}
	for _, spec := range specs {
		dir := filepath.Dir(spec)
		for _, name := range dialects.Names() {
			t.Run(filepath.Base(dir)+"/"+name, func(t *testing.T) {
				d, _ := dialects.Lookup(name)
				s, _, ds := metrics.LoadFile(spec)
				if ds.HasErrors() {
					t.Fatal(ds)
				}
				p, ds := compiler.Compile(s, compiler.Options{})
				if ds.HasErrors() {
					t.Fatal(ds)
				}
				q, err := compiler.Print(p, d)
				if err != nil {
					t.Fatal(err)
				}
				got := q.Script(true, true)
				want := filepath.Join(dir, name+".sql")
				if *update {
					if err := os.WriteFile(want, []byte(got), 0o644); err != nil {
						t.Fatal(err)
					}
					return
				}
				b, err := os.ReadFile(want)
				if err != nil {
					t.Fatalf("%v (refresh with -update)", err)
				}
				if string(b) != got {
					t.Errorf("%s differs from the compiled SQL; refresh with -update and review the diff", want)
				}
			})
		}
	}
}
