package store

import (
	"bytes"
	"context"
	"fmt"
	"strings"

	"glowlog/diag/calib"
)

// InstrumentRecord is a stored instrument function.
type InstrumentRecord struct {
	ID   int64
	Name string
}

// SaveInstrument stores (or replaces, by name) an instrument function.
func (d *DB) SaveInstrument(ctx context.Context, in *calib.Instrument) (int64, error) {
	if err := in.Validate(); err != nil {
		return 0, fmt.Errorf("%w: %v", ErrInvalid, err)
	}
	var buf bytes.Buffer
	if err := in.WriteJSON(&buf); err != nil {
		return 0, err
	}
	name := strings.TrimSpace(in.Name)
	if _, err := d.exec(ctx, `INSERT INTO instruments (name, definition, created_at) VALUES (?, ?, ?)
		ON CONFLICT(name) DO UPDATE SET definition = excluded.definition`, name, buf.String(), d.now()); err != nil {
		return 0, fmt.Errorf("store: save instrument: %w", err)
	}
	var id int64
	err := d.db.QueryRowContext(ctx, `SELECT id FROM instruments WHERE name = ?`, name).Scan(&id)
	return id, err
}

// Instrument loads a stored instrument function.
func (d *DB) Instrument(ctx context.Context, id int64) (*calib.Instrument, error) {
	var def string
	if err := d.db.QueryRowContext(ctx, `SELECT definition FROM instruments WHERE id = ?`, id).Scan(&def); err != nil {
		return nil, errNoRows(err, fmt.Sprintf("instrument %d", id))
	}
	return calib.ReadInstrument(strings.NewReader(def))
}

// Instruments lists the stored instrument functions by name.
func (d *DB) Instruments(ctx context.Context) ([]InstrumentRecord, error) {
	rows, err := d.db.QueryContext(ctx, `SELECT id, name FROM instruments ORDER BY name`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []InstrumentRecord
	for rows.Next() {
		var r InstrumentRecord
		if err := rows.Scan(&r.ID, &r.Name); err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, rows.Err()
}
