package server

import (
	"context"
	"fmt"
	"io"

	"glowlog/store"
)

// Bootstrap creates the first admin (printing a one-time password) and
// seeds the demo scenario into an empty database.
func (s *Server) Bootstrap(ctx context.Context, demo bool, stdout io.Writer) error {
	n, err := s.DB.CountUsers(ctx)
	if err != nil {
		return err
	}
	if n > 0 {
		return nil
	}
	pw, _ := NewToken()
	pw = pw[:20]
	hash, err := HashPassword(pw)
	if err != nil {
		return err
	}
	admin, err := s.DB.CreateUserMustChange(ctx, "admin", store.RoleAdmin, hash, true)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "glowlog: created account %q with the one-time password %s (it must be changed at first sign-in)\n", admin.Name, pw)
	if demo {
		fmt.Fprintln(stdout, "glowlog: seeding the demo scenario (invented lab; --no-demo skips this)…")
		if err := SeedDemo(ctx, s, admin.ID, DemoOptions{}); err != nil {
			return fmt.Errorf("demo data: %w", err)
		}
	}
	return nil
}
