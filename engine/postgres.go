package engine

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/stdlib"
)

// postgresSession is run on every new PostgreSQL connection: every
// transaction of the session is read-only, so a run can never change the
// warehouse, and string literals read backslash as an ordinary character,
// as the postgres dialect prints them.
var postgresSession = []string{
	"SET SESSION CHARACTERISTICS AS TRANSACTION READ ONLY",
	"SET standard_conforming_strings = on",
	"SET TIME ZONE 'UTC'",
	// assay's queries join whole tables on equality; the planner cannot
	// estimate the time-window predicates on computed epoch values, and a
	// nested loop over underestimated row counts makes them quadratic.
	"SET enable_nestloop = off",
}

// OpenPostgres connects to PostgreSQL through pgx with a postgres:// or
// postgresql:// connection string, in a read-only session.
func OpenPostgres(ctx context.Context, dsn string) (*sql.DB, error) {
	rememberSecret(dsn)
	if !isKeyValue(dsn) {
		if _, err := url.Parse(dsn); err != nil {
			// The URL parser's message quotes the text around the fault,
			// which may be part of the password.
			return nil, Redact(fmt.Errorf("cannot read the PostgreSQL connection string %s: %s", RedactDSN(dsn), urlProblem))
		}
	}
	cfg, err := pgx.ParseConfig(dsn)
	if err != nil {
		return nil, Redact(fmt.Errorf("cannot read the PostgreSQL connection string %s: %w", RedactDSN(dsn), parseProblem(err)))
	}
	if cfg.ConnectTimeout == 0 {
		cfg.ConnectTimeout = 30 * time.Second
	}
	db := stdlib.OpenDB(*cfg, stdlib.OptionAfterConnect(func(ctx context.Context, c *pgx.Conn) error {
		for _, s := range postgresSession {
			if _, err := c.Exec(ctx, s); err != nil {
				return fmt.Errorf("%s: %w", s, err)
			}
		}
		return nil
	}))
	if err := db.PingContext(ctx); err != nil {
		db.Close()
		return nil, Redact(fmt.Errorf("cannot connect to PostgreSQL at %s: %w", RedactDSN(dsn), err))
	}
	return db, nil
}

// parseProblem returns pgx's reason for refusing a connection string
// without the copy of the string it quotes: pgx masks passwords there by
// patterns that miss some quoted ones (a quoted password with an escaped
// quote shows its tail), and the message already shows RedactDSN's copy.
func parseProblem(err error) error {
	var pe *pgconn.ParseConfigError
	if !errors.As(err, &pe) {
		return err
	}
	msg := pe.Error()
	if i := strings.LastIndex(msg, "`: "); i >= 0 {
		return redacted{msg: msg[i+3:], err: err}
	}
	return redacted{msg: "not a valid connection string", err: err}
}
