package dialects

import (
	"strings"

	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/metrics/timefmt"
)

// Local-time parts, the argument of Dialect.Local: the calendar date, the
// date of the Monday starting the ISO 8601 week, the hour 0–23 and the
// ISO 8601 weekday 1 (Monday) – 7 (Sunday).
const (
	PartDate    = "date"
	PartWeek    = "week"
	PartHour    = "hour"
	PartWeekday = "weekday"
)

// TimeMicros converts a time column stored as f to integer microseconds
// since 1970-01-01 UTC: Micros for a native timestamp, StoredMicros
// otherwise.
func TimeMicros(d Dialect, x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Native {
		return d.Micros(x, tz)
	}
	return d.StoredMicros(x, f, tz)
}

// localCall renders a local-time function call (expr.LocalFuncs) on the
// rendered column x: the column's instant in microseconds, then the part
// in the function's time zone.
func localCall(d Dialect, f *expr.Func, x string) string {
	var zone string
	var format timefmt.Format
	if f.Time != nil {
		zone, format = f.Time.Zone, f.Time.Format
	}
	return d.Local(TimeMicros(d, x, format, zone), zone, strings.TrimPrefix(f.Name, "local_"))
}

// epochMicros multiplies an epoch number by the units that make a
// microsecond, through a double so that integer columns of any width and
// fractional seconds both work (exact for integers below 2^53 µs, past
// the year 2200), then casts to the engine's 64-bit integer type.
func epochMicros(x string, f timefmt.Format, double, bigint string) string {
	k := 1000000 / f.PerSecond()
	if k == 1 {
		return "CAST(" + x + " AS " + bigint + ")"
	}
	return "CAST(CAST(" + x + " AS " + double + ") * " + num(float64(k)) + " AS " + bigint + ")"
}

// strftimeLayout spells a layout in C strftime letters, as DuckDB's
// strptime and BigQuery's PARSE_DATETIME read them; frac is the
// spelling of seconds with a six-digit fraction.
func strftimeLayout(f timefmt.Format, minute, second, frac string) string {
	return f.Render(func(v byte) string {
		switch v {
		case 'M':
			return minute
		case 'S':
			return second
		case 'F':
			return frac
		}
		return "%" + string(v)
	}, func(s string) string { return s })
}

// pgLayout spells a layout in the template patterns of PostgreSQL's
// to_timestamp (also Redshift and Snowflake): letters in literal text
// (the T of ISO 8601) are double-quoted.
func pgLayout(f timefmt.Format, frac string) string {
	return f.Render(func(v byte) string {
		return map[byte]string{'Y': "YYYY", 'm': "MM", 'd': "DD", 'H': "HH24", 'M': "MI", 'S': "SS", 'F': "SS." + frac}[v]
	}, func(s string) string { return strings.ReplaceAll(s, "T", `"T"`) })
}

// ---- DuckDB ----

// Local implements Dialect: DuckDB `isodow(timezone('Europe/Paris',
// timezone('UTC', make_timestamp(us))))` for the weekday.
func (d DuckDB) Local(us, tz, part string) string {
	l := "make_timestamp(" + us + ")"
	if !isUTC(tz) {
		l = "timezone(" + d.Literal(tz) + ", timezone('UTC', " + l + "))"
	}
	switch part {
	case PartWeek:
		return "CAST(date_trunc('week', " + l + ") AS DATE)"
	case PartHour:
		return "hour(" + l + ")"
	case PartWeekday:
		return "isodow(" + l + ")"
	}
	return "CAST(" + l + " AS DATE)"
}

// StoredMicros implements Dialect. DuckDB's CSV reader may already have
// read a text column as a TIMESTAMP (its sniffer knows several layouts),
// so text is parsed only when the column is VARCHAR; CASE evaluates only
// the branch it takes.
func (d DuckDB) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		// strptime gives a TIMESTAMP (no zone): wall-clock time in tz.
		p := "CASE WHEN typeof(" + x + ") = 'VARCHAR' THEN strptime(CAST(" + x + " AS VARCHAR), " + d.Literal(strftimeLayout(f, "%M", "%S", "%S.%f")) + ") ELSE CAST(" + x + " AS TIMESTAMP) END"
		if !isUTC(tz) {
			p = "timezone(" + d.Literal(tz) + ", " + p + ")"
		}
		return "epoch_us(" + p + ")"
	}
	return epochMicros(x, f, "DOUBLE", "BIGINT")
}

// ---- PostgreSQL ----

