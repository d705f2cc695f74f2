package sqlite_test

import (
	"context"
	"io"
	"log/slog"
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/sqlite"
	"ridgeflank/store/storetest"
)

var quiet = slog.New(slog.NewTextHandler(io.Discard, nil))

func opener(dir string) storetest.Opener {
	return func(t *testing.T) store.Store {
		t.Helper()
		s, err := sqlite.Open(context.Background(), store.Config{DataDir: dir, Logger: quiet})
		if err != nil {
			t.Fatalf("sqlite.Open: %v", err)
		}
		t.Cleanup(func() { s.Close() })
		return s
	}
}

func TestContract(t *testing.T) {
	storetest.Run(t, func(t *testing.T) storetest.Opener { return opener(t.TempDir()) })
}
