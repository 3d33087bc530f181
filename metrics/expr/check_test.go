package expr

import (
	"reflect"
	"strings"
	"testing"
)

var orderColumns = []string{"amount", "discount", "status", "country", "created_at", "is_test", "Email"}

func mustParse(t *testing.T, src string) Node {
	t.Helper()
	n, ds := Parse(src)
	if len(ds) > 0 {
		t.Fatalf("Parse(%q): got %v, want no diagnostics", src, ds)
	}
	return n
}

func TestCheckColumns(t *testing.T) {
	tests := []struct {
		in    string
		codes []string
		msgs  []string
	}{
		{"amount - discount", nil, nil},
		{"status = 'delivered' AND NOT is_test", nil, nil},
		{"amout > 0", []string{CodeColumn}, []string{"unknown column `amout`; did you mean `amount`?"}},
		{"Amount > 0", []string{CodeColumn}, []string{"unknown column `Amount`; did you mean `amount`?"}},
		{"email LIKE '%x'", []string{CodeColumn}, []string{"unknown column `email`; did you mean `Email`?"}},
		{"revenue > 0", []string{CodeColumn}, []string{"unknown column `revenue`"}},
		{"stats = 'x' OR cuntry = 'y'", []string{CodeColumn, CodeColumn},
			[]string{"unknown column `stats`; did you mean `status`?", "unknown column `cuntry`; did you mean `country`?"}},
		{"x + x", []string{CodeColumn, CodeColumn}, []string{"unknown column `x`", "unknown column `x`"}},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			ds := Check(mustParse(t, tc.in), orderColumns)
			if got := ds.Codes(); !reflect.DeepEqual(got, tc.codes) && !(len(got) == 0 && len(tc.codes) == 0) {
				t.Fatalf("codes: got %v, want %v\n%v", got, tc.codes, ds)
			}
			for i, d := range ds {
				if d.Msg != tc.msgs[i] {
					t.Errorf("message %d: got %v, want %v", i, d.Msg, tc.msgs[i])
				}
				want := "available columns: `amount`, `discount`, `status`, `country`, `created_at`, `is_test`, `Email`"
				if d.Hint != want {
					t.Errorf("hint %d: got %v, want %v", i, d.Hint, want)
				}
			}
		})
	}
}

func TestCheckColumnHintLimits(t *testing.T) {
	many := make([]string, 25)
	for i := range many {
		many[i] = "c" + strings.Repeat("x", i)
	}
	tests := []struct {
		name    string
		columns []string
		want    string
	}{
		{"none", nil, "the source has no columns"},
		{"many", many, "available columns: `c`, `cx`, `cxx`"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ds := Check(mustParse(t, "zzz"), tc.columns)
			if len(ds) != 1 {
				t.Fatalf("diagnostics: got %v, want 1", len(ds))
			}
			if !strings.HasPrefix(ds[0].Hint, tc.want) {
				t.Errorf("hint: got %v, want prefix %v", ds[0].Hint, tc.want)
			}
			if tc.name == "many" && !strings.HasSuffix(ds[0].Hint, "and 5 more") {
				t.Errorf("hint: got %v, want suffix %v", ds[0].Hint, "and 5 more")
			}
		})
	}
}

func TestEditDistance(t *testing.T) {
	tests := []struct {
		a, b string
		want int
	}{
		{"amount", "amount", 0},
		{"amout", "amount", 1},
		{"kitten", "sitting", 3},
		{"", "abc", 3},
		{"naïve", "naive", 1},
	}
	for _, tc := range tests {
		t.Run(tc.a+"/"+tc.b, func(t *testing.T) {
			if got := editDistance(tc.a, tc.b, 100); got != tc.want {
				t.Errorf("editDistance(%q, %q): got %v, want %v", tc.a, tc.b, got, tc.want)
			}
		})
	}
}

