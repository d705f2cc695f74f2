package store_test

import (
	"testing"

	"ridgeflank/store"
	"ridgeflank/store/storetest"
)

func TestGridFilesContract(t *testing.T) {
	storetest.RunBlobs(t, func(t *testing.T) store.Blobs {
		g, err := store.NewGridFiles(t.TempDir())
		if err != nil {
			t.Fatal(err)
		}
		return g
	})
}
