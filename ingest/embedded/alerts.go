package embedded

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
)

// Alert states, as stored in alerts.state.
const (
	StatePending = "pending"
	StateOpen    = "open"
	StateClosed  = "closed"
)

// AlertRow is an alert's current state. The store keeps it as given; the
// rules for moving between states belong to the agent.
type AlertRow struct {
	ID       string // stable identity chosen by the agent
	AHU      string
	Kind     string
	Severity string
	State    string // StatePending, StateOpen or StateClosed
	Start    time.Time
	End      time.Time // zero while the alert is ongoing (end_ms NULL)
	// EnergyKWh and Cost (in the site's currency) are at stake; NaN means
	// unknown and is stored as NULL.
	EnergyKWh float64
	Cost      float64
	Reason    string    // plain-language explanation
	Updated   time.Time // set by the store; ignored by PutAlert
}

// AlertFilter selects alerts; an empty field matches all.
type AlertFilter struct {
	AHU   string
	State string
}

// AlertEvent is one transition of an alert, queued for notification until
// it is marked delivered.
type AlertEvent struct {
	Seq        int64 // assigned by the store, increasing, never reused
	AlertID    string
	Transition string // e.g. "opened", "closed"; free text for now
	At         time.Time
	Payload    json.RawMessage // JSON to hand to the notifier; {} when empty
	Delivered  time.Time       // zero until MarkDelivered
}

// PutAlert stores a, replacing the alert with the same ID.
func (s *Store) PutAlert(ctx context.Context, a AlertRow) error {
	what := "put alert " + quote(a.ID)
	if err := a.validate(); err != nil {
		return fmt.Errorf("%s: %w", what, err)
	}
	return s.write(ctx, what, func(tx *sql.Tx) error { return upsertAlert(ctx, tx, a, s.nowMs()) })
}

// upsertAlert inserts a or replaces the alert with its ID.
func upsertAlert(ctx context.Context, tx *sql.Tx, a AlertRow, nowMs int64) error {
	_, err := tx.ExecContext(ctx, `INSERT INTO alerts
		(id, ahu, kind, severity, state, start_ms, end_ms, energy_kwh, cost, reason, updated_ms)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (id) DO UPDATE SET
			ahu = excluded.ahu, kind = excluded.kind, severity = excluded.severity,
			state = excluded.state, start_ms = excluded.start_ms, end_ms = excluded.end_ms,
			energy_kwh = excluded.energy_kwh, cost = excluded.cost,
			reason = excluded.reason, updated_ms = excluded.updated_ms`,
		a.ID, a.AHU, a.Kind, a.Severity, a.State, toMs(a.Start), msOrNull(a.End),
		floatOrNull(a.EnergyKWh), floatOrNull(a.Cost), a.Reason, nowMs)
	return err
}

func (a AlertRow) validate() error {
	var p []string
	for _, f := range []struct{ name, v string }{
		{"id", a.ID}, {"ahu", a.AHU}, {"kind", a.Kind}, {"severity", a.Severity},
	} {
		if f.v == "" {
			p = append(p, f.name+" is empty")
		}
	}
	switch a.State {
	case StatePending, StateOpen, StateClosed:
	default:
		p = append(p, fmt.Sprintf("state %q is not pending, open or closed", a.State))
	}
	if a.Start.IsZero() {
		p = append(p, "start is not set")
	}
	if !a.End.IsZero() && a.End.Before(a.Start) {
		p = append(p, "end is before start")
	}
	if math.IsInf(a.EnergyKWh, 0) {
		p = append(p, "energy_kwh is infinite")
	}
	if math.IsInf(a.Cost, 0) {
		p = append(p, "cost is infinite")
	}
	return problems(p)
}

// floatOrNull stores NaN as NULL explicitly rather than relying on SQLite
// doing so.
func floatOrNull(v float64) any {
	if math.IsNaN(v) {
		return nil
	}
	return v
}

func nullFloat(v sql.NullFloat64) float64 {
	if !v.Valid {
		return math.NaN()
	}
	return v.Float64
}

// ListAlerts returns the alerts matching f, by start time then ID.
func (s *Store) ListAlerts(ctx context.Context, f AlertFilter) ([]AlertRow, error) {
	q := `SELECT id, ahu, kind, severity, state, start_ms, end_ms, energy_kwh, cost, reason, updated_ms
		FROM alerts`
	var (
		where []string
		args  []any
	)
	if f.AHU != "" {
		where, args = append(where, "ahu = ?"), append(args, f.AHU)
	}
	if f.State != "" {
		where, args = append(where, "state = ?"), append(args, f.State)
	}
	if len(where) > 0 {
		q += " WHERE " + strings.Join(where, " AND ")
	}
	q += " ORDER BY start_ms, id"
	rows, err := s.db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("list alerts: %w", err)
	}
	var out []AlertRow
	for rows.Next() {
		var (
			a              AlertRow
			start, updated int64
			end            sql.NullInt64
			energy, cost   sql.NullFloat64
		)
		err := rows.Scan(&a.ID, &a.AHU, &a.Kind, &a.Severity, &a.State, &start, &end, &energy, &cost, &a.Reason, &updated)
		if err != nil {
			return nil, fmt.Errorf("list alerts: %w", rowsDone(rows, err))
		}
		a.Start, a.End, a.Updated = fromMs(start), nullMs(end), fromMs(updated)
		a.EnergyKWh, a.Cost = nullFloat(energy), nullFloat(cost)
		out = append(out, a)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("list alerts: %w", err)
	}
	return out, nil
}

