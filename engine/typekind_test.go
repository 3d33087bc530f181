package engine

import "testing"

// TestTypeKind checks the kinds of column type names as the drivers report
// them: DuckDB's type names (DuckDB documentation, "Data Types"), pgx's
// PostgreSQL type names (INT8, FLOAT8, BPCHAR, ...) and go-sql-driver/mysql's
// (UNSIGNED BIGINT, ...), from memory of each driver's DatabaseTypeName.
func TestTypeKind(t *testing.T) {
	for typ, want := range map[string]string{
		"BIGINT": "number", "INTEGER": "number", "UBIGINT": "number", "HUGEINT": "number",
		"DECIMAL(20,0)": "number", "INT8": "number", "INT4": "number", "NUMERIC": "number",
		"UNSIGNED BIGINT": "number", "MEDIUMINT": "number",
		"DOUBLE": "float", "FLOAT8": "float", "REAL": "float",
		"VARCHAR": "text", "TEXT": "text", "BPCHAR": "text", "CHAR": "text", "varchar(36)": "text",
		"UUID": "uuid", "TIMESTAMP": "time", "DATE": "time", "BOOLEAN": "bool", "BLOB": "binary", "BYTEA": "binary",
		"STRUCT(a INTEGER)": "", "JSON": "", "": "",
	} {
		if got := typeKind(typ); got != want {
			t.Errorf("typeKind(%q) = %q, want %q", typ, got, want)
		}
	}
}
