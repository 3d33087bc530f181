package safety_test

import (
	"bytes"
	"context"
	"crypto/rand"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"net/url"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/go-sql-driver/mysql"
	_ "github.com/jackc/pgx/v5/stdlib"

	"github.com/assay-dev/assay/cli"
	"github.com/assay-dev/assay/engine"
)

// The hostile-name run on the database servers that test.sh starts (see
// crossengine's package comment): PostgreSQL through
// ASSAY_TEST_POSTGRES_DSN and MariaDB through ASSAY_TEST_MYSQL_DSN. Without
// them the tests skip, unless ASSAY_REQUIRE_SERVERS=1.

// server is one database server under test.
type server struct {
	name   string // dialect
	env    string
	driver string
	dsn    string // for database/sql
	quote  func(string) string
	time   string // column type of naive timestamps
	float  string
	text   string
}

func serverFor(t *testing.T, name string) *server {
	t.Helper()
	s := &server{name: name}
	switch name {
	case "postgres":
		s.env, s.driver, s.time, s.float, s.text = "ASSAY_TEST_POSTGRES_DSN", "pgx", "TIMESTAMP", "DOUBLE PRECISION", "TEXT"
		s.quote = qi
	case "mysql":
		s.env, s.driver, s.time, s.float, s.text = "ASSAY_TEST_MYSQL_DSN", "mysql", "DATETIME(6)", "DOUBLE", "TEXT"
		s.quote = func(x string) string { return "`" + strings.ReplaceAll(x, "`", "``") + "`" }
	}
	uri := os.Getenv(s.env)
	if uri == "" {
		if os.Getenv("ASSAY_REQUIRE_SERVERS") == "1" {
			t.Fatalf("%s is not set but ASSAY_REQUIRE_SERVERS=1", s.env)
		}
		t.Skipf("%s is not set (./test.sh starts a throw-away server and sets it)", s.env)
	}
	s.dsn = uri
	if name == "mysql" {
		u, err := url.Parse(uri)
		if err != nil {
			t.Fatal(err)
		}
		cfg := mysql.NewConfig()
		cfg.User = u.User.Username()
		cfg.Passwd, _ = u.User.Password()
		cfg.Net, cfg.Addr = "tcp", u.Host
		cfg.DBName = strings.TrimPrefix(u.Path, "/")
		cfg.Params = map[string]string{"time_zone": "'+00:00'"}
		s.dsn = cfg.FormatDSN()
	}
	return s
}

// serverRows are the fixture rows of hostileDB, as values for placeholders.
func serverRows() (exp, ord [][]any) {
	day := func(d, h int) time.Time { return time.Date(2026, 5, d, h, 0, 0, 0, time.UTC) }
	for u := 1; u <= 11; u++ {
		v := control
		if u >= 7 {
			v = treatment
		}
		exp = append(exp, []any{int64(u), v, day(2+u%5, 10), pageValue})
	}
	exp = append(exp, []any{int64(12), control, day(3, 10), "other"}, []any{nil, control, day(3, 10), pageValue})
	ord = [][]any{
		{int64(1), day(4, 9), 10.0, `';DROP`}, {int64(1), day(5, 9), 5.5, "ok"}, {int64(1), day(13, 9), 100.0, "ok"},
		{int64(7), day(5, 9), 1.0, "ok"}, {int64(7), day(6, 9), 2.0, "ok"}, {int64(7), day(7, 9), 3.0, "ok"},
	}
	return exp, ord
}

// serverSums reads every row of every table in schemas and returns, per
// table, its row count and a SHA-256 over its sorted rows, computed here
// rather than by the server.
func serverSums(t *testing.T, db *sql.DB, s *server, schemas []string) map[string]string {
	t.Helper()
	out := map[string]string{}
	for _, schema := range schemas {
		rows, err := db.Query("SELECT table_name FROM information_schema.tables WHERE table_schema = "+placeholder(s), schema)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for rows.Next() {
			var n string
			if err := rows.Scan(&n); err != nil {
				t.Fatal(err)
			}
			names = append(names, n)
		}
		rows.Close()
		for _, n := range names {
			rs, err := db.Query("SELECT * FROM " + s.quote(schema) + "." + s.quote(n))
			if err != nil {
				t.Fatal(err)
			}
			cols, _ := rs.Columns()
			var lines []string
			for rs.Next() {
				vals := make([]sql.NullString, len(cols))
				ptrs := make([]any, len(cols))
				for i := range vals {
					ptrs[i] = &vals[i]
				}
				if err := rs.Scan(ptrs...); err != nil {
					t.Fatal(err)
				}
				b, _ := json.Marshal(vals)
				lines = append(lines, string(b))
			}
			rs.Close()
			sort.Strings(lines)
			h := sha256.Sum256([]byte(strings.Join(lines, "\n")))
			out[schema+"."+n] = fmt.Sprintf("%d rows, sha256 %s", len(lines), hex.EncodeToString(h[:8]))
		}
	}
	return out
}

