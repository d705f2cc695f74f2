package storetest

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"os"
	"slices"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/paulmach/orb"

	"ridgeflank/store"
)

func testDatasets(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	imp := func(kind store.GridKind) store.Grid {
		g, _, err := s.ImportGrid(ctx, gridMeta(string(kind), kind), writeBytes([]byte("bytes of "+kind)))
		if err != nil {
			t.Fatal(err)
		}
		return g
	}
	age, depth, sed, crust, unc := imp(store.KindAge), imp(store.KindDepth), imp(store.KindSedimentThickness), imp(store.KindCrustalThickness), imp(store.KindAgeUncertainty)
	elev := imp(store.KindElevation)

	d := must[store.Dataset](t, "CreateDataset")(s.CreateDataset(ctx, store.Dataset{
		Name: "Quillon Basin (SYNTHETIC)", Description: "demo", AgeGridID: age.ID, DepthGridID: depth.ID, SedimentGridID: sed.ID,
	}))
	if d.Version != 1 || !strings.HasPrefix(d.ID, store.PrefixDataset) {
		t.Fatalf("created dataset %+v", d)
	}
	got := must[store.Dataset](t, "GetDataset")(s.GetDataset(ctx, d.ID))
	if !sameDataset(got, d) {
		t.Fatalf("GetDataset:\n got %+v\nwant %+v", got, d)
	}
	// Elevation grids may fill the depth slot.
	must[store.Dataset](t, "dataset with elevation grid")(s.CreateDataset(ctx, store.Dataset{ID: "with-elevation", Name: "e", AgeGridID: age.ID, DepthGridID: elev.ID}))

	bad := []struct {
		name string
		d    store.Dataset
	}{
		{"no age grid", store.Dataset{Name: "x", DepthGridID: depth.ID}},
		{"age slot holds a depth grid", store.Dataset{Name: "x", AgeGridID: depth.ID}},
		{"missing grid", store.Dataset{Name: "x", AgeGridID: "gr_missing"}},
		{"sediment slot holds crust", store.Dataset{Name: "x", AgeGridID: age.ID, SedimentGridID: crust.ID}},
		{"no name", store.Dataset{AgeGridID: age.ID}},
	}
	for _, c := range bad {
		_, err := s.CreateDataset(ctx, c.d)
		wantErr(t, c.name, err, store.ErrInvalid)
	}

	// A grid in use cannot be deleted; its file stays.
	wantErr(t, "delete grid in use", s.DeleteGrid(ctx, age.ID), store.ErrConflict)
	if _, err := s.GetGrid(ctx, age.ID); err != nil {
		t.Fatalf("grid in use disappeared: %v", err)
	}
	if b := readBlob(t, s, age.Path); len(b) == 0 {
		t.Fatal("file of a grid in use disappeared")
	}

	// Update: add crust and uncertainty, drop depth.
	upd := got
	upd.CrustGridID, upd.AgeUncertaintyGridID, upd.DepthGridID = crust.ID, unc.ID, ""
	u := must[store.Dataset](t, "UpdateDataset")(s.UpdateDataset(ctx, upd))
	if u.Version != 2 || u.DepthGridID != "" || u.CrustGridID != crust.ID || !u.CreatedAt.Equal(d.CreatedAt) {
		t.Fatalf("updated dataset %+v", u)
	}
	if g := must[store.Dataset](t, "GetDataset")(s.GetDataset(ctx, d.ID)); !sameDataset(g, u) {
		t.Fatalf("GetDataset after update:\n got %+v\nwant %+v", g, u)
	}
	_, err := s.UpdateDataset(ctx, got) // version 1
	wantErr(t, "stale dataset update", err, store.ErrVersionMismatch)
	bogus := u
	bogus.CrustGridID = sed.ID
	_, err = s.UpdateDataset(ctx, bogus)
	wantErr(t, "update with wrong kind", err, store.ErrInvalid)
	// depth is no longer used: it can go, with its file.
	if err := s.DeleteGrid(ctx, depth.ID); err != nil {
		t.Fatalf("DeleteGrid unused: %v", err)
	}
	if _, err := s.Blobs().Open(ctx, depth.Path); err == nil {
		t.Fatal("file of a deleted grid still present")
	}

	list := must[[]store.Dataset](t, "ListDatasets")(s.ListDatasets(ctx, store.Page{}))
	if got := ids(list, func(d store.Dataset) string { return d.ID }); !slices.Equal(got, []string{d.ID, "with-elevation"}) {
		t.Fatalf("ListDatasets = %v", got)
	}
	wantErr(t, "delete stale", s.DeleteDataset(ctx, d.ID, 1), store.ErrVersionMismatch)
	if err := s.DeleteDataset(ctx, d.ID, 2); err != nil {
		t.Fatal(err)
	}
	if err := s.DeleteDataset(ctx, "with-elevation", 0); err != nil {
		t.Fatal(err)
	}
	_, err = s.GetDataset(ctx, d.ID)
	wantErr(t, "get deleted dataset", err, store.ErrNotFound)
	if err := s.DeleteGrid(ctx, age.ID); err != nil {
		t.Fatalf("DeleteGrid after its datasets are gone: %v", err)
	}
}

