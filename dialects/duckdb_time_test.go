package dialects_test

// DuckDB runs of the local-time and stored-time SQL. Expected values come
// from Go's time package (IANA zone data from time/tzdata), which is not
// the code under test, and from hand-worked examples noted beside them.

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
	_ "time/tzdata"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/metrics/timefmt"
)

func openDuck(t *testing.T, dir string) *sql.DB {
	t.Helper()
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: dir, Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	// A session zone far from every zone below: results must not depend on it.
	if _, err := db.Exec("SET TimeZone = 'Asia/Tokyo'"); err != nil {
		t.Fatal(err)
	}
	return db
}

// TestDuckDBLocalPartsFollowSpecZone evaluates Dialect.Local in DuckDB for
// instants around daylight-saving changes and compares with Go's time
// package in the same zone.
func TestDuckDBLocalPartsFollowSpecZone(t *testing.T) {
	db := openDuck(t, "")
	d := dialects.DuckDB{}
	instants := []string{
		"2026-03-08T07:59:59Z", "2026-03-08T08:00:00Z", // Chicago: 01:59:59 CST, 03:00 CDT
		"2026-03-29T00:59:59Z", "2026-03-29T01:00:00Z", // Berlin: 01:59:59 CET, 03:00 CEST
		"2026-01-04T23:30:00Z", "2026-01-05T00:30:00Z", // a Sunday/Monday boundary in UTC
		"2026-12-31T23:00:00Z", // 2027 already in Berlin; ISO week starts 2026-12-28
	}
	for _, zone := range []string{"UTC", "America/Chicago", "Europe/Berlin", "Asia/Kolkata"} {
		loc, err := time.LoadLocation(zone)
		if err != nil {
			t.Fatal(err)
		}
		for _, in := range instants {
			ts, _ := time.Parse(time.RFC3339, in)
			us := fmt.Sprint(ts.UnixMicro())
			local := ts.In(loc)
			wd := int(local.Weekday())
			if wd == 0 {
				wd = 7
			}
			monday := local.AddDate(0, 0, 1-wd)
			want := map[string]string{
				dialects.PartDate:    local.Format("2006-01-02"),
				dialects.PartWeek:    monday.Format("2006-01-02"),
				dialects.PartHour:    fmt.Sprint(local.Hour()),
				dialects.PartWeekday: fmt.Sprint(wd),
			}
			for part, w := range want {
				q := "SELECT CAST(" + d.Local(us, zone, part) + " AS VARCHAR)"
				var got string
				if err := db.QueryRow(q).Scan(&got); err != nil {
					t.Fatalf("%s: %v", q, err)
				}
				if got != w {
					t.Errorf("%s in %s, %s: got %s, want %s", in, zone, part, got, w)
				}
			}
		}
	}
}

// TestDuckDBStoredTimesFromCSV reads a CSV file whose time columns hold
// epoch numbers and text, and checks the microseconds StoredMicros gives
// against Go's time package.
func TestDuckDBStoredTimesFromCSV(t *testing.T) {
	dir := t.TempDir()
	// 2026-06-02T10:00:00.25Z; text is wall-clock time in Europe/Berlin (CEST, +02:00).
	csv := "s,ms,us,txt,iso\n1780394400,1780394400250,1780394400250000,02/06/2026 12:00:00,2026-06-02T12:00:00.250000\n"
	if err := os.WriteFile(filepath.Join(dir, "t.csv"), []byte(csv), 0o644); err != nil {
		t.Fatal(err)
	}
	db := openDuck(t, dir)
	d := dialects.DuckDB{}
	base := time.Date(2026, 6, 2, 10, 0, 0, 0, time.UTC).UnixMicro()
	tests := []struct {
		col, format string
		want        int64
	}{
		{"s", "epoch_seconds", base},
		{"ms", "epoch_millis", base + 250000},
		{"us", "epoch_micros", base + 250000},
		{"txt", "%d/%m/%Y %H:%M:%S", base},
		{"iso", "%Y-%m-%dT%H:%M:%S.%f", base + 250000},
	}
	for _, tc := range tests {
		f, err := timefmt.Parse(tc.format)
		if err != nil {
			t.Fatal(err)
		}
		q := "SELECT " + dialects.TimeMicros(d, `x."`+tc.col+`"`, f, "Europe/Berlin") + " FROM read_csv('t.csv') AS x"
		var got int64
		if err := db.QueryRow(q).Scan(&got); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		if got != tc.want {
			t.Errorf("%s as %s: got %d, want %d", tc.col, tc.format, got, tc.want)
		}
	}
}

