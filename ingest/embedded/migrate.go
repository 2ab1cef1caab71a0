package embedded

import (
	"context"
	"database/sql"
	"fmt"
)

// SchemaVersion is the schema this binary writes and reads: the number of
// steps in migrations. A file's version is its PRAGMA user_version.
const SchemaVersion = 6

// applicationID marks the file as a dewline store in the SQLite header
// (PRAGMA application_id, bytes 68-71; "dewl" in ASCII), so Open can tell a
// foreign SQLite file from an old or new dewline one.
const applicationID = 0x6465776c

// migration is one schema step. migrations[i] takes a file from
// user_version i to i+1.
type migration struct {
	name string // short, for error messages
	sql  string // one or more statements, run in one transaction
	// run, when set, runs after sql in the same transaction: for a step
	// that moves data in a way SQL alone cannot (see packSamples).
	run func(ctx context.Context, tx *sql.Tx) error
}

// migrations is the schema history, in order. To change the schema:
//
//  1. append a step; never edit or reorder a step that has been released,
//     because files in the field have already run it;
//  2. raise SchemaVersion to the new length (TestStore_Migrations checks);
//  3. write the step so it works on any file at the previous version: ALTER
//     TABLE ... ADD COLUMN with a DEFAULT, CREATE TABLE/INDEX, or the
//     "create new table, INSERT ... SELECT, drop old, rename" dance for
//     anything ALTER cannot do (https://www.sqlite.org/lang_altertable.html);
//  4. update the schema in doc.go and add a test that opens a file at the
//     previous version and reads its data back after the upgrade.
//
// Each step runs with the user_version bump in one transaction, so a failed
// step leaves the file at the previous version, untouched.
var migrations = []migration{
	{name: "initial schema", sql: schemaV1},
	{name: "alert rule states", sql: schemaV2},
	{name: "daily sums", sql: schemaV3},
	{name: "one event per alert transition", sql: schemaV4},
	{name: "site of the file", sql: schemaV5},
	{name: "samples in day blocks", sql: schemaV6, run: packSamples},
}

// schemaV4 records each transition of an alert once: an alert (its id is
// the air handler, the kind and the start hour) opens once and closes
// once, so (alert_id, transition) is unique, and the webhook's event key
// (alert id/transition) never names two events. Files written before kept
// a repeat for every re-analysis of a period; the step keeps the first of
// each, delivered when any of them was.
const schemaV4 = `
UPDATE alert_events SET delivered_ms = (
	SELECT min(d.delivered_ms) FROM alert_events d
	WHERE d.alert_id = alert_events.alert_id AND d.transition = alert_events.transition)
WHERE delivered_ms IS NULL;
DELETE FROM alert_events WHERE seq NOT IN (SELECT min(seq) FROM alert_events GROUP BY alert_id, transition);
CREATE UNIQUE INDEX alert_events_once ON alert_events(alert_id, transition);
`

// schemaV5 names the site whose results the file holds: one file holds
// one site (see site.go). A file from before has no row; the first site to
// open it read-write claims it, since until then a file held one site.
const schemaV5 = `
CREATE TABLE site (
	only       INTEGER PRIMARY KEY CHECK (only = 1),
	id         TEXT    NOT NULL,
	claimed_ms INTEGER NOT NULL
);
`

// schemaV3 keeps per air handler and local day the sums of the additive
// hourly fields (metrics.AdditiveFields), so that a portfolio's month is
// read as thousands of days rather than a hundred thousand hours. The
// rows are derived from hourly and rebuilt from it (see daily.go); zone is
// the IANA zone whose local days they are.
const schemaV3 = `
CREATE TABLE daily (
	zone    TEXT    NOT NULL,
	ahu     TEXT    NOT NULL,
	day_ms  INTEGER NOT NULL,
	end_ms  INTEGER NOT NULL CHECK (end_ms > day_ms),
	hours   INTEGER NOT NULL,
	flagged INTEGER NOT NULL,
	sums    TEXT    NOT NULL CHECK (json_valid(sums)),
	PRIMARY KEY (zone, day_ms, ahu)
) WITHOUT ROWID;
`

