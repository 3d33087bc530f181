package dialects

import "fmt"

// Resplitting for calibration on every dialect. Each engine hashes the
// unit id (as text, so integer and string ids behave alike), the split
// number and the salt with a hash function of its own, so the same unit
// lands in different arms on different engines; what calibration checks
// (how often an A/A comparison rejects) does not depend on which hash.

// digits renders the numbers 0 … n-1 as a relation z(split) from
// cross-joined digits, for engines without a series function usable in a
// query over tables (MySQL, MariaDB, Redshift's compute nodes).
func digits(n int) string {
	d := "(SELECT 0 AS d UNION ALL SELECT 1 UNION ALL SELECT 2 UNION ALL SELECT 3 UNION ALL SELECT 4 UNION ALL SELECT 5 UNION ALL SELECT 6 UNION ALL SELECT 7 UNION ALL SELECT 8 UNION ALL SELECT 9)"
	return fmt.Sprintf("(SELECT d0.d + 10 * d1.d + 100 * d2.d + 1000 * d3.d AS split FROM %s AS d0 CROSS JOIN %s AS d1 CROSS JOIN %s AS d2 CROSS JOIN %s AS d3 WHERE d0.d + 10 * d1.d + 100 * d2.d + 1000 * d3.d < %d) AS z", d, d, d, d, n)
}

// Splits implements Resplitter.
func (Postgres) Splits(n int) string { return fmt.Sprintf("generate_series(0, %d) AS z(split)", n-1) }

// Uniform implements Resplitter with the first 32 bits of an MD5 digest.
func (Postgres) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(CAST(CAST('x' || substr(md5(CAST(%s AS TEXT) || ':' || CAST(%s AS TEXT) || ':%d'), 1, 8) AS BIT(32)) AS BIGINT) & 4294967295 AS DOUBLE PRECISION) / 4294967296", unit, split, salt)
}

// Splits implements Resplitter.
func (MySQL) Splits(n int) string { return digits(n) }

// Uniform implements Resplitter with the first 32 bits of an MD5 digest.
func (MySQL) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(CONV(SUBSTRING(MD5(CONCAT(CAST(%s AS CHAR), ':', CAST(%s AS CHAR), ':%d')), 1, 8), 16, 10) AS UNSIGNED) / 4294967296.0", unit, split, salt)
}

// Splits implements Resplitter.
func (Redshift) Splits(n int) string { return digits(n) }

// Uniform implements Resplitter with the first 28 bits of an MD5 digest
// (STRTOL returns a signed BIGINT).
func (Redshift) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(STRTOL(SUBSTRING(MD5(CAST(%s AS VARCHAR) || ':' || CAST(%s AS VARCHAR) || ':%d'), 1, 7), 16) AS DOUBLE PRECISION) / 268435456", unit, split, salt)
}

// Splits implements Resplitter.
func (BigQuery) Splits(n int) string {
	return fmt.Sprintf("(SELECT s AS split FROM UNNEST(GENERATE_ARRAY(0, %d)) AS s) AS z", n-1)
}

// Uniform implements Resplitter with FARM_FINGERPRINT.
func (BigQuery) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(MOD(ABS(MOD(FARM_FINGERPRINT(CONCAT(CAST(%s AS STRING), ':', CAST(%s AS STRING), ':%d')), 1000000)), 1000000) AS FLOAT64) / 1000000", unit, split, salt)
}

// Splits implements Resplitter.
func (Snowflake) Splits(n int) string {
	return fmt.Sprintf("(SELECT ROW_NUMBER() OVER (ORDER BY SEQ4()) - 1 AS split FROM TABLE(GENERATOR(ROWCOUNT => %d))) AS z", n)
}

// Uniform implements Resplitter with Snowflake's 64-bit HASH.
func (Snowflake) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(ABS(MOD(HASH(CAST(%s AS VARCHAR), %s, %d), 1000000)) AS DOUBLE) / 1000000", unit, split, salt)
}

// Splits implements Resplitter.
func (Trino) Splits(n int) string { return fmt.Sprintf("UNNEST(sequence(0, %d)) AS z(split)", n-1) }

// Uniform implements Resplitter with xxHash64.
func (Trino) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(abs(from_big_endian_64(xxhash64(to_utf8(CAST(%s AS VARCHAR) || ':' || CAST(%s AS VARCHAR) || ':%d'))) %% 1000000) AS DOUBLE) / 1000000", unit, split, salt)
}

// Splits implements Resplitter.
func (Spark) Splits(n int) string {
	return fmt.Sprintf("(SELECT explode(sequence(0, %d)) AS split) AS z", n-1)
}

// Uniform implements Resplitter with xxHash64.
func (Spark) Uniform(unit, split string, salt int64) string {
	return fmt.Sprintf("CAST(pmod(xxhash64(CAST(%s AS STRING), %s, %d), 1000000) AS DOUBLE) / 1000000", unit, split, salt)
}