// AppendAlertEvent queues e for delivery and returns its sequence number.
// The alert must have been put first (ErrUnknownAlert otherwise). A
// transition is recorded once: appending the same alert's same transition
// again returns the first event's seq; while that event is undelivered its
// time and payload are replaced, once delivered it is left alone, so a
// re-analysis never queues a delivered event again.
func (s *Store) AppendAlertEvent(ctx context.Context, e AlertEvent) (seq int64, err error) {
	what := fmt.Sprintf("append %s event for alert %s", quote(e.Transition), quote(e.AlertID))
	var p []string
	if e.AlertID == "" {
		p = append(p, "alert id is empty")
	}
	if e.Transition == "" {
		p = append(p, "transition is empty")
	}
	if e.At.IsZero() {
		p = append(p, "at is not set")
	}
	payload := "{}"
	if len(e.Payload) > 0 {
		if !json.Valid(e.Payload) {
			p = append(p, "payload is not valid JSON")
		}
		payload = string(e.Payload)
	}
	if err := problems(p); err != nil {
		return 0, fmt.Errorf("%s: %w", what, err)
	}
	err = s.write(ctx, what, func(tx *sql.Tx) error {
		var one int
		err := tx.QueryRowContext(ctx, "SELECT 1 FROM alerts WHERE id = ?", e.AlertID).Scan(&one)
		if errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("%w: put the alert before its events", ErrUnknownAlert)
		}
		if err != nil {
			return fmt.Errorf("look up alert: %w", err)
		}
		seq, err = insertEvent(ctx, tx, e, payload)
		return err
	})
	if err != nil {
		return 0, err
	}
	return seq, nil
}

// upsertEventSQL inserts an event or, for a transition already recorded
// and not yet delivered, refreshes its time and payload. The unique index
// alert_events_once makes this hold across concurrent writers.
const upsertEventSQL = `INSERT INTO alert_events (alert_id, transition, at_ms, payload, delivered_ms)
	VALUES (?, ?, ?, ?, ?)
	ON CONFLICT (alert_id, transition) DO UPDATE SET at_ms = excluded.at_ms, payload = excluded.payload
	WHERE alert_events.delivered_ms IS NULL
	RETURNING seq`

// insertEvent records e once and returns its seq.
func insertEvent(ctx context.Context, tx *sql.Tx, e AlertEvent, payload string) (int64, error) {
	var seq int64
	err := tx.QueryRowContext(ctx, upsertEventSQL, e.AlertID, e.Transition, toMs(e.At), payload, msOrNull(e.Delivered)).Scan(&seq)
	if errors.Is(err, sql.ErrNoRows) {
		// Already delivered: nothing changes.
		err = tx.QueryRowContext(ctx, "SELECT seq FROM alert_events WHERE alert_id = ? AND transition = ?",
			e.AlertID, e.Transition).Scan(&seq)
	}
	return seq, err
}

// PendingAlertEvents returns up to limit undelivered events, oldest first;
// limit <= 0 returns them all.
func (s *Store) PendingAlertEvents(ctx context.Context, limit int) ([]AlertEvent, error) {
	if limit <= 0 {
		limit = -1 // SQLite: no limit
	}
	rows, err := s.db.QueryContext(ctx, `SELECT seq, alert_id, transition, at_ms, payload
		FROM alert_events WHERE delivered_ms IS NULL ORDER BY seq LIMIT ?`, limit)
	if err != nil {
		return nil, fmt.Errorf("list pending alert events: %w", err)
	}
	var out []AlertEvent
	for rows.Next() {
		var (
			e       AlertEvent
			at      int64
			payload string
		)
		if err := rows.Scan(&e.Seq, &e.AlertID, &e.Transition, &at, &payload); err != nil {
			return nil, fmt.Errorf("list pending alert events: %w", rowsDone(rows, err))
		}
		e.At, e.Payload = fromMs(at), json.RawMessage(payload)
		out = append(out, e)
	}
	if err := rowsDone(rows, nil); err != nil {
		return nil, fmt.Errorf("list pending alert events: %w", err)
	}
	return out, nil
}

// MarkDelivered records that event seq was delivered at at. Marking an
// event already delivered keeps the first time and returns nil, so a
// notifier may retry; an unknown seq is ErrUnknownEvent.
func (s *Store) MarkDelivered(ctx context.Context, seq int64, at time.Time) error {
	what := fmt.Sprintf("mark alert event %d delivered", seq)
	if at.IsZero() {
		return fmt.Errorf("%s: delivery time is not set: %w", what, ErrInvalid)
	}
	return s.write(ctx, what, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx,
			"UPDATE alert_events SET delivered_ms = ? WHERE seq = ? AND delivered_ms IS NULL", toMs(at), seq)
		if err != nil {
			return err
		}
		if n, err := res.RowsAffected(); err != nil || n == 1 {
			return err
		}
		var one int
		err = tx.QueryRowContext(ctx, "SELECT 1 FROM alert_events WHERE seq = ?", seq).Scan(&one)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrUnknownEvent
		}
		return err
	})
}
