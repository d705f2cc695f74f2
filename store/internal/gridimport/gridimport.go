package gridimport

import (
	"context"
	"errors"
	"fmt"
	"time"

	"ridgeflank/store"
)

// Catalogue is the part of a backend the import needs.
type Catalogue struct {
	// ByHash returns the grid with that content hash or an error wrapping store.ErrNotFound.
	ByHash func(ctx context.Context, sha256Hex string) (store.Grid, error)
	// Insert commits a complete row; store.ErrConflict on a duplicate id or hash.
	Insert func(ctx context.Context, g store.Grid) (store.Grid, error)
	// Sweep is the backend's Store.Sweep.
	Sweep func(ctx context.Context) ([]string, error)
}

// Import runs the import sequence:
//  1. validate the metadata (before anything is written);
//  2. take a lease on the blobs so no sweep runs meanwhile;
//  3. if the caller gave a content hash that is already catalogued, return that grid;
//  4. Put the file (temporary name, fsync, rename to its content key, fsync the directory);
//  5. if the content is already catalogued, return that grid;
//  6. commit the catalogue row.
//
// A failure after step 4 leaves at most an unreferenced file, which is removed by a sweep
// attempted right away (skipped if another import holds a lease) or by the next one.
func Import(ctx context.Context, blobs store.Blobs, c Catalogue, g store.Grid, write func(tmpPath string) error) (store.Grid, bool, error) {
	if err := g.Validate(); err != nil {
		return store.Grid{}, false, err
	}
	if write == nil {
		return store.Grid{}, false, fmt.Errorf("%w: no grid file writer", store.ErrInvalid)
	}
	release, err := blobs.Hold(ctx)
	if err != nil {
		return store.Grid{}, false, err
	}
	defer release()
	if g.ContentHash != "" {
		if ex, err := c.ByHash(ctx, g.ContentHash); err == nil {
			return ex, false, nil
		} else if !errors.Is(err, store.ErrNotFound) {
			return store.Grid{}, false, err
		}
	}
	info, err := blobs.Put(ctx, g.ContentHash, write)
	if err != nil {
		// Put removes its temporary file; a failure after its rename (fsync of the
		// directory) could leave the renamed file, so sweep.
		release()
		cleanup(ctx, c)
		return store.Grid{}, false, err
	}
	if ex, err := c.ByHash(ctx, info.SHA256); err == nil {
		return ex, false, nil
	} else if !errors.Is(err, store.ErrNotFound) {
		release()
		cleanup(ctx, c)
		return store.Grid{}, false, err
	}
	if g.ID == "" {
		g.ID = store.NewID(store.PrefixGrid)
	}
	g.ContentHash = info.SHA256
	g.SizeBytes = info.SizeBytes
	g.Path = info.Key
	g.CreatedAt = store.Now()
	out, err := c.Insert(ctx, g)
	if err == nil {
		return out, true, nil
	}
	if errors.Is(err, store.ErrConflict) {
		// A concurrent import of the same content may have won.
		if ex, err2 := c.ByHash(ctx, info.SHA256); err2 == nil {
			return ex, false, nil
		}
	}
	release()
	cleanup(ctx, c)
	return store.Grid{}, false, err
}

// cleanupTimeout bounds the best-effort sweep after a failed import.
const cleanupTimeout = 10 * time.Second

// cleanup sweeps after a failure, even if ctx was cancelled (which may be why it failed).
func cleanup(ctx context.Context, c Catalogue) {
	sctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), cleanupTimeout)
	defer cancel()
	c.Sweep(sctx) // best effort: a failure leaves the file to the next sweep
}