func TestCheckTypes(t *testing.T) {
	tests := []struct {
		in    string
		codes []string
		span  string
	}{
		{"amount + 'x'", []string{CodeType}, "'x'"},
		{"'a' * 2", []string{CodeType}, "'a'"},
		{"-'a'", []string{CodeType}, "'a'"},
		{"NOT 1", []string{CodeType}, "1"},
		{"amount AND status = 'x'", nil, ""},
		{"1 AND TRUE", []string{CodeType}, "1"},
		{"1 = 'a'", []string{CodeType}, "1 = 'a'"},
		{"TRUE = 1", []string{CodeType}, "TRUE = 1"},
		{"amount = '5'", nil, ""},
		{"CAST('2024-01-01' AS DATE) < local_date(created_at)", nil, ""},
		{"local_date(created_at) + 1", []string{CodeType}, "local_date(created_at)"},
		{"local_week(created_at) >= '2024-01-01'", nil, ""},
		{"local_hour(created_at) BETWEEN 9 AND 17", nil, ""},
		{"local_weekday(created_at) IN (6, 7)", nil, ""},
		{"local_hour(created_at) = 'x'", []string{CodeType}, "local_hour(created_at) = 'x'"},
		{"lower(1)", []string{CodeType}, "1"},
		{"length(amount) > 2", nil, ""},
		{"substr('abc', 'x')", []string{CodeType}, "'x'"},
		{"concat('a', 1)", []string{CodeType}, "1"},
		{"coalesce(amount, 'none')", nil, ""},
		{"coalesce(1, 'none')", []string{CodeType}, "'none'"},
		{"coalesce(amount, 0) + 1", nil, ""},
		{"x IN (1, 'a')", []string{CodeType}, "'a'"},
		{"x BETWEEN 1 AND 'z'", []string{CodeType}, "'z'"},
		{"x LIKE 5", []string{CodeType}, "5"},
		{"CASE WHEN 1 THEN 2 END", []string{CodeType}, "1"},
		{"CASE WHEN a THEN 1 ELSE 'x' END", []string{CodeType}, "'x'"},
		{"CASE a WHEN 1 THEN 2 WHEN 'b' THEN 3 END", []string{CodeType}, "'b'"},
		{"(1 + 'a') + ('b' - 2)", []string{CodeType, CodeType}, "'a'"},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			ds := Check(mustParse(t, tc.in), []string{"amount", "created_at", "x", "a", "status"})
			if got := ds.Codes(); !reflect.DeepEqual(got, tc.codes) && !(len(got) == 0 && len(tc.codes) == 0) {
				t.Fatalf("codes: got %v, want %v\n%v", got, tc.codes, ds)
			}
			if len(ds) > 0 {
				if got := tc.in[ds[0].Span.Start:ds[0].Span.End]; got != tc.span {
					t.Errorf("span: got %q, want %q", got, tc.span)
				}
			}
		})
	}
}

// TestTimeZoneDependentCasts checks that a cast to DATE or TIMESTAMP is
// refused unless its operand is a literal: the result of casting a
// timestamp with time zone to a date depends on the session's TimeZone
// setting (PostgreSQL manual, "Date/Time Types", section 8.5.1.3, from
// memory), which assay does not control in every engine.
func TestTimeZoneDependentCasts(t *testing.T) {
	tests := []struct {
		in    string
		codes []string
		span  string
	}{
		{"CAST(created_at AS DATE) >= '2024-01-01'", []string{CodeTimeCast}, "CAST(created_at AS DATE)"},
		{"CAST(created_at AS TIMESTAMP) IS NULL", []string{CodeTimeCast}, "CAST(created_at AS TIMESTAMP)"},
		{"CAST(concat(a, '') AS DATE) IS NULL", []string{CodeTimeCast}, "CAST(concat(a, '') AS DATE)"},
		{"CAST('2024-01-01' AS DATE) IS NULL", nil, ""},
		{"CAST(created_at AS VARCHAR) = 'x'", nil, ""},
		{"local_date(created_at + 1) IS NULL", []string{CodeLocalArg}, "created_at + 1"},
		{"local_hour('2024-01-01 10:00:00') = 1", []string{CodeLocalArg}, "'2024-01-01 10:00:00'"},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			ds := Check(mustParse(t, tc.in), []string{"created_at", "a"})
			if got := ds.Codes(); !reflect.DeepEqual(got, tc.codes) && !(len(got) == 0 && len(tc.codes) == 0) {
				t.Fatalf("codes: got %v, want %v\n%v", got, tc.codes, ds)
			}
			if len(ds) > 0 {
				if got := tc.in[ds[0].Span.Start:ds[0].Span.End]; got != tc.span {
					t.Errorf("span: got %q, want %q", got, tc.span)
				}
				if !strings.Contains(ds[0].Hint, "local_") {
					t.Errorf("hint %q does not name the local-time functions", ds[0].Hint)
				}
			}
		})
	}
}

