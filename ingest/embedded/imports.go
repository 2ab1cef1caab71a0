package embedded

import (
	"context"
	"database/sql"
	"encoding/hex"
	"fmt"
	"strings"
	"time"
)

// ImportLog is one line of the import log: which file was read, its
// content hash, and what became of its rows. Importing the same file again
// is allowed (its samples are upserted) and logs another line.
type ImportLog struct {
	ID       int64  // assigned by the store; ignored by RecordImport
	File     string // path as given to "dewline import"
	SHA256   string // hex SHA-256 of the file's bytes
	RowsRead int    // data rows read from the file
	Accepted int    // samples written
	Rejected int    // values refused (unparseable, unit, not finite, ...)
	Started  time.Time
	Finished time.Time
}

// RecordImport appends l to the import log.
func (s *Store) RecordImport(ctx context.Context, l ImportLog) error {
	if err := l.validate(); err != nil {
		return fmt.Errorf("record import of %s: %w", quote(l.File), err)
	}
	return s.write(ctx, "record import of "+quote(l.File), func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO imports
			(file, sha256, rows_read, accepted, rejected, started_ms, finished_ms)
			VALUES (?, ?, ?, ?, ?, ?, ?)`,
			l.File, strings.ToLower(l.SHA256), l.RowsRead, l.Accepted, l.Rejected,
			toMs(l.Started), toMs(l.Finished))
		return err
	})
}

// validate returns every problem with l at once.
func (l ImportLog) validate() error {
	var p []string
	if l.File == "" {
		p = append(p, "file is empty")
	}
	if b, err := hex.DecodeString(l.SHA256); err != nil || len(b) != 32 {
		p = append(p, fmt.Sprintf("sha256 %q is not 64 hex digits", l.SHA256))
	}
	for _, c := range []struct {
		field string
		n     int
	}{{"rows_read", l.RowsRead}, {"accepted", l.Accepted}, {"rejected", l.Rejected}} {
		if c.n < 0 {
			p = append(p, fmt.Sprintf("%s is negative (%d)", c.field, c.n))
		}
	}
	if l.Started.IsZero() || l.Finished.IsZero() {
		p = append(p, "started and finished must both be set")
	} else if l.Finished.Before(l.Started) {
		p = append(p, fmt.Sprintf("finished %s is before started %s",
			l.Finished.UTC().Format(time.RFC3339), l.Started.UTC().Format(time.RFC3339)))
	}
	return problems(p)
}

// ListImports returns the import log, oldest first.
func (s *Store) ListImports(ctx context.Context) ([]ImportLog, error) {
	rows, err := s.db.QueryContext(ctx, `SELECT id, file, sha256, rows_read, accepted, rejected,
		started_ms, finished_ms FROM imports ORDER BY id`)
	if err != nil {
		return nil, fmt.Errorf("list imports: %w", err)
	}
	var out []ImportLog
	for rows.Next() {
		var (
			l                 ImportLog
			started, finished int64
		)
		if err := rows.Scan(&l.ID, &l.File, &l.SHA256, &l.RowsRead, &l.Accepted, &l.Rejected, &started, &finished); err != nil {
			return nil, fmt.Errorf("list imports: %w", rowsDone(rows, err))
		}
		l.Started, l.Finished = fromMs(started), fromMs(finished)
		out = append(out, l)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("list imports: %w", err)
	}
	return out, nil
}

// problems joins validation problems into one ErrInvalid error, or nil.
func problems(p []string) error {
	if len(p) == 0 {
		return nil
	}
	return fmt.Errorf("%w: %s", ErrInvalid, strings.Join(p, "; "))
}