func placeholder(s *server) string {
	if s.name == "postgres" {
		return "$1"
	}
	return "?"
}

func placeholders(s *server, n int) string {
	p := make([]string, n)
	for i := range p {
		if s.name == "postgres" {
			p[i] = fmt.Sprintf("$%d", i+1)
		} else {
			p[i] = "?"
		}
	}
	return strings.Join(p, ", ")
}

func TestHostileNamesServers(t *testing.T) {
	for _, name := range []string{"postgres", "mysql"} {
		t.Run(name, func(t *testing.T) {
			s := serverFor(t, name)
			db, err := sql.Open(s.driver, s.dsn)
			if err != nil {
				t.Fatal(err)
			}
			defer db.Close()
			db.SetMaxOpenConns(1)
			b := make([]byte, 4)
			rand.Read(b)
			tag := hex.EncodeToString(b)
			// Two schemas (databases on MariaDB) of this test's own, one of
			// them with a hostile name.
			expSchema, ordSchemaName := "assay_h_"+tag, ordSchema+"_"+tag
			must := func(q string, args ...any) {
				t.Helper()
				if _, err := db.Exec(q, args...); err != nil {
					t.Fatalf("%s: %v", q, err)
				}
			}
			drop := "DROP SCHEMA IF EXISTS %s CASCADE"
			if name == "mysql" {
				drop = "DROP DATABASE IF EXISTS %s"
			}
			for _, sc := range []string{expSchema, ordSchemaName} {
				must(fmt.Sprintf(drop, s.quote(sc)))
				if name == "mysql" {
					must("CREATE DATABASE " + s.quote(sc) + " CHARACTER SET utf8mb4")
				} else {
					must("CREATE SCHEMA " + s.quote(sc))
				}
				defer db.Exec(fmt.Sprintf(drop, s.quote(sc)))
			}
			exp := s.quote(expSchema) + "." + s.quote(expTable)
			ord := s.quote(ordSchemaName) + "." + s.quote(ordTable)
			must(fmt.Sprintf("CREATE TABLE %s.%s (x INTEGER)", s.quote(expSchema), s.quote("canary")))
			must(fmt.Sprintf("INSERT INTO %s.%s VALUES (1), (2), (3)", s.quote(expSchema), s.quote("canary")))
			must(fmt.Sprintf("CREATE TABLE %s.%s (a %s)", s.quote(expSchema), s.quote("t"), s.text))
			must(fmt.Sprintf("INSERT INTO %s.%s VALUES ('keep'), ('me')", s.quote(expSchema), s.quote("t")))
			must(fmt.Sprintf("CREATE TABLE %s (%s BIGINT, %s %s, %s %s, %s %s)", exp, s.quote(unitCol), s.quote(variantCol), s.text, s.quote(timeCol), s.time, s.quote(pageCol), s.text))
			must(fmt.Sprintf("CREATE TABLE %s (%s BIGINT, %s %s, %s %s, %s %s)", ord, s.quote(unitCol), s.quote(orderTime), s.time, s.quote(amountCol), s.float, s.quote(statusCol), s.text))
			expRows, ordRows := serverRows()
			for _, r := range expRows {
				must(fmt.Sprintf("INSERT INTO %s VALUES (%s)", exp, placeholders(s, 4)), r...)
			}
			for _, r := range ordRows {
				must(fmt.Sprintf("INSERT INTO %s VALUES (%s)", ord, placeholders(s, 4)), r...)
			}
			schemas := []string{expSchema, ordSchemaName}
			before := serverSums(t, db, s, schemas)
			if len(before) != 4 {
				t.Fatalf("got tables %v, want 4", before)
			}

			dir := filepath.Join(t.TempDir(), specDir)
			if err := os.Mkdir(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			specPath := filepath.Join(dir, "spec.toml")
			spec := hostileSpecFor(expSchema+"."+expTable, ordSchemaName+"."+ordTable, false)
			if err := os.WriteFile(specPath, []byte(spec), 0o644); err != nil {
				t.Fatal(err)
			}
			var stdout, stderr bytes.Buffer
			// Breakdowns included: GROUPING SETS on PostgreSQL, a UNION ALL of
			// one grouped SELECT per breakdown on MariaDB.
			args := []string{"run", "--dsn", os.Getenv(s.env), "--format", "json", "--by", segName + ",trigger_day"}
			code := cli.Run(append(args, specPath), nil, &stdout, &stderr)
			if code != cli.ExitOK {
				t.Fatalf("assay run: got exit %d, want %d; stderr:\n%s", code, cli.ExitOK, stderr.String())
			}
			if !strings.Contains(stdout.String(), `"name": "trigger_day"`) {
				t.Errorf("assay run: no trigger_day breakdown in the report")
			}
			// Calibration runs on the server too, with the engine's own hash.
			var cout, cerr bytes.Buffer
			if code := cli.Run([]string{"calibrate", "--dsn", os.Getenv(s.env), "--splits", "20", "--format", "json", specPath}, nil, &cout, &cerr); code != cli.ExitOK {
				t.Fatalf("assay calibrate: got exit %d, want %d; stderr:\n%s", code, cli.ExitOK, cerr.String())
			}
			if !strings.Contains(cout.String(), `"tests": `) {
				t.Errorf("assay calibrate: no tests in the output:\n%s", cout.String())
			}
			// The engine's own session refuses writes: a run's connection is
			// read-only whatever SQL would reach it.
			ro, _, err := engine.Open(context.Background(), os.Getenv(s.env))
			if err != nil {
				t.Fatal(err)
			}
			for _, q := range []string{
				fmt.Sprintf("INSERT INTO %s.%s VALUES (4)", s.quote(expSchema), s.quote("canary")),
				fmt.Sprintf("DELETE FROM %s.%s", s.quote(expSchema), s.quote("canary")),
				fmt.Sprintf("CREATE TABLE %s.%s (a INTEGER)", s.quote(expSchema), s.quote("new")),
			} {
				if _, err := ro.Exec(q); err == nil {
					t.Errorf("%s: got no error on assay's session, want it refused as read-only", q)
				}
			}
			ro.Close()
			if after := serverSums(t, db, s, schemas); !reflect.DeepEqual(after, before) {
				t.Errorf("tables: got %v after the run, want %v", after, before)
			}
			var rep struct {
				Experiment struct {
					Variants []struct {
						Name     string `json:"name"`
						Eligible int64  `json:"eligible_units"`
					} `json:"variants"`
				} `json:"experiment"`
				Metrics []struct {
					Name     string `json:"name"`
					Variants []struct {
						Variant string   `json:"variant"`
						Value   *float64 `json:"value"`
					} `json:"variants"`
				} `json:"metrics"`
			}
			if err := json.Unmarshal(stdout.Bytes(), &rep); err != nil {
				t.Fatalf("report JSON: %v", err)
			}
			eligible := map[string]int64{}
			for _, v := range rep.Experiment.Variants {
				eligible[v.Name] = v.Eligible
			}
			if want := map[string]int64{control: 6, treatment: 5}; !reflect.DeepEqual(eligible, want) {
				t.Errorf("eligible units: got %v, want %v (hand count)", eligible, want)
			}
			want := map[string]map[string]float64{
				primary: {control: 2.0 / 6, treatment: 3.0 / 5},
				revenue: {control: 15.5 / 6, treatment: 6.0 / 5},
			}
			for _, m := range rep.Metrics {
				for _, v := range m.Variants {
					w, ok := want[m.Name][v.Variant]
					if !ok {
						continue
					}
					if v.Value == nil || math.Abs(*v.Value-w) > 1e-9 {
						t.Errorf("%s/%s: got %v, want %v (hand count)", m.Name, v.Variant, v.Value, w)
					}
					delete(want[m.Name], v.Variant)
				}
			}
			for m, left := range want {
				if len(left) > 0 {
					t.Errorf("metric %q: no values for %v in the report", m, left)
				}
			}
		})
	}
}