func pgLocal(us, tz string, str func(string) string) string {
	ts := "TIMESTAMP '1970-01-01 00:00:00' + " + us + " * INTERVAL '1 microsecond'"
	if isUTC(tz) {
		return "(" + ts + ")"
	}
	return "((" + ts + ") AT TIME ZONE 'UTC' AT TIME ZONE " + str(tz) + ")"
}

// Local implements Dialect: PostgreSQL `CAST(EXTRACT(ISODOW FROM l) AS
// INTEGER)` for the weekday, where l is the local timestamp.
func (d Postgres) Local(us, tz, part string) string {
	return pgParts(pgLocal(us, tz, d.Literal), part, "EXTRACT(ISODOW FROM ")
}

func pgParts(l, part, isodow string) string {
	switch part {
	case PartWeek:
		return "CAST(date_trunc('week', " + l + ") AS DATE)"
	case PartHour:
		return "CAST(EXTRACT(HOUR FROM " + l + ") AS INTEGER)"
	case PartWeekday:
		return "CAST(" + isodow + l + ") AS INTEGER)"
	}
	return "CAST(" + l + " AS DATE)"
}

// StoredMicros implements Dialect. to_timestamp gives a timestamp with
// time zone built in the session's zone; casting it back to a timestamp
// without time zone recovers the wall-clock fields read.
func (d Postgres) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		p := "CAST(to_timestamp(" + x + ", " + d.Literal(pgLayout(f, "US")) + ") AS TIMESTAMP)"
		if !isUTC(tz) {
			p += " AT TIME ZONE " + d.Literal(tz)
		}
		return "CAST(EXTRACT(EPOCH FROM " + p + ") * 1000000 AS BIGINT)"
	}
	return epochMicros(x, f, "DOUBLE PRECISION", "BIGINT")
}

// ---- Redshift ----

// Local implements Dialect. Redshift's day-of-week number counts from
// Sunday = 0, so the ISO weekday is (dow + 6) % 7 + 1.
func (d Redshift) Local(us, tz, part string) string {
	l := "TIMESTAMP '1970-01-01 00:00:00' + (" + us + " / 1000000) * INTERVAL '1 second'"
	if !isUTC(tz) {
		l = "CONVERT_TIMEZONE('UTC', " + d.Literal(tz) + ", " + l + ")"
	} else {
		l = "(" + l + ")"
	}
	if part == PartWeekday {
		return "CAST(MOD(CAST(EXTRACT(DOW FROM " + l + ") AS INTEGER) + 6, 7) + 1 AS INTEGER)"
	}
	return pgParts(l, part, "")
}

// StoredMicros implements Dialect, as PostgreSQL.
func (d Redshift) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		return d.Micros("CAST(TO_TIMESTAMP("+x+", "+d.Literal(pgLayout(f, "US"))+") AS TIMESTAMP)", tz)
	}
	return epochMicros(x, f, "DOUBLE PRECISION", "BIGINT")
}

// ---- MySQL ----

// Local implements Dialect. WEEKDAY counts from Monday = 0.
func (d MySQL) Local(us, tz, part string) string {
	l := "TIMESTAMPADD(MICROSECOND, " + us + ", " + mysqlEpoch + ")"
	if !isUTC(tz) {
		l = "CONVERT_TZ(" + l + ", '+00:00', " + d.Literal(tz) + ")"
	}
	switch part {
	case PartWeek:
		return "DATE_SUB(DATE(" + l + "), INTERVAL WEEKDAY(" + l + ") DAY)"
	case PartHour:
		return "HOUR(" + l + ")"
	case PartWeekday:
		return "(WEEKDAY(" + l + ") + 1)"
	}
	return "DATE(" + l + ")"
}

// StoredMicros implements Dialect with STR_TO_DATE, whose minutes are %i
// and seconds %s.
func (d MySQL) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		return d.Micros("STR_TO_DATE("+x+", "+d.Literal(strftimeLayout(f, "%i", "%s", "%s.%f"))+")", tz)
	}
	return epochMicros(x, f, "DOUBLE", "SIGNED")
}

// ---- BigQuery ----

