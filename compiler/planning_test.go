package compiler_test

import (
	"os"
	"strings"
	"testing"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
)

func TestStandInOptions(t *testing.T) {
	o := compiler.Options{Start: time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC), Breakdowns: []string{compiler.KeyTriggerDay}, StandIn: true}
	txt := o.Text()
	if !strings.HasSuffix(txt, ";stand_in=true") {
		t.Errorf("Text() = %q, want it to end with ;stand_in=true", txt)
	}
	back, err := compiler.ParseOptions(txt)
	if err != nil || !back.StandIn || back.Text() != txt {
		t.Errorf("ParseOptions(%q) = %+v, %v", txt, back, err)
	}
}

func TestStandInCompile(t *testing.T) {
	src, err := os.ReadFile("../testdata/golden/stand_in/spec.toml")
	if err != nil {
		t.Fatal(err)
	}
	noPlan := strings.Split(string(src), "[planning]")[0]
	noPeriod := strings.Replace(strings.Replace(string(src), "pre_start = 2026-03-02T00:00:00Z\n", "", 1), "pre_end = 2026-04-27T00:00:00Z\n", "", 1)
	day := func(d int) time.Time { return time.Date(2026, 4, d, 0, 0, 0, 0, time.UTC) }
	cases := []struct {
		name, spec string
		opt        compiler.Options
		wantErr    string // substring of the first error; "" for none
		variants   []string
	}{
		{name: "pooled", spec: string(src), opt: compiler.Options{StandIn: true}, variants: []string{"all"}},
		{name: "pooled re-split", spec: string(src), opt: compiler.Options{StandIn: true, Splits: 5}, variants: []string{"control", "big_button", "big_text"}},
		{name: "period from options", spec: noPeriod, opt: compiler.Options{StandIn: true, Start: day(1), End: day(29)}, variants: []string{"all"}},
		{name: "no period", spec: noPeriod, opt: compiler.Options{StandIn: true}, wantErr: "needs a pre-period"},
		{name: "no stand-in", spec: noPlan, opt: compiler.Options{StandIn: true}, wantErr: "needs a stand-in trigger"},
		{name: "overlap", spec: noPeriod, opt: compiler.Options{StandIn: true, Start: day(1), End: time.Date(2026, 5, 8, 0, 0, 0, 0, time.UTC)}, wantErr: "overlaps the experiment"},
		{name: "segment on the exposure source", spec: string(src), opt: compiler.Options{StandIn: true, Breakdowns: []string{"device"}}, wantErr: "not a segment"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			s, ds := metrics.Load("spec.toml", []byte(tc.spec))
			if ds.HasErrors() {
				t.Fatal(ds)
			}
			p, ds := compiler.Compile(s, tc.opt)
			if tc.wantErr != "" {
				if !ds.HasErrors() || !strings.Contains(ds.Error(), tc.wantErr) {
					t.Fatalf("diagnostics %v, want an error containing %q", ds, tc.wantErr)
				}
				return
			}
			if ds.HasErrors() {
				t.Fatal(ds)
			}
			if strings.Join(p.Variants, ",") != strings.Join(tc.variants, ",") || !p.Pooled {
				t.Errorf("variants %v (pooled %v), want %v", p.Variants, p.Pooled, tc.variants)
			}
			if s.Exposure.Source.Name != "assignments" || p.Spec.Exposure.Source.Name != "visits" {
				t.Errorf("exposure: spec %s, plan %s; the spec must not be edited", s.Exposure.Source.Name, p.Spec.Exposure.Source.Name)
			}
		})
	}
}
