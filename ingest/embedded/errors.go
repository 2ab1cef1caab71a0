package embedded

import "errors"

// Sentinel errors, checked with errors.Is. The errors returned around them
// name the file, series, alert or hour concerned.
var (
	// ErrUnknownSeries: no series of that name was ever imported.
	ErrUnknownSeries = errors.New("unknown series")
	// ErrNotFinite: a sample value is NaN or ±Inf, which the store refuses.
	ErrNotFinite = errors.New("value not finite")
	// ErrUnitMismatch: samples for a series arrive in a different SI unit
	// from the one the series was created with.
	ErrUnitMismatch = errors.New("unit differs from the stored series")
	// ErrInvalid: an argument fails validation (empty name, hour not on the
	// hour, unknown alert state, malformed JSON payload, ...).
	ErrInvalid = errors.New("invalid argument")
	// ErrSchemaNewer: the file was written by a newer dewline.
	ErrSchemaNewer = errors.New("store schema is newer than this dewline")
	// ErrSchemaOlder: a read-only open found a file that needs migrating.
	ErrSchemaOlder = errors.New("store schema is older than this dewline")
	// ErrNotStore: the file is an SQLite database but not a dewline store.
	ErrNotStore = errors.New("not a dewline store")
	// ErrReadOnly: a write was attempted on a store opened read-only.
	ErrReadOnly = errors.New("store is open read-only")
	// ErrCheckpointAhead: PutHourlyAndCheckpoint was asked to move a
	// checkpoint to an hour that has no hourly row.
	ErrCheckpointAhead = errors.New("checkpoint past an unwritten hour")
	// ErrUnknownAlert: an alert event names an alert that was never put.
	ErrUnknownAlert = errors.New("unknown alert")
	// ErrUnknownEvent: MarkDelivered names an event sequence number that
	// does not exist.
	ErrUnknownEvent = errors.New("unknown alert event")
	// ErrOtherSite: the file holds the results of another site.
	ErrOtherSite = errors.New("store file holds another site")
)
