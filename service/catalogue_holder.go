package service

import (
	"context"
	"fmt"
	"log/slog"
	"sync/atomic"
	"time"

	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
)

// CatalogueHolder holds the current immutable catalogue snapshot. Readers take it with
// Load and never see a half-built one; a reload builds a new snapshot and swaps it in.
type CatalogueHolder struct {
	cur atomic.Pointer[substances.Catalogue]
	log *slog.Logger
}

// Load returns the current snapshot.
func (h *CatalogueHolder) Load() *substances.Catalogue { return h.cur.Load() }

// NewCatalogueHolder wraps a snapshot built elsewhere (tests, benchmarks).
func NewCatalogueHolder(c *substances.Catalogue, log *slog.Logger) *CatalogueHolder {
	if log == nil {
		log = slog.Default()
	}
	h := &CatalogueHolder{log: log}
	h.cur.Store(c)
	return h
}

// LoadCatalogue brings the database's catalogue up to the embedded seed and returns a
// holder with the snapshot read back from the database.
func LoadCatalogue(ctx context.Context, st *store.Store, log *slog.Logger) (*CatalogueHolder, error) {
	subs, blends, err := substances.Seed()
	if err != nil {
		return nil, fmt.Errorf("embedded seed catalogue: %w", err)
	}
	if err := st.SyncSeed(ctx, subs, blends); err != nil {
		return nil, err
	}
	if log == nil {
		log = slog.Default()
	}
	h := &CatalogueHolder{log: log}
	if err := h.Reload(ctx, st); err != nil {
		return nil, err
	}
	return h, nil
}

// Reload reads the catalogue from the database and swaps the snapshot.
func (h *CatalogueHolder) Reload(ctx context.Context, st *store.Store) error {
	subs, blends, err := st.LoadCatalogue(ctx)
	if err != nil {
		return err
	}
	c, err := substances.NewCatalogue(subs, blends)
	if err != nil {
		return fmt.Errorf("catalogue in the database is not consistent: %w", err)
	}
	h.cur.Store(c)
	h.log.Info("catalogue loaded", "substances", len(subs), "blends", len(blends))
	return nil
}

// Watch reloads the snapshot whenever a change is announced on the database, until the
// returned stop function is called or ctx is done. A lost connection is retried, and the
// snapshot is reloaded each time the listener (re)connects, so that a change announced
// while the connection was down is not missed.
func (h *CatalogueHolder) Watch(ctx context.Context, st *store.Store) (stop func()) {
	ctx, cancel := context.WithCancel(ctx)
	done := make(chan struct{})
	go func() {
		defer close(done)
		for ctx.Err() == nil {
			err := st.ListenCatalogue(ctx, func() {
				if err := h.Reload(ctx, st); err != nil && ctx.Err() == nil {
					h.log.Error("catalogue reload failed; keeping the previous snapshot", "err", err)
				}
			})
			if ctx.Err() != nil {
				return
			}
			h.log.Warn("catalogue change listener stopped; retrying", "err", err)
			select {
			case <-ctx.Done():
			case <-time.After(2 * time.Second):
			}
		}
	}()
	return func() { cancel(); <-done }
}
