package embedded

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"time"
)

// Commit is everything one agent run writes for one air handler.
type Commit struct {
	AHU     string
	Rows    []HourRow
	Alerts  []AlertRow                 // alerts to insert or replace
	Events  []AlertEvent               // transitions to deliver; their alerts are in Alerts or stored
	States  map[string]json.RawMessage // the air handler's alert rule states by kind, replacing all stored ones
	Through time.Time                  // the new checkpoint: the start of the last hour written
}

// Commit writes c in one transaction: hourly rows, alerts, events, rule
// states and the checkpoint all land or none does, so a crash never leaves
// a checkpoint past unwritten hours or alert events without their hours.
// A zero Through leaves the checkpoint where it is.
func (s *Store) Commit(ctx context.Context, c Commit) error {
	what := fmt.Sprintf("commit %s through %s", quote(c.AHU), c.Through.UTC().Format(time.RFC3339))
	if c.AHU == "" {
		return fmt.Errorf("%s: ahu is empty", what)
	}
	if !c.Through.IsZero() {
		if err := checkCheckpointArgs(c.AHU, c.Through); err != nil {
			return fmt.Errorf("%s: %w", what, err)
		}
	}
	if err := validateHours(c.Rows); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	for _, a := range c.Alerts {
		if err := a.validate(); err != nil {
			return fmt.Errorf("%s: alert %s: %w", what, quote(a.ID), err)
		}
	}
	for kind, st := range c.States {
		if !json.Valid(st) {
			return fmt.Errorf("%s: state of %s is not valid JSON", what, quote(kind))
		}
	}
	return s.write(ctx, what, func(tx *sql.Tx) error {
		now := s.nowMs()
		if err := s.writeResults(ctx, tx, c.Rows, c.Alerts, c.Events, now); err != nil {
			return err
		}
		if c.States != nil {
			if _, err := tx.ExecContext(ctx, "DELETE FROM alert_states WHERE ahu = ?", c.AHU); err != nil {
				return fmt.Errorf("replace alert states: %w", err)
			}
			for kind, st := range c.States {
				if _, err := tx.ExecContext(ctx, "INSERT INTO alert_states (ahu, kind, state, updated_ms) VALUES (?, ?, ?, ?)",
					c.AHU, kind, string(st), now); err != nil {
					return fmt.Errorf("put alert state %s: %w", quote(kind), err)
				}
			}
		}
		if c.Through.IsZero() {
			return nil
		}
		var n int
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM hourly WHERE ahu = ? AND hour_ms = ?",
			c.AHU, toMs(c.Through)).Scan(&n); err != nil {
			return fmt.Errorf("look up checkpoint hour: %w", err)
		}
		if n == 0 {
			return fmt.Errorf("no hourly row for that hour: %w", ErrCheckpointAhead)
		}
		return setCheckpoint(ctx, tx, c.AHU, c.Through, now)
	})
}

// PutResults writes the hourly rows, alerts and alert events of an
// analysis in one transaction: either the hours and their alerts land
// together or nothing does, so a failure never leaves hours stored
// without the alerts computed from them. Rows replace stored hours;
// events are recorded once per alert transition (see AppendAlertEvent).
func (s *Store) PutResults(ctx context.Context, rows []HourRow, alerts []AlertRow, events []AlertEvent) error {
	what := fmt.Sprintf("put %d hourly rows and %d alert events", len(rows), len(events))
	if err := validateHours(rows); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	for _, a := range alerts {
		if err := a.validate(); err != nil {
			return fmt.Errorf("%s: alert %s: %w", what, quote(a.ID), err)
		}
	}
	return s.write(ctx, what, func(tx *sql.Tx) error {
		return s.writeResults(ctx, tx, rows, alerts, events, s.nowMs())
	})
}

// writeResults writes hours, alerts and events inside tx.
func (s *Store) writeResults(ctx context.Context, tx *sql.Tx, rows []HourRow, alerts []AlertRow, events []AlertEvent, now int64) error {
	if err := s.putHourly(ctx, tx, rows, now); err != nil {
		return err
	}
	for _, a := range alerts {
		if err := upsertAlert(ctx, tx, a, now); err != nil {
			return fmt.Errorf("put alert %s: %w", quote(a.ID), err)
		}
	}
	for _, e := range events {
		payload := "{}"
		if len(e.Payload) > 0 {
			if !json.Valid(e.Payload) {
				return fmt.Errorf("event for %s: payload is not valid JSON: %w", quote(e.AlertID), ErrInvalid)
			}
			payload = string(e.Payload)
		}
		e.Delivered = time.Time{}
		if _, err := insertEvent(ctx, tx, e, payload); err != nil {
			return fmt.Errorf("append event for %s: %w", quote(e.AlertID), err)
		}
	}
	return nil
}

// AlertStates returns the air handler's stored alert rule states by kind.
func (s *Store) AlertStates(ctx context.Context, ahu string) (map[string]json.RawMessage, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT kind, state FROM alert_states WHERE ahu = ? ORDER BY kind", ahu)
	if err != nil {
		return nil, fmt.Errorf("read alert states of %s: %w", quote(ahu), err)
	}
	out := map[string]json.RawMessage{}
	for rows.Next() {
		var kind, st string
		if err := rows.Scan(&kind, &st); err != nil {
			_ = rows.Close()
			return nil, fmt.Errorf("read alert states of %s: %w", quote(ahu), err)
		}
		out[kind] = json.RawMessage(st)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("read alert states of %s: %w", quote(ahu), err)
	}
	return out, nil
}
