package store

import (
	"github.com/jackc/pgx/v5"
)

func stdlibConfig(url string) (*pgx.ConnConfig, error) {
	cfg, err := pgx.ParseConfig(url)
	if err != nil {
		return nil, redactErr(err)
	}
	return cfg, nil
}
