package store

import "context"

// PageTokenKey returns the key every replica signs page tokens with (migration 10).
func (s *Store) PageTokenKey(ctx context.Context) (_ []byte, err error) {
	defer classifyInto(&err)
	var key []byte
	err = s.pool.QueryRow(ctx, `SELECT secret FROM server_secrets WHERE name = 'page-token'`).Scan(&key)
	return key, err
}
