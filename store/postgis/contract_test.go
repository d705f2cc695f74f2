package postgis_test

import (
	"context"
	"io"
	"log/slog"
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/pgtest"
	"ridgeflank/store/postgis"
	"ridgeflank/store/storetest"
)

var quiet = slog.New(slog.NewTextHandler(io.Discard, nil))

func opener(url, dir string) storetest.Opener {
	return func(t *testing.T) store.Store {
		t.Helper()
		s, err := postgis.Open(context.Background(), store.Config{DatabaseURL: url, DataDir: dir, Logger: quiet})
		if err != nil {
			t.Fatalf("postgis.Open: %v", err)
		}
		t.Cleanup(func() { s.Close() })
		return s
	}
}

func TestContract(t *testing.T) {
	storetest.Run(t, func(t *testing.T) storetest.Opener { return opener(pgtest.NewDB(t), t.TempDir()) })
}