// schemaV2 keeps the agent's alert rule states (pending and open alerts with
// their hour counters) so evaluation continues across restarts.
const schemaV2 = `
CREATE TABLE alert_states (
	ahu        TEXT    NOT NULL,
	kind       TEXT    NOT NULL,
	state      TEXT    NOT NULL CHECK (json_valid(state)),
	updated_ms INTEGER NOT NULL,
	PRIMARY KEY (ahu, kind)
) WITHOUT ROWID;
`

// schemaV1 is described column by column in doc.go. Tables are not STRICT
// so that sqlite3 builds older than 3.37 can still read the file; the Go
// API binds the right types, and CHECK constraints guard the enumerations.
const schemaV1 = `
CREATE TABLE series (
	id          INTEGER PRIMARY KEY,
	name        TEXT    NOT NULL UNIQUE,
	kind        TEXT    NOT NULL DEFAULT '',
	unit_si     TEXT    NOT NULL DEFAULT '',
	source_unit TEXT    NOT NULL DEFAULT '',
	created_ms  INTEGER NOT NULL
);

CREATE TABLE samples (
	series_id INTEGER NOT NULL REFERENCES series(id) ON DELETE CASCADE,
	ts_ms     INTEGER NOT NULL,
	value     REAL    NOT NULL,
	PRIMARY KEY (series_id, ts_ms)
) WITHOUT ROWID;

CREATE TABLE imports (
	id          INTEGER PRIMARY KEY,
	file        TEXT    NOT NULL,
	sha256      TEXT    NOT NULL,
	rows_read   INTEGER NOT NULL,
	accepted    INTEGER NOT NULL,
	rejected    INTEGER NOT NULL,
	started_ms  INTEGER NOT NULL,
	finished_ms INTEGER NOT NULL
);
CREATE INDEX imports_sha256 ON imports(sha256);

CREATE TABLE hourly (
	ahu        TEXT    NOT NULL,
	hour_ms    INTEGER NOT NULL CHECK (hour_ms % 3600000 = 0),
	schema     INTEGER NOT NULL,
	fields     TEXT    NOT NULL CHECK (json_valid(fields)),
	flags      TEXT    NOT NULL DEFAULT '[]' CHECK (json_valid(flags)),
	written_ms INTEGER NOT NULL,
	PRIMARY KEY (ahu, hour_ms)
) WITHOUT ROWID;
CREATE INDEX hourly_hour ON hourly(hour_ms, ahu);

CREATE TABLE alerts (
	id         TEXT    PRIMARY KEY,
	ahu        TEXT    NOT NULL,
	kind       TEXT    NOT NULL,
	severity   TEXT    NOT NULL,
	state      TEXT    NOT NULL CHECK (state IN ('pending', 'open', 'closed')),
	start_ms   INTEGER NOT NULL,
	end_ms     INTEGER,
	energy_kwh REAL,
	cost       REAL,
	reason     TEXT    NOT NULL DEFAULT '',
	updated_ms INTEGER NOT NULL
);
CREATE INDEX alerts_ahu_start ON alerts(ahu, start_ms);

CREATE TABLE alert_events (
	seq          INTEGER PRIMARY KEY AUTOINCREMENT,
	alert_id     TEXT    NOT NULL REFERENCES alerts(id) ON DELETE CASCADE,
	transition   TEXT    NOT NULL,
	at_ms        INTEGER NOT NULL,
	payload      TEXT    NOT NULL DEFAULT '{}' CHECK (json_valid(payload)),
	delivered_ms INTEGER
);
CREATE INDEX alert_events_alert ON alert_events(alert_id);
CREATE INDEX alert_events_pending ON alert_events(seq) WHERE delivered_ms IS NULL;

CREATE TABLE checkpoints (
	ahu          TEXT    PRIMARY KEY,
	last_hour_ms INTEGER NOT NULL CHECK (last_hour_ms % 3600000 = 0),
	updated_ms   INTEGER NOT NULL
) WITHOUT ROWID;
`

