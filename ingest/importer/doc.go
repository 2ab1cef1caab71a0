// Package importer is the import pipeline of "dewline import": it reads a
// CSV trend export once (hashing it as it goes, bounded in size), keeps the
// values of the configured points, converts them to SI and writes them to
// a store in batches per series, then records the file in the store's
// import log where the store keeps one. Stats counts what happened to
// every row and Stats.Write prints it for the command. Checks reads the
// same exports, or the store, without writing, for "dewline check".
//
// It writes through the interfaces of ingest/store and never chooses a
// backend; progress goes to a callback, logs to the zerolog logger it is
// handed.
package importer
