package embedded

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
)

// claimSite checks that the file holds site's results: a file that names
// another site is refused (ErrOtherSite, with the two ways out); a file
// that names none is claimed for site when open read-write. One file
// holds one site; a portfolio gives each site its own file (or shares one
// InfluxDB bucket, whose results carry the site tag).
func (s *Store) claimSite(ctx context.Context, site string) error {
	var have string
	err := s.db.QueryRowContext(ctx, "SELECT id FROM site WHERE only = 1").Scan(&have)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		if s.readOnly {
			return nil
		}
		return s.write(ctx, "claim the file for the site", func(tx *sql.Tx) error {
			_, err := tx.ExecContext(ctx, "INSERT INTO site (only, id, claimed_ms) VALUES (1, ?, ?) ON CONFLICT (only) DO NOTHING",
				site, s.now().UnixMilli())
			return err
		})
	case err != nil:
		return fmt.Errorf("read the site of the file: %w", err)
	case have != site:
		return fmt.Errorf("it holds the results of site %q, and this configuration is site %q: %w; "+
			"one file holds one site: give this site its own file (store.path), or set site.id to %q if this is that site renamed",
			have, site, ErrOtherSite, have)
	}
	return nil
}

// Site returns the id of the site whose results the file holds, "" when
// none has claimed it.
func (s *Store) Site(ctx context.Context) (string, error) {
	var have string
	err := s.db.QueryRowContext(ctx, "SELECT id FROM site WHERE only = 1").Scan(&have)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil
	}
	if err != nil {
		return "", fmt.Errorf("read the site of the file: %w", err)
	}
	return have, nil
}
