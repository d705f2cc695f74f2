package storetest

import (
	"errors"
	"fmt"
	"strings"
	"testing"

	"ridgeflank/store"
)

// testIDsNoStoreHolds: ids that are not UTF-8, hold characters no id may hold, or are empty
// are simply not found, by every lookup of every kind (a database that refuses the bytes must
// not turn them into an internal error). Updates may instead refuse the record as invalid.
func testIDsNoStoreHolds(t *testing.T, open Opener) {
	s := open(t)
	defer s.Close()
	ctx := ctxT(t)
	for _, id := range []string{"\xff", "r_\xc3", "a b", "", "nosuch"} {
		lookups := map[string]error{}
		_, lookups["GetRegion"] = s.GetRegion(ctx, id)
		_, lookups["UpdateRegion"] = s.UpdateRegion(ctx, store.Region{ID: id, Name: "x", Version: 1})
		lookups["DeleteRegion"] = s.DeleteRegion(ctx, id, 1)
		_, lookups["GetGrid"] = s.GetGrid(ctx, id)
		lookups["DeleteGrid"] = s.DeleteGrid(ctx, id)
		_, lookups["GetDataset"] = s.GetDataset(ctx, id)
		_, lookups["UpdateDataset"] = s.UpdateDataset(ctx, store.Dataset{ID: id, Name: "x", AgeGridID: "g", Version: 1})
		lookups["DeleteDataset"] = s.DeleteDataset(ctx, id, 1)
		_, lookups["GetTrack"] = s.GetTrack(ctx, id)
		lookups["DeleteTrack"] = s.DeleteTrack(ctx, id, 1)
		_, lookups["GetModel"] = s.GetModel(ctx, id)
		_, lookups["UpdateModel"] = s.UpdateModel(ctx, store.Model{ID: id, Name: "x", Params: []byte(`{}`), Version: 1})
		lookups["DeleteModel"] = s.DeleteModel(ctx, id, 1)
		for name, err := range lookups {
			// An update may refuse the record as invalid before it looks the id up; either
			// answer is the caller's fault, never the store's.
			if strings.HasPrefix(name, "Update") && errors.Is(err, store.ErrInvalid) {
				continue
			}
			wantErr(t, fmt.Sprintf("%s(%q)", name, id), err, store.ErrNotFound)
		}
	}
}
