package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"
)

// Checkpoint returns the last hour the agent completed for ahu (the start of
// that hour, UTC); ok is false when none is recorded.
func (s *Store) Checkpoint(ctx context.Context, ahu string) (hour time.Time, ok bool, err error) {
	var ms int64
	err = s.db.QueryRowContext(ctx, "SELECT last_hour_ms FROM checkpoints WHERE ahu = ?", ahu).Scan(&ms)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		return time.Time{}, false, nil
	case err != nil:
		return time.Time{}, false, fmt.Errorf("read checkpoint for %s: %w", quote(ahu), err)
	}
	return fromMs(ms), true, nil
}

// SetCheckpoint records hour as ahu's last completed hour, forwards or
// backwards, whatever the hourly table holds: it is the operator's lever
// (start a new air handler at a chosen hour, rewind to recompute). The agent's
// run loop moves it only through Commit (Backend.Agent), in the same
// transaction as the hours it covers.
func (s *Store) SetCheckpoint(ctx context.Context, ahu string, hour time.Time) error {
	what := "set checkpoint for " + quote(ahu)
	if err := checkCheckpointArgs(ahu, hour); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return s.write(ctx, what, func(tx *sql.Tx) error {
		return setCheckpoint(ctx, tx, ahu, hour, s.nowMs())
	})
}

// PutHourlyAndCheckpoint stores rows (as PutHourly) and moves ahu's
// checkpoint to hour in one transaction: either both happen or neither, so
// a crash or error can never leave a checkpoint past hours that were not
// written. It also refuses, with ErrCheckpointAhead, to move the checkpoint
// to an hour with no row for ahu, stored before or among rows. Commit does
// the same with a run's alerts, events and rule states as well.
func (s *Store) PutHourlyAndCheckpoint(ctx context.Context, rows []HourRow, ahu string, hour time.Time) error {
	what := fmt.Sprintf("put hourly rows and checkpoint %s at %s", quote(ahu), hour.UTC().Format(time.RFC3339))
	if err := checkCheckpointArgs(ahu, hour); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	if err := validateHours(rows); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return s.write(ctx, what, func(tx *sql.Tx) error {
		now := s.nowMs()
		if err := s.putHourly(ctx, tx, rows, now); err != nil {
			return err
		}
		var n int
		err := tx.QueryRowContext(ctx, "SELECT count(*) FROM hourly WHERE ahu = ? AND hour_ms = ?",
			ahu, toMs(hour)).Scan(&n)
		if err != nil {
			return fmt.Errorf("look up checkpoint hour: %w", err)
		}
		if n == 0 {
			return fmt.Errorf("no hourly row for that hour: %w", ErrCheckpointAhead)
		}
		return setCheckpoint(ctx, tx, ahu, hour, now)
	})
}

func checkCheckpointArgs(ahu string, hour time.Time) error {
	var p []string
	if ahu == "" {
		p = append(p, "ahu is empty")
	}
	if !onHour(hour) {
		p = append(p, fmt.Sprintf("hour %s is not on a whole hour", hour.UTC().Format(time.RFC3339Nano)))
	}
	return problems(p)
}

func setCheckpoint(ctx context.Context, tx *sql.Tx, ahu string, hour time.Time, nowMs int64) error {
	_, err := tx.ExecContext(ctx, `INSERT INTO checkpoints (ahu, last_hour_ms, updated_ms) VALUES (?, ?, ?)
		ON CONFLICT (ahu) DO UPDATE SET last_hour_ms = excluded.last_hour_ms, updated_ms = excluded.updated_ms`,
		ahu, toMs(hour), nowMs)
	if err != nil {
		return fmt.Errorf("write checkpoint: %w", err)
	}
	return nil
}
