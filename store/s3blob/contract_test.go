package s3blob_test

import (
	"context"
	"fmt"
	"log/slog"
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	_ "ridgeflank/store/postgis"
	"ridgeflank/store/s3blob/s3test"
	_ "ridgeflank/store/sqlite"
	"ridgeflank/store/storetest"
)

// The store contract with the grid files in a bucket: on the fake with the SQLite and the
// PostGIS catalogue, on SeaweedFS with the SQLite one (the catalogue does not touch the bucket;
// PostGIS would add some 40 s here for nothing the object store does).
func TestStoreContract(t *testing.T) {
	s3test.Each(t, "stores", func(t *testing.T, srv *s3test.Server) {
		backends := []string{store.BackendSQLite, store.BackendPostGIS}
		if srv.Kind == s3test.KindSeaweed {
			backends = backends[:1]
		}
		for _, backend := range backends {
			t.Run(backend, func(t *testing.T) {
				storetest.Run(t, func(t *testing.T) storetest.Opener {
					url, osc := srv.Config(fmt.Sprintf("contract%d", prefixes.Add(1)))
					cfg := store.Config{DataDir: t.TempDir(), GridStore: url, ObjectStore: osc, Logger: slog.New(slog.DiscardHandler)}
					if backend == store.BackendPostGIS {
						cfg.DatabaseURL = pgtest.NewDB(t)
					}
					return func(t *testing.T) store.Store {
						t.Helper()
						s, err := store.Open(context.Background(), cfg)
						if err != nil {
							t.Fatalf("store.Open: %v", err)
						}
						t.Cleanup(func() { s.Close() })
						if _, ok := s.Blobs().(store.SharedFiles); !ok {
							t.Fatalf("Blobs() is %T, want the bucket", s.Blobs())
						}
						return s
					}
				})
			})
		}
	})
}