// Local implements Dialect. DAYOFWEEK counts from Sunday = 1; ISOWEEK
// weeks start on Monday.
func (d BigQuery) Local(us, tz, part string) string {
	if isUTC(tz) {
		tz = "UTC"
	}
	t := "TIMESTAMP_MICROS(" + us + ")"
	z := d.Literal(tz)
	switch part {
	case PartWeek:
		return "DATE_TRUNC(DATE(" + t + ", " + z + "), ISOWEEK)"
	case PartHour:
		return "EXTRACT(HOUR FROM " + t + " AT TIME ZONE " + z + ")"
	case PartWeekday:
		return "(MOD(EXTRACT(DAYOFWEEK FROM " + t + " AT TIME ZONE " + z + ") + 5, 7) + 1)"
	}
	return "DATE(" + t + ", " + z + ")"
}

// StoredMicros implements Dialect with PARSE_DATETIME (%E6S: seconds with
// six fraction digits).
func (d BigQuery) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		return d.Micros("PARSE_DATETIME("+d.Literal(strftimeLayout(f, "%M", "%S", "%E6S"))+", "+x+")", tz)
	}
	return epochMicros(x, f, "FLOAT64", "INT64")
}

// ---- Snowflake ----

// Local implements Dialect. DAYOFWEEKISO is 1 (Monday) – 7; the week's
// Monday is computed from it rather than with DATE_TRUNC, whose week
// start depends on the WEEK_START session parameter.
func (d Snowflake) Local(us, tz, part string) string {
	l := "TO_TIMESTAMP_NTZ(" + us + ", 6)"
	if !isUTC(tz) {
		l = "CONVERT_TIMEZONE('UTC', " + d.Literal(tz) + ", " + l + ")"
	}
	switch part {
	case PartWeek:
		return "DATEADD(day, 1 - DAYOFWEEKISO(" + l + "), CAST(" + l + " AS DATE))"
	case PartHour:
		return "HOUR(" + l + ")"
	case PartWeekday:
		return "DAYOFWEEKISO(" + l + ")"
	}
	return "CAST(" + l + " AS DATE)"
}

// StoredMicros implements Dialect with TO_TIMESTAMP_NTZ.
func (d Snowflake) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		return d.Micros("TO_TIMESTAMP_NTZ("+x+", "+d.Literal(pgLayout(f, "FF6"))+")", tz)
	}
	return epochMicros(x, f, "DOUBLE", "BIGINT")
}

// ---- Trino ----

// Local implements Dialect. day_of_week is ISO (Monday = 1); date_trunc
// weeks start on Monday.
func (d Trino) Local(us, tz, part string) string {
	if isUTC(tz) {
		tz = "UTC"
	}
	l := "(from_unixtime_nanos(" + us + " * 1000) AT TIME ZONE " + d.Literal(tz) + ")"
	switch part {
	case PartWeek:
		return "CAST(date_trunc('week', " + l + ") AS DATE)"
	case PartHour:
		return "hour(" + l + ")"
	case PartWeekday:
		return "day_of_week(" + l + ")"
	}
	return "CAST(" + l + " AS DATE)"
}

// StoredMicros implements Dialect with date_parse (MySQL-style letters;
// the result has millisecond precision).
func (d Trino) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		return d.Micros("date_parse("+x+", "+d.Literal(strftimeLayout(f, "%i", "%s", "%s.%f"))+")", tz)
	}
	return epochMicros(x, f, "DOUBLE", "BIGINT")
}

// ---- Spark ----

// Local implements Dialect. weekday counts from Monday = 0; date_trunc
// weeks start on Monday.
func (d Spark) Local(us, tz, part string) string {
	l := "timestamp_micros(" + us + ")"
	if !isUTC(tz) {
		l = "from_utc_timestamp(" + l + ", " + d.Literal(tz) + ")"
	}
	switch part {
	case PartWeek:
		return "CAST(date_trunc('WEEK', " + l + ") AS DATE)"
	case PartHour:
		return "hour(" + l + ")"
	case PartWeekday:
		return "(weekday(" + l + ") + 1)"
	}
	return "CAST(" + l + " AS DATE)"
}

// StoredMicros implements Dialect with to_timestamp and a datetime
// pattern (letters in literal text quoted with ').
func (d Spark) StoredMicros(x string, f timefmt.Format, tz string) string {
	if f.Kind == timefmt.Text {
		layout := f.Render(func(v byte) string {
			return map[byte]string{'Y': "yyyy", 'm': "MM", 'd': "dd", 'H': "HH", 'M': "mm", 'S': "ss", 'F': "ss.SSSSSS"}[v]
		}, func(s string) string { return strings.ReplaceAll(s, "T", "'T'") })
		return d.Micros("to_timestamp("+x+", "+d.Literal(layout)+")", tz)
	}
	return epochMicros(x, f, "DOUBLE", "BIGINT")
}