func sameDataset(a, b store.Dataset) bool {
	ca, cb, ua, ub := a.CreatedAt, b.CreatedAt, a.UpdatedAt, b.UpdatedAt
	a.CreatedAt, b.CreatedAt, a.UpdatedAt, b.UpdatedAt = ca.UTC(), cb.UTC(), ua.UTC(), ub.UTC()
	return a == b && sameTime(ca, cb) && sameTime(ua, ub)
}

func testTracks(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	// A plan crossing the antimeridian, stored as given; parameters keep their exact text.
	wp := orb.LineString{{179.5, -10}, {-179.5, -9.75}, {-178.25, -8.5}}
	params := json.RawMessage(`{ "vessel": {"speed_kn": 10.5}, "sonar": "multibeam" }`)
	tr := must[store.Track](t, "CreateTrack")(s.CreateTrack(ctx, store.Track{Name: "Quillon transit (SYNTHETIC)", Waypoints: wp, Params: params}))
	got := must[store.Track](t, "GetTrack")(s.GetTrack(ctx, tr.ID))
	if !orb.Equal(got.Waypoints, wp) || !bytes.Equal(got.Params, params) || got.Version != 1 || !sameTime(got.CreatedAt, tr.CreatedAt) {
		t.Fatalf("GetTrack = %+v (params %s)", got, got.Params)
	}
	noParams := must[store.Track](t, "CreateTrack without params")(s.CreateTrack(ctx, store.Track{Name: "bare", Waypoints: orb.LineString{{0, 0}, {1, 1}}}))
	if g := must[store.Track](t, "GetTrack")(s.GetTrack(ctx, noParams.ID)); string(g.Params) != "{}" {
		t.Fatalf("empty params stored as %q, want {}", g.Params)
	}
	for _, c := range []struct {
		name string
		tr   store.Track
	}{
		{"one waypoint", store.Track{Name: "x", Waypoints: orb.LineString{{0, 0}}}},
		{"latitude 95", store.Track{Name: "x", Waypoints: orb.LineString{{0, 0}, {0, 95}}}},
		{"params not an object", store.Track{Name: "x", Waypoints: wp, Params: json.RawMessage(`[1, 2]`)}},
		{"params not JSON", store.Track{Name: "x", Waypoints: wp, Params: json.RawMessage(`{speed: 10}`)}},
		{"params with NUL escape", store.Track{Name: "x", Waypoints: wp, Params: json.RawMessage(`{"a": "\u0000"}`)}},
		{"params too long", store.Track{Name: "x", Waypoints: wp, Params: json.RawMessage(`{"a": "` + strings.Repeat("x", store.MaxParamsBytes) + `"}`)}},
	} {
		_, err := s.CreateTrack(ctx, c.tr)
		wantErr(t, c.name, err, store.ErrInvalid)
	}
	upd := got
	upd.Waypoints = append(upd.Waypoints, orb.Point{-177, -8})
	upd.Params = json.RawMessage(`{"vessel":{"speed_kn":11}}`)
	u := must[store.Track](t, "UpdateTrack")(s.UpdateTrack(ctx, upd))
	if u.Version != 2 {
		t.Fatalf("updated track version %d", u.Version)
	}
	g := must[store.Track](t, "GetTrack")(s.GetTrack(ctx, tr.ID))
	if len(g.Waypoints) != 4 || string(g.Params) != `{"vessel":{"speed_kn":11}}` {
		t.Fatalf("GetTrack after update = %+v", g)
	}
	_, err := s.UpdateTrack(ctx, got)
	wantErr(t, "stale track update", err, store.ErrVersionMismatch)
	list := must[[]store.Track](t, "ListTracks")(s.ListTracks(ctx, store.Page{Limit: 1}))
	if len(list) != 1 || list[0].ID != tr.ID {
		t.Fatalf("ListTracks limit 1 = %v", ids(list, func(t store.Track) string { return t.ID }))
	}
	if err := s.DeleteTrack(ctx, tr.ID, 2); err != nil {
		t.Fatal(err)
	}
	_, err = s.GetTrack(ctx, tr.ID)
	wantErr(t, "get deleted track", err, store.ErrNotFound)
}

