// Package influx reads air-handler trend points from InfluxDB with Flux and
// writes samples and results back. It is the only package in dewline that
// imports the InfluxDB client (github.com/influxdata/influxdb-client-go/v2).
//
// The same code serves InfluxDB 2.x and Cloud (Options: org, bucket, API
// token) and InfluxDB 1.8 and later 1.x with Flux enabled (bucket
// "database/retention policy" or just "database", token "user:password" or
// empty, org ignored). New checks the options without contacting the
// server; Ping and Ready do.
//
// # Reading
//
// ReadSeries streams one point; ReadPoints streams all points of an air
// handler from one Flux query, raw or as window means computed on the
// server, and hands each sample to a callback with the index of its point.
// Rows are parsed as they arrive (annotated CSV, read by this package
// rather than the client library, whose per-row maps cost more than the
// server spends producing the rows); nothing collects the result. Windows
// are [from, to) to the nanosecond, also on InfluxDB 1.x, whose range()
// includes its stop time (influxdata/influxdb#19966).
//
// ReadBatch reads the points of many air handlers in one query (the
// agent's reads: ingest.BatchReader): points that share a measurement and
// tag keys are selected together, each tag key by the set of its values.
// On an InfluxDB 1.x server it asks in InfluxQL, which 1.8 answers about two
// to three times faster than Flux, and reads the chunked JSON answer (the CSV
// answer drops a statement's error); elsewhere in Flux. The agent's
// checkpoints and alert states of many air handlers are one query too
// (LoadStates), and its results one write (CommitBatch, checkpoints last).
//
// A point is one series. A point whose tags match several series (it leaves
// out a tag that tells them apart) fails the read with ErrAmbiguousPoint.
// CheckPoint, for "dewline check", counts a point's samples and series in a
// window and tells a quiet point (no samples there, no error) from one that
// matches nothing at any time (ErrNoSuchPoint, naming the measurement,
// field or tags that is missing).
//
// # Units
//
// Values leave this package in SI (°C, Pa, m³/s, kW, fractions 0..1, as
// psychro defines them). A point with its own measurement and field is
// logged in the unit its reference names (metrics.PointRef.Unit) and is
// converted; an unknown unit is an error before any query. A point without
// its own location lives at dewline's default location, where
// WriteSamples ("dewline import") stores it in SI:
//
//	dewline_trend,point=<name>,unit=<SI unit> value=<SI value> <time>
//
// The unit tag tells people browsing the database what the number is;
// dewline reads the default location as SI whatever the reference's unit,
// which names the unit of the export the samples came from. WriteSamples to
// a point's own location converts back to the point's unit, so a write and
// a read return the same SI values either way, and dewline's writes to a
// facility's series look like the facility's own.
//
// # Query safety
//
// No text from configuration or data is pasted into a query. Every bucket,
// measurement, field, tag key and tag value becomes a Flux string literal
// through fluxString (its comment gives the escaping rules and the part of
// the Flux specification they follow), tag keys are read as r["key"], and
// times are RFC 3339 literals in UTC with nanoseconds. A set of tag values
// is a regular expression literal of the values through regexp.QuoteMeta
// with "/" escaped (fluxRegexOneOf; equality tests when a value holds a
// control character). InfluxQL gets the same regular expression (its
// literal has the same one escape), identifiers in double quotes and
// strings in single quotes with the influxql package's escapes, and times
// as integer nanoseconds.
//
// # Failures
//
// Each request has a timeout (Options.Timeout), which also ends a result
// that stops arriving part way, and is retried with exponential backoff and
// jitter on connection failures, timeouts, 429 and 5xx (a server's
// Retry-After is honoured); other 4xx answers and query errors are returned
// at once with the server's message. A read is not retried once samples have
// reached the caller. A failed request returns a *RequestError whose Kind
// (ErrTimeout, ErrUnreachable, ErrServer, ErrRejected, ErrUnauthorized,
// ErrNoSuchBucket) errors.Is matches and whose text names the URL, the
// attempts and what to check; its Timeout method (as net.Error's, reached
// with errors.As) is true for ErrTimeout only.
//
// # What it must never do
//
// It never logs and never prints: the client library's own logger is
// switched off (it would write to stderr) and errors are returned instead.
// The token never appears in an error or in printed Options: every error
// text is cleaned of it, and Options print it as "[redacted]" through
// String, GoString, MarshalJSON and LogValue. It never writes a name that
// line protocol would change on the way (a tab or line break, a trailing
// backslash, a backslash before a comma, space, equals sign or quote), a
// measurement starting with "#" (a comment line), or a NaN.
package influx