// TestDuckDBRunsEpochAndTextSources runs a whole spec over CSV files: the
// exposures store epoch milliseconds, the outcomes Berlin wall-clock text.
// Expected values are worked by hand from the rows (see the comments).
func TestDuckDBRunsEpochAndTextSources(t *testing.T) {
	dir := t.TempDir()
	files := map[string]string{
		// u1 02 Jun 10:00Z, u2 03 Jun 10:00Z (control); u3 02 Jun 10:00Z,
		// u4 05 Jun 10:00Z (short); u5 31 May 21:00Z = 23:00 Berlin, before
		// the start (1 Jun 00:00 Berlin), so never exposed.
		"exposures.csv": "visitor_id,arm,shown_ms\nu1,control,1780394400000\nu2,control,1780480800000\nu3,short,1780394400000\nu4,short,1780653600000\nu5,short,1780261200000\n",
		// Berlin wall-clock (CEST = UTC+2):
		// u1 02 Jun 13:00 (11:00Z, Tue) and 23:30 (21:30Z, Tue): both in [0d, 3d);
		// u2 03 Jun 11:30 = 09:30Z, half an hour before its trigger (read as
		//    UTC it would be after it);
		// u3 06 Jun 11:00 = 09:00Z, after its window ended 05 Jun 10:00Z;
		// u4 06 Jun 11:00 = 09:00Z (Sat), inside [05 Jun 10:00Z, 08 Jun 10:00Z).
		"signups.csv": "visitor_id,signed_up\nu1,02/06/2026 13:00:00\nu1,02/06/2026 23:30:00\nu2,03/06/2026 11:30:00\nu3,06/06/2026 11:00:00\nu4,06/06/2026 11:00:00\n",
	}
	for name, body := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	spec := `[experiment]
id = "stored-times"
hypothesis = "A shorter signup form makes more visitors finish signing up within three days."
start = 2026-06-01T00:00:00
end = 2026-06-29T00:00:00
time_zone = "Europe/Berlin"

[variants]
control = 1
short = 1

[sources.exposures]
file = "exposures.csv"
unit = "visitor_id"
time = "shown_ms"
time_format = "epoch_millis"
columns = ["visitor_id", "arm", "shown_ms"]

[sources.signups]
file = "signups.csv"
unit = "visitor_id"
time = "signed_up"
time_format = "%d/%m/%Y %H:%M:%S"
columns = ["visitor_id", "signed_up"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.signups_3d]
role = "primary"
kind = "count"
source = "signups"
window = ["0d", "3d"]

[metrics.weekday_signups_3d]
role = "secondary"
kind = "count"
source = "signups"
filter = "local_weekday(signed_up) <= 5"
window = ["0d", "3d"]
`
	s, ds := metrics.Load("stored.toml", []byte(spec))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	q, err := compiler.Print(p, dialects.DuckDB{})
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Query(context.Background(), openDuck(t, dir), p, q, true)
	if err != nil {
		t.Fatalf("%v\n%s", err, q.Script(true, true))
	}
	// control: u1 has 2 signups (both on a Tuesday), u2 none in window;
	// short: u3 none in window, u4 one on a Saturday.
	want := map[string]map[string]float64{
		"control": {"units": 2, "signups_3d__mean": 1, "weekday_signups_3d__mean": 1},
		"short":   {"units": 2, "signups_3d__mean": 0.5, "weekday_signups_3d__mean": 0},
	}
	if len(res.Rows) != len(want) {
		t.Fatalf("got %d variant rows, want %d", len(res.Rows), len(want))
	}
	for _, r := range res.Rows {
		w, ok := want[r.Variant]
		if !ok {
			t.Errorf("unexpected variant %q", r.Variant)
			continue
		}
		if float64(r.Units) != w["units"] {
			t.Errorf("%s: got %d units, want %v", r.Variant, r.Units, w["units"])
		}
		for k, v := range w {
			if !strings.HasSuffix(k, "__mean") {
				continue
			}
			if got, ok := r.Stats[k]; !ok || got != v {
				t.Errorf("%s: got %s = %v (present %v), want %v", r.Variant, k, got, ok, v)
			}
		}
	}
}
