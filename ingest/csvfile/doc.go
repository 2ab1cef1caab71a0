// Package csvfile reads trend exports of building controls (CSV and its
// semicolon, tab and pipe cousins) as a stream of ingest.Record values, one
// per value cell, with the file, line, series name, the unit the file
// states and the instant of the reading.
//
// # Units
//
// Values leave this package exactly as written in the file: no unit
// conversion. Record.Unit carries the unit the file states for the series
// ("" when it states none), as written: from a second header row of units,
// from the column header ("Supply Temp (°F)", "SAT [degC]", "Flow, CFM"), or
// from a unit column in the long layout, where it may change from row to
// row: convert each record with its own Unit (ingest.RowUnits does), never
// with the unit of a series' first record. Times are instants (time.Time) in Options.Location, or
// UTC when no Location is set.
//
// # What it detects
//
//   - Encoding: UTF-8 with or without byte-order mark, UTF-16 with a
//     byte-order mark, gzip; header cells that are not UTF-8 are read as
//     ISO 8859-1 ("°" as the single byte 0xB0).
//   - Delimiter: comma, semicolon, tab or pipe, whichever splits most lines
//     of the head into one number of fields. Fields may be quoted (RFC 4180:
//     delimiters, doubled quotes and line breaks inside quotes).
//   - Decimal separator: "21,5" can only be a decimal comma; "21.5" only a
//     decimal point; "12,000" or "12.000" alone could be either a decimal or
//     a thousands separator and decide nothing. A file that mixes both, or
//     shows only the undecided kind, is refused until Options.DecimalComma
//     is set. Thousands separators are never accepted: such a cell is
//     rejected, not guessed.
//   - Header: the first line with as many fields as the data; lines before
//     it (a report title, an export date) are skipped. A line of units right
//     under a wide header (no timestamp, no number, at least one unit
//     psychro knows) is read as the units of the columns.
//   - Layout: long when the header names a point column (point, name,
//     series, tag, trend, sensor, object, channel, ...) and a value column
//     (value, val, reading, ...); a unit column (unit, units, uom, ...) is
//     optional. Otherwise wide: one time column and one column per point.
//   - Time column: named time, timestamp, date, datetime, date/time, ts, ...
//     (case and '_'/'-' ignored); else the first column that holds
//     timestamps. Separate "Date" and "Time" columns are joined.
//
// # Timestamps
//
// One form per file, found from the head:
//
//	ISO 8601    2026-07-14 13:05:00, 2026-07-14T13:05, 2026-07-14T13:05:00.250Z,
//	            2026-07-14T13:05:00-04:00 (offset also as -0400 or -04; "UTC", "GMT")
//	year last   07/14/2026 1:05:00 PM, 14.07.2026 13:05, 14/07/2026 13:05:00,
//	            7/14/26 13:05 (two-digit years are 20yy); AM/PM optional
//	Unix time   seconds (10 digits, fraction allowed), milliseconds (13),
//	            microseconds (16) or nanoseconds (19): the years 2001 to 2286
//
// A date alone is midnight; "24:00" is the end of the day. With the year
// last, the order of day and month is decided per file: a first number above
// 12 makes the file day-first, a second number above 12 month-first, dates
// written with dots are day-first by convention, and a file whose dates
// never tell (all of them on days 1 to 12) is an error that asks for
// Options.DayFirst. When the head does not tell and the input is seekable
// (an *os.File), NewReader first scans the whole date column for a day
// above 12.
//
// # Local time and daylight saving
//
// Timestamps without an offset are wall times, read in Options.Location; a
// file with them and no Location is refused (ErrNeedLocation), since a zone
// is never guessed. Where clocks go back, an hour of wall times happens
// twice: the first pass takes the earlier (summer) offset and, once wall
// time steps backwards inside that hour, the rows take the later (winter)
// offset. In the long layout this is tracked per point, so a file sorted by
// point resolves each point's pass on its own. Where clocks go forward, an
// hour of wall times does not exist: such rows are rejected
// (ReasonDSTGap). Stats.DST counts both.
//
// # Values
//
// A value cell is a decimal number with the file's separator and an
// optional sign and exponent. Empty cells and the markers NaN, null, none,
// NA, N/A, #N/A, "-", "--", "---", "?" and "no data" (any case) are missing
// values: no record, no error, counted in Stats.Missing. On/Off, True/False,
// Active/Inactive and Yes/No (any case) are binary points and read as 1 and
// 0, counted in Stats.Booleans, because reheat-enable and fan-status points
// are written that way. Anything else (text such as "Comm Fail", numbers
// with units or with the other decimal separator, values beyond float64) is
// a rejected cell: the other cells of the row are kept.
//
// # Errors
//
// A file that cannot be read as a trend export is refused by NewReader with
// a *FileError naming the file, what was found and the fix: empty files,
// Excel workbooks (.xlsx is a ZIP archive; old .xls), HTML pages saved in
// place of an export, XML, PDF, binary data, no delimiter, no header, no
// time column, unrecognised timestamps, a first data row that does not end
// within the 128 KiB head (ErrRowTooLong), unresolvable day/month order or
// decimal separator, duplicate or empty column names. Problems with single
// rows never stop reading: malformed quotes, wrong field counts, a
// truncated last line, unparseable or skipped-hour times and bad cells are
// counted in Stats.Rejected by Reason, and the first MaxExamples are kept
// with their line numbers.
//
// A quoted field may hold line breaks for up to 16 lines. A quote that
// does not close by then, or by the end of the input, rejects only the
// first line of its record (ReasonOpenQuote): reading resumes on the next
// line, so a stray quote costs one row. Every physical line is accounted
// for: Stats.HeaderLines + Blank + Rows + Continued equals the lines of the
// file, and each row is kept or counted in Stats.RowsRejected. Which columns mean what (supply temperature,
// reheat kW) is not this package's concern: callers map series names.
//
// # Streaming and speed
//
// A Reader holds one row at a time plus a 128 KiB read buffer; memory does
// not grow with the file. Lines without quotes are cut in place in the read
// buffer. Plain rows of a wide file (time first, every cell a plain decimal,
// no daylight-saving change near) take a single pass over the line that
// parses the timestamp with a fixed-layout parser, resolves wall times
// through a cached zone period and parses the decimals exactly without
// strconv, allocating nothing; anything unusual falls back to the general
// path, which gives the same result. For loops over millions of records,
// Read fills a slice and saves the copy of each record that Next returns.
//
// # What it must never do
//
// csvfile never converts units, never guesses a time zone, a day/month
// order or a decimal separator that the data does not show, never returns a
// non-finite value, never panics on malformed input and never holds a whole
// file in memory. It does no logging: counts and examples go to Stats for
// the caller to report.
package csvfile