func testModels(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	// The store keeps a marshalled thermal.Params without interpreting it; these values are
	// only illustrative (the store does not read them).
	params := json.RawMessage(`{"id":"quillon-plate","name":"Quillon plate (SYNTHETIC)","kind":"plate","plate_thickness_km":100,"mantle_temperature_c":1350,"surface_temperature_c":0,"expansivity_per_k":3.2e-05,"source":"SYNTHETIC example"}`)
	m := must[store.Model](t, "CreateModel")(s.CreateModel(ctx, store.Model{Name: "Quillon plate", Params: params}))
	got := must[store.Model](t, "GetModel")(s.GetModel(ctx, m.ID))
	if !bytes.Equal(got.Params, params) || got.Name != "Quillon plate" || got.Version != 1 || !strings.HasPrefix(got.ID, store.PrefixModel) {
		t.Fatalf("GetModel = %+v (params %s)", got, got.Params)
	}
	_, err := s.CreateModel(ctx, store.Model{Name: "no params"})
	wantErr(t, "model without params", err, store.ErrInvalid)
	upd := got
	upd.Description = "thicker plate"
	upd.Params = json.RawMessage(strings.Replace(string(params), `"plate_thickness_km":100`, `"plate_thickness_km":125`, 1))
	u := must[store.Model](t, "UpdateModel")(s.UpdateModel(ctx, upd))
	if u.Version != 2 {
		t.Fatalf("UpdateModel version %d", u.Version)
	}
	g := must[store.Model](t, "GetModel")(s.GetModel(ctx, m.ID))
	if !bytes.Equal(g.Params, upd.Params) || g.Description != "thicker plate" {
		t.Fatalf("GetModel after update = %+v", g)
	}
	_, err = s.UpdateModel(ctx, got)
	wantErr(t, "stale model update", err, store.ErrVersionMismatch)
	if list := must[[]store.Model](t, "ListModels")(s.ListModels(ctx, store.Page{})); len(list) != 1 {
		t.Fatalf("ListModels = %d models", len(list))
	}
	if err := s.DeleteModel(ctx, m.ID, 0); err != nil {
		t.Fatal(err)
	}
	_, err = s.GetModel(ctx, m.ID)
	wantErr(t, "get deleted model", err, store.ErrNotFound)
}

