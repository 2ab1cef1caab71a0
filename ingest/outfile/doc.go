// Package outfile writes every output file of dewline (hourly CSV and
// JSON, reports, PDFs, comparisons, the demo's exports and configuration)
// the same way: into a temporary file in the destination's folder, renamed
// over the destination only when the whole content is written and synced.
// A failed or interrupted run leaves the previous file as it was, and a
// reader never sees half a file.
//
// RefuseInputs guards the other way round: an output path that names one
// of the command's inputs (the same file, through any path or link) is
// refused before anything is read or written.
//
// It never logs and never removes anything but its own temporary files.
package outfile
