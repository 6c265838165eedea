package store

import (
	"context"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"
)

// Chamber event kinds (chamber_events.kind).
const (
	EventMaintenance     = "maintenance"
	EventElectrodeChange = "electrode_change"
	EventGasBottleChange = "gas_bottle_change"
	EventOther           = "other"
)

// EventKinds lists the kinds with their labels, in form order.
var EventKinds = []struct{ Key, Label string }{
	{EventMaintenance, "Maintenance"},
	{EventElectrodeChange, "Electrode change"},
	{EventGasBottleChange, "Gas bottle change"},
	{EventOther, "Other"},
}

// EventKindLabel is the label of a kind (the key itself when unknown).
func EventKindLabel(kind string) string {
	for _, k := range EventKinds {
		if k.Key == kind {
			return k.Label
		}
	}
	return kind
}

// MaxEventNote is the longest note of a chamber event, in characters.
const MaxEventNote = 500

// ChamberEventInput is a new chamber event.
type ChamberEventInput struct {
	ChamberID int64
	At        time.Time
	Kind      string
	Note      string
}

// ChamberEvent is a stored chamber event.
type ChamberEvent struct {
	ID          int64
	ChamberID   int64
	ChamberName string
	At          time.Time
	Kind        string
	Note        string
	LoggedBy    string
	CreatedAt   time.Time
}

// AddChamberEvent stores an event logged by user userID. An unknown
// chamber or kind, a missing time or a note longer than MaxEventNote is
// ErrInvalid, with a message naming the problem.
func (d *DB) AddChamberEvent(ctx context.Context, userID int64, in ChamberEventInput) (int64, error) {
	known := false
	for _, k := range EventKinds {
		known = known || k.Key == in.Kind
	}
	if !known {
		return 0, fmt.Errorf("%w: unknown event kind %q (maintenance, electrode_change, gas_bottle_change or other)", ErrInvalid, in.Kind)
	}
	if in.At.IsZero() {
		return 0, fmt.Errorf("%w: the event needs a date and time", ErrInvalid)
	}
	note := strings.TrimSpace(in.Note)
	if n := utf8.RuneCountInString(note); n > MaxEventNote {
		return 0, fmt.Errorf("%w: the note has %d characters, at most %d are kept", ErrInvalid, n, MaxEventNote)
	}
	var one int
	if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM chambers WHERE id = ?`, in.ChamberID).Scan(&one); err != nil {
		return 0, err
	}
	if one == 0 {
		return 0, fmt.Errorf("%w: chamber %d does not exist", ErrInvalid, in.ChamberID)
	}
	res, err := d.db.ExecContext(ctx, `INSERT INTO chamber_events (chamber_id, at, kind, note, logged_by, created_at) VALUES (?, ?, ?, ?, ?, ?)`,
		in.ChamberID, in.At.Unix(), in.Kind, note, userID, d.Now().Unix())
	if err != nil {
		return 0, fmt.Errorf("store: add chamber event: %w", err)
	}
	return res.LastInsertId()
}

// ChamberEvents returns the events of the given chambers (all chambers
// when none are given) from from (inclusive) to to (exclusive; zero
// times leave that side open), oldest first, at most limit (0: 1000).
func (d *DB) ChamberEvents(ctx context.Context, chamberIDs []int64, from, to time.Time, limit int) ([]ChamberEvent, error) {
	if limit <= 0 {
		limit = 1000
	}
	var conds []string
	var args []any
	if len(chamberIDs) > 0 {
		conds = append(conds, `e.chamber_id IN (?`+strings.Repeat(",?", len(chamberIDs)-1)+`)`)
		for _, id := range chamberIDs {
			args = append(args, id)
		}
	}
	if !from.IsZero() {
		conds = append(conds, `e.at >= ?`)
		args = append(args, from.Unix())
	}
	if !to.IsZero() {
		conds = append(conds, `e.at < ?`)
		args = append(args, to.Unix())
	}
	where := ""
	if len(conds) > 0 {
		where = " WHERE " + strings.Join(conds, " AND ")
	}
	args = append(args, limit)
	return d.queryEvents(ctx, `SELECT e.id, e.chamber_id, c.name, e.at, e.kind, e.note, u.name, e.created_at
		FROM chamber_events e JOIN chambers c ON c.id = e.chamber_id JOIN users u ON u.id = e.logged_by`+where+
		` ORDER BY e.at, e.id LIMIT ?`, args...)
}

// LatestChamberEvents returns the latest event of every chamber that has
// one, by chamber id (one index probe per chamber).
func (d *DB) LatestChamberEvents(ctx context.Context) (map[int64]ChamberEvent, error) {
	evs, err := d.queryEvents(ctx, `SELECT e.id, e.chamber_id, c.name, e.at, e.kind, e.note, u.name, e.created_at
		FROM chambers c JOIN chamber_events e ON e.id = (SELECT id FROM chamber_events WHERE chamber_id = c.id ORDER BY at DESC, id DESC LIMIT 1)
		JOIN users u ON u.id = e.logged_by`)
	if err != nil {
		return nil, err
	}
	out := make(map[int64]ChamberEvent, len(evs))
	for _, e := range evs {
		out[e.ChamberID] = e
	}
	return out, nil
}

func (d *DB) queryEvents(ctx context.Context, q string, args ...any) ([]ChamberEvent, error) {
	rows, err := d.db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("store: chamber events: %w", err)
	}
	defer rows.Close()
	var out []ChamberEvent
	for rows.Next() {
		var e ChamberEvent
		var at, created int64
		if err := rows.Scan(&e.ID, &e.ChamberID, &e.ChamberName, &at, &e.Kind, &e.Note, &e.LoggedBy, &created); err != nil {
			return nil, err
		}
		e.At, e.CreatedAt = time.Unix(at, 0).UTC(), time.Unix(created, 0).UTC()
		out = append(out, e)
	}
	return out, rows.Err()
}

// RecentChamberEvents returns the latest n events of all chambers, newest
// first.
func (d *DB) RecentChamberEvents(ctx context.Context, n int) ([]ChamberEvent, error) {
	return d.queryEvents(ctx, `SELECT e.id, e.chamber_id, c.name, e.at, e.kind, e.note, u.name, e.created_at
		FROM chamber_events e JOIN chambers c ON c.id = e.chamber_id JOIN users u ON u.id = e.logged_by
		ORDER BY e.at DESC, e.id DESC LIMIT ?`, n)
}
