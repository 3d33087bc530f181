package safety_test

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
)

// slowSpec reads a generated exposure log of three billion rows: a view over
// range(), so the database file stays small while any full run takes far
// longer than a test may.
const slowSpec = `[experiment]
id = "slow"
hypothesis = "A clearer pricing page makes more visitors start a trial within a week."
start = 2026-05-01T00:00:00Z
end = 2026-05-31T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "exposures"
unit = "user_id"
time = "ts"
columns = ["user_id", "arm", "ts"]

[sources.orders]
table = "orders"
unit = "user_id"
time = "ordered_at"
columns = ["user_id", "ordered_at"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.orders_7d]
role = "primary"
kind = "count"
source = "orders"
window = ["0d", "7d"]
`

var slowDB = []string{
	`CREATE VIEW exposures AS
	 SELECT r % 1000003 AS user_id,
	        CASE WHEN r % 2 = 0 THEN 'control' ELSE 'treatment' END AS arm,
	        TIMESTAMP '2026-05-01' + to_seconds(r % 2000000) AS ts
	 FROM range(3000000000) AS g(r)`,
	`CREATE TABLE orders AS SELECT r AS user_id, TIMESTAMP '2026-05-10' AS ordered_at FROM range(1000) AS g(r)`,
}

// buildSlow writes the spec and the database into a fresh directory.
func buildSlow(t *testing.T) (specPath, dbPath string) {
	t.Helper()
	dir := t.TempDir()
	specPath = filepath.Join(dir, "slow.toml")
	if err := os.WriteFile(specPath, []byte(slowSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	dbPath = filepath.Join(dir, "slow.duckdb")
	db, err := sql.Open("duckdb", dbPath)
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range slowDB {
		if _, err := db.Exec(q); err != nil {
			db.Close()
			t.Fatalf("%s: %v", q, err)
		}
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	return specPath, dbPath
}

// patience bounds how long a cancelled query may take to stop. DuckDB
// stops within milliseconds (LIBRARY-NOTES); the bound is generous so a
// loaded machine does not fail the test, and far below a full run.
const patience = 20 * time.Second

// TestQueryCancelled cancels the main query of a run in process and checks
// that the engine returns the context's error well before the query could
// finish, and that the connection still works afterwards.
func TestQueryCancelled(t *testing.T) {
	specPath, dbPath := buildSlow(t)
	spec, _, ds := metrics.LoadFile(specPath)
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	p, ds := compiler.Compile(spec, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	d, _ := dialects.Lookup("duckdb")
	q, err := compiler.Print(p, d)
	if err != nil {
		t.Fatal(err)
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: dbPath, Threads: 2, MemoryLimit: "2GB"})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx, cancel := context.WithTimeout(context.Background(), 500*time.Millisecond)
	defer cancel()
	start := time.Now()
	res, err := engine.Query(ctx, db, p, q, true)
	took := time.Since(start)
	if err == nil {
		t.Fatalf("got a result with %d rows, want the query cancelled", len(res.Rows))
	}
	if !errors.Is(err, context.DeadlineExceeded) && !errors.Is(err, context.Canceled) && !strings.Contains(err.Error(), "nterrupt") {
		t.Errorf("got error %v, want the context's deadline or an interruption", err)
	}
	if took > patience {
		t.Errorf("cancelled query returned after %v, want within %v", took, patience)
	}
	var one int
	if err := db.QueryRow("SELECT 1").Scan(&one); err != nil || one != 1 {
		t.Errorf("connection after cancel: got %d, %v; want 1, nil", one, err)
	}
}

// TestRunSIGINT builds the assay command, starts a run on the slow
// database, interrupts it with SIGINT and checks that it exits non-zero
// promptly, prints no results, leaves no file in the output directory
// (and no saved results, when --save is available) and leaves the database
// byte-identical.
func TestRunSIGINT(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the assay command")
	}
	bin := filepath.Join(t.TempDir(), "assay")
	build := exec.Command("go", "build", "-o", bin, "../cmd/assay")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	specPath, dbPath := buildSlow(t)
	outDir := t.TempDir()
	shaBefore, filesBefore := fileSHA(t, dbPath), listDir(t, filepath.Dir(dbPath))

	args := []string{"run", "--db", dbPath, "--threads", "2", "--memory-limit", "2GB", "--format", "json"}
	help, _ := exec.Command(bin, "run", "--help").CombinedOutput()
	savePath := filepath.Join(outDir, "results.json")
	if bytes.Contains(help, []byte("-save")) {
		args = append(args, "--save", savePath)
	}
	args = append(args, specPath)
	cmd := exec.Command(bin, args...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	cmd.Dir = outDir
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		t.Fatalf("run ended before the interrupt (%v); stderr:\n%s", err, stderr.String())
	case <-time.After(2 * time.Second):
	}
	if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
		t.Fatal(err)
	}
	signalled := time.Now()
	var err error
	select {
	case err = <-done:
	case <-time.After(patience):
		cmd.Process.Kill()
		<-done
		t.Fatalf("run still going %v after SIGINT; stderr:\n%s", patience, stderr.String())
	}
	t.Logf("exited %v after SIGINT: %v; stderr: %s", time.Since(signalled).Round(time.Millisecond), err, strings.TrimSpace(stderr.String()))
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() <= 0 {
		t.Errorf("got exit %v, want a non-zero exit code", err)
	}
	if stdout.Len() > 0 {
		t.Errorf("got %d bytes of results on stdout, want none from an interrupted run", stdout.Len())
	}
	if got := listDir(t, outDir); len(got) != 0 {
		t.Errorf("output directory: got %v, want no files (no partial results)", got)
	}
	if got := fileSHA(t, dbPath); got != shaBefore {
		t.Errorf("database file changed by the interrupted run")
	}
	if got := listDir(t, filepath.Dir(dbPath)); !reflect.DeepEqual(got, filesBefore) {
		t.Errorf("database directory: got %v, want %v", got, filesBefore)
	}
}
