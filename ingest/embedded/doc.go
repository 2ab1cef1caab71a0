// Package embedded is dewline's default store: one local SQLite file that
// holds imported trend samples, hourly results, alerts with their event
// queue, and the agent's checkpoints. It needs no server and no cgo (the
// driver is modernc.org/sqlite, registered as "sqlite"), and the file is
// ordinary SQLite: the sqlite3 command-line tool, any SQLite library or a
// spreadsheet's database import can read it.
//
// # Units and time
//
// Values are SI, as the ingest package delivers them; each series records
// its SI unit and the unit the export logged. Every timestamp is an INTEGER
// column of Unix milliseconds, UTC, named *_ms. Times are stored to the
// millisecond: a sub-millisecond part is truncated (floored) on write, and
// window bounds are compared as if the stored times were exact, so a read
// of [from, to) returns exactly the stored samples with from <= t < to.
// Times come back in UTC.
//
// # Not-a-number
//
// WriteSamples refuses NaN and ±Inf samples (ErrNotFinite, naming the
// series and time) before writing anything; a missing reading is a missing
// sample, never a stored NaN. Every other value, -0 included, is kept bit
// for bit. (SQLite itself has no NaN: it stores a bound NaN as NULL.) In
// hourly fields NaN and ±Inf are written as JSON null and read back as NaN.
// In alerts a NaN energy or cost is stored as NULL and read back as NaN.
//
// # Schema (version 6)
//
//	series        one row per trend point
//	  id          INTEGER PRIMARY KEY
//	  name        TEXT UNIQUE NOT NULL   metrics.PointRef.Name(): CSV column or point name
//	  kind        TEXT                   what it measures (free text, e.g. "temperature")
//	  unit_si     TEXT                   unit of value as psychro names it: "°C", "Pa", "kW"
//	  source_unit TEXT                   unit the export logged before conversion
//	  created_ms  INTEGER
//
//	sample_blocks (schema v6) one row per series and UTC day; PRIMARY KEY (series_id, day_ms)
//	  series_id   INTEGER REFERENCES series(id) ON DELETE CASCADE
//	  day_ms      INTEGER                start of the UTC day; a multiple of 86400000
//	  n           INTEGER                samples in the block (> 0)
//	  first_ms, last_ms INTEGER          first and last sample time in the block
//	  data        BLOB                   the samples, times and SI values encoded
//	                                     exactly (layout in block.go)
//
// Up to v5 the samples were one row each in a table samples (series_id,
// ts_ms, value); opening such a file read-write packs them into blocks
// and drops the table, in one transaction (a failure leaves the v5 file
// as it was). The pages the old table held stay in the file as free pages
// that later writes reuse; "sqlite3 FILE VACUUM" returns them to the disk.
//
//	imports       one row per "dewline import" of a file (re-imports add rows)
//	  id, file, sha256 (hex), rows_read, accepted, rejected, started_ms, finished_ms
//
//	hourly        WITHOUT ROWID; PRIMARY KEY (ahu, hour_ms); index (hour_ms, ahu)
//	  ahu         TEXT
//	  hour_ms     INTEGER                start of the hour; a multiple of 3600000
//	  schema      INTEGER                version of the field set
//	  fields      TEXT                   JSON object {"reheat_kwh": 1.5, "coverage": null, ...}
//	  flags       TEXT                   JSON array of data-quality flags
//	  written_ms  INTEGER
//
//	alerts        PRIMARY KEY id; index (ahu, start_ms)
//	  id, ahu, kind, severity TEXT
//	  state       TEXT                   'pending' | 'open' | 'closed'
//	  start_ms    INTEGER
//	  end_ms      INTEGER NULL           NULL while ongoing
//	  energy_kwh  REAL NULL, cost REAL NULL (site currency); NULL = unknown
//	  reason      TEXT, updated_ms INTEGER
//
//	alert_events  the notification queue
//	  seq         INTEGER PRIMARY KEY AUTOINCREMENT (never reused)
//	  alert_id    TEXT REFERENCES alerts(id) ON DELETE CASCADE
//	  transition  TEXT, at_ms INTEGER
//	  payload     TEXT                   JSON
//	  delivered_ms INTEGER NULL          NULL until delivered; partial index on pending
//	  UNIQUE (alert_id, transition)      (schema v4) a transition is recorded once; a
//	                                     repeat refreshes an undelivered event, never
//	                                     re-queues a delivered one
//
//	checkpoints   WITHOUT ROWID
//	  ahu         TEXT PRIMARY KEY
//	  last_hour_ms INTEGER               last hour the agent completed (its start)
//	  updated_ms  INTEGER
//
//	alert_states  WITHOUT ROWID (schema v2): the agent's alert rule states
//	  ahu, kind   TEXT PRIMARY KEY (ahu, kind)
//	  state       TEXT                   JSON (status, hour counters, energy at stake)
//	  updated_ms  INTEGER
//
//	daily         WITHOUT ROWID (schema v3): derived from hourly, per local day
//	  zone, day_ms, ahu  PRIMARY KEY     IANA zone; the local day's start
//	  end_ms      INTEGER                the next local midnight (23 to 25 h later)
//	  hours       INTEGER                hourly rows in the day
//	  flagged     INTEGER                of which with a data-quality flag
//	  sums        TEXT                   JSON: sums of metrics.AdditiveFields
//
//	site          (schema v5): the one site whose results the file holds
//	  only        INTEGER PRIMARY KEY    always 1: one row at most
//	  id          TEXT                   the site's id (site.id)
//	  claimed_ms  INTEGER
//
// One file holds one site. With Options.Site, Open refuses a file that
// names another site (ErrOtherSite, saying to give the site its own file
// or to set site.id back), and a read-write Open of a file that names none
// (new, or from before v5, when a file held one site) claims it.
//
// With Options.DayZone, every write of hourly rows rebuilds the daily rows
// of the days it touches in the same transaction, and a read-write Open
// rebuilds days whose hour count disagrees with hourly; ReadDays answers
// only when the days account for every stored hour of the period.
//
// Commit writes an air handler's hourly rows, alerts, events, rule states
// and checkpoint in one transaction.
//
// Reading the file by hand, for example (the samples themselves are read
// with "dewline check --store" or through this package):
//
//	sqlite3 -readonly dewline.db "
//	  SELECT s.name, date(b.day_ms/1000, 'unixepoch') AS day, b.n,
//	    datetime(b.first_ms/1000, 'unixepoch') AS first, datetime(b.last_ms/1000, 'unixepoch') AS last, s.unit_si
//	  FROM sample_blocks b JOIN series s ON s.id = b.series_id
//	  WHERE s.name = 'AHU-1 SAT' ORDER BY b.day_ms"
//
//	sqlite3 -readonly dewline.db "
//	  SELECT ahu, datetime(hour_ms/1000, 'unixepoch'), json_extract(fields, '$.reheat_kwh')
//	  FROM hourly ORDER BY hour_ms, ahu"
//
// # Versions and migrations
//
// PRAGMA user_version is the schema version and PRAGMA application_id marks
// the file as dewline's ("dewl"). Open migrates an older file step by step,
// each step in its own transaction; it refuses a file from a newer dewline
// (ErrSchemaNewer, naming both versions: upgrade dewline) and an SQLite file
// that belongs to another program (ErrNotStore). A read-only open never
// migrates: it wants the current version (ErrSchemaOlder otherwise). To
// change the schema, append a step to migrations in migrate.go; the comment
// there lists what else to update.
//
// # Connections and concurrency
//
// Every connection runs in WAL mode with synchronous=NORMAL, foreign keys on
// and a busy timeout (Options.BusyTimeout). A Store is safe for concurrent
// use: writes are serialised in the process and each is one transaction
// (BEGIN IMMEDIATE); reads run alongside them and see only committed data.
// Other processes may read the file while dewline writes; a second writing
// process waits up to the busy timeout for each write.
//
// # What it must never do
//
// It never logs (errors are returned, wrapped with what was being done),
// never reads a clock except through Options.Now, never stores a NaN
// sample, and never moves a checkpoint (Commit, PutHourlyAndCheckpoint)
// without the hour's row being stored in the same transaction.
package embedded