func testTokens(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	plains := map[store.Role]string{}
	toks := map[store.Role]store.Token{}
	for _, r := range []store.Role{store.RoleAdmin, store.RoleEditor, store.RoleReader} {
		tok, plain, err := s.CreateToken(ctx, "token for "+string(r), r)
		if err != nil {
			t.Fatal(err)
		}
		if !strings.HasPrefix(plain, store.TokenPrefix) || len(plain) < 40 || tok.Role != r || tok.LastUsedAt != nil || tok.RevokedAt != nil {
			t.Fatalf("CreateToken(%s) = %+v, %q", r, tok, plain)
		}
		plains[r], toks[r] = plain, tok
	}
	if plains[store.RoleAdmin] == plains[store.RoleEditor] {
		t.Fatal("two tokens share a secret")
	}
	for r, plain := range plains {
		tok, err := s.Authenticate(ctx, plain)
		if err != nil || tok.Role != r || tok.ID != toks[r].ID || tok.LastUsedAt == nil {
			t.Fatalf("Authenticate(%s) = %+v, %v", r, tok, err)
		}
	}
	for _, bad := range []string{"", "rft_wrong", plains[store.RoleAdmin] + "x", strings.ToUpper(plains[store.RoleAdmin])} {
		_, err := s.Authenticate(ctx, bad)
		wantErr(t, fmt.Sprintf("Authenticate(%q)", bad), err, store.ErrUnauthorized)
	}
	if err := s.RevokeToken(ctx, toks[store.RoleEditor].ID); err != nil {
		t.Fatal(err)
	}
	_, err := s.Authenticate(ctx, plains[store.RoleEditor])
	wantErr(t, "revoked token", err, store.ErrUnauthorized)
	wantErr(t, "revoke unknown", s.RevokeToken(ctx, "tk_nope"), store.ErrNotFound)
	list := must[[]store.Token](t, "ListTokens")(s.ListTokens(ctx))
	if len(list) != 3 {
		t.Fatalf("ListTokens = %d tokens", len(list))
	}
	for _, tok := range list {
		if (tok.RevokedAt != nil) != (tok.ID == toks[store.RoleEditor].ID) {
			t.Fatalf("token %s revoked=%v", tok.Name, tok.RevokedAt != nil)
		}
		if tok.LastUsedAt == nil {
			t.Fatalf("token %s: last use not recorded", tok.Name)
		}
	}
	_, _, err = s.CreateToken(ctx, "x", "root")
	wantErr(t, "unknown role", err, store.ErrInvalid)
	_, _, err = s.CreateToken(ctx, " ", store.RoleReader)
	wantErr(t, "empty name", err, store.ErrInvalid)
}

// testTokenPlaintextNotStored looks for the secret in every table and, for SQLite, in the raw
// database and WAL files. The stored hash must be found the same way, so the search itself is
// shown to work.
func testTokenPlaintextNotStored(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	_, plain, err := s.CreateToken(ctx, "secret keeper", store.RoleEditor)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Authenticate(ctx, plain); err != nil {
		t.Fatal(err)
	}
	needles := []string{plain, strings.TrimPrefix(plain, store.TokenPrefix)}
	hash := store.HashToken(plain)
	switch h := s.(type) {
	case interface{ DB() *sql.DB }:
		db := h.DB()
		if _, err := db.ExecContext(ctx, "PRAGMA wal_checkpoint(PASSIVE)"); err != nil {
			t.Fatal(err)
		}
		found := sqliteRowsContaining(t, db, hash)
		if found == 0 {
			t.Fatal("the search does not find the stored hash: it cannot be trusted")
		}
		for _, n := range needles {
			if c := sqliteRowsContaining(t, db, n); c != 0 {
				t.Fatalf("token secret found in %d rows", c)
			}
		}
		var seq int
		var name, file string
		if err := db.QueryRowContext(ctx, "PRAGMA database_list").Scan(&seq, &name, &file); err != nil {
			t.Fatal(err)
		}
		var raw []byte
		for _, p := range []string{file, file + "-wal", file + "-journal"} {
			if b, err := os.ReadFile(p); err == nil {
				raw = append(raw, b...)
			}
		}
		if !bytes.Contains(raw, []byte(hash)) {
			t.Fatal("the raw database files do not contain the stored hash: the file search cannot be trusted")
		}
		for _, n := range needles {
			if bytes.Contains(raw, []byte(n)) {
				t.Fatal("token secret found in the raw database files")
			}
		}
	case interface{ Pool() *pgxpool.Pool }:
		pool := h.Pool()
		if pgRowsContaining(t, pool, hash) == 0 {
			t.Fatal("the search does not find the stored hash: it cannot be trusted")
		}
		for _, n := range needles {
			if c := pgRowsContaining(t, pool, n); c != 0 {
				t.Fatalf("token secret found in %d rows", c)
			}
		}
	default:
		t.Fatalf("%T exposes neither DB() *sql.DB nor Pool() *pgxpool.Pool; the suite cannot inspect its storage", s)
	}
}