// querier is what reading the header needs: *sql.DB or *sql.Tx.
type querier interface {
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// header reads the file's schema version and application id.
func header(ctx context.Context, q querier) (version, appID int, err error) {
	if err := q.QueryRowContext(ctx, "PRAGMA user_version").Scan(&version); err != nil {
		return 0, 0, fmt.Errorf("read user_version: %w", err)
	}
	if err := q.QueryRowContext(ctx, "PRAGMA application_id").Scan(&appID); err != nil {
		return 0, 0, fmt.Errorf("read application_id: %w", err)
	}
	return version, appID, nil
}

// checkHeader refuses files that are not dewline stores and files newer than
// this binary. known is the number of migrations this binary has.
func checkHeader(ctx context.Context, q querier, version, appID, known int) error {
	switch {
	case appID != 0 && appID != applicationID:
		return fmt.Errorf("application_id is %#x, not dewline's %#x: %w", appID, applicationID, ErrNotStore)
	case version > known:
		return fmt.Errorf("file is at schema v%d, this dewline knows up to v%d: %w; upgrade dewline to open it",
			version, known, ErrSchemaNewer)
	case version > 0 && appID == 0:
		return fmt.Errorf("user_version is %d but application_id is unset: %w", version, ErrNotStore)
	case version == 0:
		// A fresh file has no tables. One that has some belongs to another
		// program, and migrating it would mix dewline's tables into it.
		var n int
		err := q.QueryRowContext(ctx,
			"SELECT count(*) FROM sqlite_master WHERE name NOT LIKE 'sqlite_%'").Scan(&n)
		if err != nil {
			return fmt.Errorf("list tables: %w", err)
		}
		if n > 0 {
			return fmt.Errorf("schema v0 file already holds %d tables or indexes: %w", n, ErrNotStore)
		}
	}
	return nil
}

// checkVersion is the read-only open's check: the file must be a dewline
// store at exactly this binary's version.
func checkVersion(ctx context.Context, db *sql.DB, known int) error {
	version, appID, err := header(ctx, db)
	if err != nil {
		return err
	}
	if err := checkHeader(ctx, db, version, appID, known); err != nil {
		return err
	}
	if version < known {
		return fmt.Errorf("file is at schema v%d, this dewline needs v%d: %w; open it once read-write (any dewline command that writes to the store) to migrate it",
			version, known, ErrSchemaOlder)
	}
	return nil
}

// migrate brings the file to len(steps), one step per transaction. It
// re-reads the version inside each transaction, which holds the write lock
// (_txlock=immediate), so two processes opening an old file at once apply
// each step once.
func migrate(ctx context.Context, db *sql.DB, steps []migration) error {
	for {
		done, err := migrateStep(ctx, db, steps)
		if err != nil || done {
			return err
		}
	}
}

// migrateStep applies the next step if one is due; done is true when the
// file is already current.
func migrateStep(ctx context.Context, db *sql.DB, steps []migration) (done bool, err error) {
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return false, fmt.Errorf("migrate: begin: %w", err)
	}
	defer func() {
		if err != nil || done {
			_ = tx.Rollback()
		}
	}()
	version, appID, err := header(ctx, tx)
	if err != nil {
		return false, err
	}
	if err := checkHeader(ctx, tx, version, appID, len(steps)); err != nil {
		return false, err
	}
	if version == len(steps) {
		return true, nil
	}
	step := steps[version]
	if _, err := tx.ExecContext(ctx, step.sql); err != nil {
		return false, fmt.Errorf("migrate v%d to v%d (%s): %w", version, version+1, step.name, err)
	}
	if step.run != nil {
		if err := step.run(ctx, tx); err != nil {
			return false, fmt.Errorf("migrate v%d to v%d (%s): %w; the file is left at v%d as it was",
				version, version+1, step.name, err, version)
		}
	}
	// PRAGMA takes no bound parameters; both values are integers formatted
	// here, never outside text.
	bump := fmt.Sprintf("PRAGMA user_version = %d; PRAGMA application_id = %d", version+1, applicationID)
	if _, err := tx.ExecContext(ctx, bump); err != nil {
		return false, fmt.Errorf("migrate v%d to v%d: set version: %w", version, version+1, err)
	}
	if err := tx.Commit(); err != nil {
		return false, fmt.Errorf("migrate v%d to v%d: commit: %w", version, version+1, err)
	}
	return false, nil
}