func TestKindOf(t *testing.T) {
	tests := []struct {
		in   string
		want Kind
	}{
		{"amount", KindUnknown},
		{"NULL", KindUnknown},
		{"1", KindNumeric},
		{"amount - discount", KindNumeric},
		{"'x'", KindString},
		{"TRUE", KindBoolean},
		{"a = 1 AND b", KindBoolean},
		{"x IS NULL", KindBoolean},
		{"x IN (1)", KindBoolean},
		{"x LIKE 'a'", KindBoolean},
		{"CASE WHEN a THEN 1 ELSE 0 END", KindNumeric},
		{"CASE WHEN a THEN x END", KindUnknown},
		{"coalesce(x, 0)", KindNumeric},
		{"nullif(x, '')", KindString},
		{"length(x)", KindNumeric},
		{"concat(a, b)", KindString},
		{"CAST(x AS BIGINT)", KindNumeric},
		{"CAST(x AS DATE)", KindTemporal},
		{"local_date(x)", KindTemporal},
		{"local_week(x)", KindTemporal},
		{"local_hour(x)", KindNumeric},
		{"local_weekday(x)", KindNumeric},
		{"CAST(x AS BOOLEAN)", KindBoolean},
		{"CAST(x AS VARCHAR)", KindString},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			if got := KindOf(mustParse(t, tc.in)); got != tc.want {
				t.Errorf("KindOf(%q): got %v, want %v", tc.in, got, tc.want)
			}
		})
	}
}

func TestExpectKind(t *testing.T) {
	tests := []struct {
		in   string
		want Kind
		msg  string
	}{
		{"amount > 0", KindBoolean, ""},
		{"is_test", KindBoolean, ""},
		{"amount + 1", KindBoolean, "a filter must be boolean, but this expression is numeric"},
		{"'x'", KindNumeric, "a value must be numeric, but this expression is string"},
		{"amount * 2", KindNumeric, ""},
		{"amount > 0", KindNumeric, "a value must be numeric, but this expression is boolean"},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			what := "value"
			if tc.want == KindBoolean {
				what = "filter"
			}
			ds := ExpectKind(mustParse(t, tc.in), tc.want, what)
			got := ""
			if len(ds) > 0 {
				got = ds[0].Msg
				if ds[0].Code != CodeKind {
					t.Errorf("code: got %v, want %v", ds[0].Code, CodeKind)
				}
			}
			if got != tc.msg {
				t.Errorf("message: got %v, want %v", got, tc.msg)
			}
		})
	}
}

func TestColumnsAndWalk(t *testing.T) {
	tests := []struct {
		in   string
		want []string
	}{
		{"1 + 2", nil},
		{"b + a * b", []string{"b", "a"}},
		{"CASE x WHEN y THEN z ELSE w END", []string{"x", "y", "z", "w"}},
		{`"a b" IN (c, d) AND e BETWEEN f AND g`, []string{"a b", "c", "d", "e", "f", "g"}},
		{"coalesce(CAST(p AS DATE), q) IS NULL OR r LIKE s", []string{"p", "q", "r", "s"}},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			if got := Columns(mustParse(t, tc.in)); !reflect.DeepEqual(got, tc.want) {
				t.Errorf("Columns: got %v, want %v", got, tc.want)
			}
		})
	}
}