func sqliteRowsContaining(t *testing.T, db *sql.DB, needle string) int {
	t.Helper()
	ctx := ctxT(t)
	rows, err := db.QueryContext(ctx, `SELECT name FROM sqlite_master WHERE type = 'table'`)
	if err != nil {
		t.Fatal(err)
	}
	var tables []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			t.Fatal(err)
		}
		tables = append(tables, n)
	}
	rows.Close()
	total := 0
	for _, tbl := range tables {
		r, err := db.QueryContext(ctx, `SELECT * FROM "`+strings.ReplaceAll(tbl, `"`, `""`)+`"`)
		if err != nil {
			continue // virtual-table shadow tables and the like
		}
		cols, _ := r.Columns()
		for r.Next() {
			vals := make([]any, len(cols))
			ptrs := make([]any, len(cols))
			for i := range vals {
				ptrs[i] = &vals[i]
			}
			if err := r.Scan(ptrs...); err != nil {
				t.Fatal(err)
			}
			for _, v := range vals {
				var s string
				switch x := v.(type) {
				case string:
					s = x
				case []byte:
					s = string(x)
				default:
					continue
				}
				if strings.Contains(s, needle) {
					total++
				}
			}
		}
		r.Close()
	}
	return total
}

func pgRowsContaining(t *testing.T, pool *pgxpool.Pool, needle string) int {
	t.Helper()
	ctx := ctxT(t)
	rows, err := pool.Query(ctx, `SELECT table_name FROM information_schema.tables WHERE table_schema = current_schema() AND table_type = 'BASE TABLE'`)
	if err != nil {
		t.Fatal(err)
	}
	tables, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatal(err)
	}
	total := 0
	for _, tbl := range tables {
		var n int
		q := `SELECT count(*) FROM ` + pgx.Identifier{tbl}.Sanitize() + ` AS x WHERE strpos(x::text, $1) > 0`
		if err := pool.QueryRow(ctx, q, needle).Scan(&n); err != nil {
			t.Fatalf("searching %s: %v", tbl, err)
		}
		total += n
	}
	return total
}

// testReopen: a handle abandoned without Close (as after a kill) does not keep a second one
// from working, both see the same data, and a clean reopen finds everything.
func testReopen(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s1 := open(t)
	r := must[store.Region](t, "CreateRegion")(s1.CreateRegion(ctx, store.Region{Name: "persistent", Geometry: box(1, 1, 2, 2), Tags: []string{"keep"}}))
	_, plain, err := s1.CreateToken(ctx, "persistent", store.RoleAdmin)
	if err != nil {
		t.Fatal(err)
	}
	g, _, err := s1.ImportGrid(ctx, ageMeta("persistent"), writeBytes([]byte("persistent grid")))
	if err != nil {
		t.Fatal(err)
	}
	s2 := open(t) // s1 still open
	sameRegion(t, "region seen by a second handle", must[store.Region](t, "GetRegion")(s2.GetRegion(ctx, r.ID)), r)
	upd := r
	upd.Name = "changed through the second handle"
	u := must[store.Region](t, "UpdateRegion")(s2.UpdateRegion(ctx, upd))
	sameRegion(t, "first handle sees the second's write", must[store.Region](t, "GetRegion")(s1.GetRegion(ctx, r.ID)), u)
	if err := s2.Close(); err != nil {
		t.Fatal(err)
	}
	if err := s1.Close(); err != nil {
		t.Fatal(err)
	}
	s3 := open(t)
	sameRegion(t, "region after reopen", must[store.Region](t, "GetRegion")(s3.GetRegion(ctx, r.ID)), u)
	if tok, err := s3.Authenticate(ctx, plain); err != nil || tok.Role != store.RoleAdmin {
		t.Fatalf("token after reopen: %+v, %v", tok, err)
	}
	if b := readBlob(t, s3, g.Path); string(b) != "persistent grid" {
		t.Fatalf("grid file after reopen: %q", b)
	}
	if ok, err := s3.MigrationsApplied(ctx); err != nil || !ok {
		t.Fatalf("MigrationsApplied after reopen = %v, %v", ok, err)
	}
	// Closed handles refuse work instead of hanging.
	cctx, cancel := context.WithTimeout(ctx, 5e9)
	defer cancel()
	if _, err := s1.GetRegion(cctx, r.ID); err == nil {
		t.Fatal("a closed handle still answers")
	}
}
