package store

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/paulmach/orb"
)

func TestSplitBBox(t *testing.T) {
	// Expected pieces follow from the rule documented on RegionFilter.BBox (west > east crosses
	// the antimeridian; 0..360 longitudes map to −180..180); by construction, no outside source.
	b := func(w, s, e, n float64) orb.Bound { return orb.Bound{Min: orb.Point{w, s}, Max: orb.Point{e, n}} }
	cases := []struct {
		name string
		in   orb.Bound
		want []orb.Bound
	}{
		{"plain", b(-10, -5, 10, 5), []orb.Bound{b(-10, -5, 10, 5)}},
		{"crossing", b(170, -5, -170, 5), []orb.Bound{b(170, -5, 180, 5), b(-180, -5, -170, 5)}},
		{"0..360 crossing", b(170, -5, 190, 5), []orb.Bound{b(170, -5, 180, 5), b(-180, -5, -170, 5)}},
		{"0..360 east of 180", b(200, 0, 210, 1), []orb.Bound{b(-160, 0, -150, 1)}},
		{"0..360 across Greenwich", b(350, 0, 10, 1), []orb.Bound{b(-10, 0, 10, 1)}},
		{"0..360 wide", b(10, 0, 350, 1), []orb.Bound{b(10, 0, 180, 1), b(-180, 0, -10, 1)}},
		{"whole world", b(-180, -90, 180, 90), []orb.Bound{b(-180, -90, 180, 90)}},
		{"whole world 0..360", b(0, -90, 360, 90), []orb.Bound{b(-180, -90, 180, 90)}},
		{"ends at 180 from 0..360", b(170, 0, 180, 1), []orb.Bound{b(170, 0, 180, 1)}},
		{"west 180 to east -170", b(180, 0, -170, 1), []orb.Bound{b(-180, 0, -170, 1)}},
		{"east -180", b(170, 0, -180, 1), []orb.Bound{b(170, 0, 180, 1)}},
		{"polar", b(-180, 80, 180, 90), []orb.Bound{b(-180, 80, 180, 90)}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := SplitBBox(c.in)
			if err != nil || !slices.Equal(got, c.want) {
				t.Fatalf("SplitBBox(%v) = %v, %v; want %v", c.in, got, err, c.want)
			}
		})
	}
	for _, bad := range []orb.Bound{b(0, 10, 1, 5), b(0, -91, 1, 0), b(-181, 0, 0, 1), b(0, 0, 361, 1)} {
		if _, err := SplitBBox(bad); !errors.Is(err, ErrInvalid) {
			t.Errorf("SplitBBox(%v): err %v, want ErrInvalid", bad, err)
		}
	}
}

func TestHashTokenFIPSVector(t *testing.T) {
	// FIPS 180-2 Appendix B.1: SHA-256("abc").
	if got := HashToken("abc"); got != "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" {
		t.Fatalf("HashToken(abc) = %s", got)
	}
	p1, h1 := NewTokenSecret()
	p2, _ := NewTokenSecret()
	if p1 == p2 || HashToken(p1) != h1 || len(p1) != len(TokenPrefix)+52 {
		t.Fatalf("secrets %q %q (len %d)", p1, p2, len(p1))
	}
}

func TestRoles(t *testing.T) {
	// The ordering reader < editor < admin is this project's rule (documented on Role).
	cases := []struct {
		have, need Role
		want       bool
	}{
		{RoleReader, RoleReader, true}, {RoleReader, RoleEditor, false}, {RoleReader, RoleAdmin, false},
		{RoleEditor, RoleReader, true}, {RoleEditor, RoleEditor, true}, {RoleEditor, RoleAdmin, false},
		{RoleAdmin, RoleReader, true}, {RoleAdmin, RoleEditor, true}, {RoleAdmin, RoleAdmin, true},
		{"root", RoleReader, false}, {RoleAdmin, "root", false},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%s needs %s", c.have, c.need), func(t *testing.T) {
			if got := c.have.Allows(c.need); got != c.want {
				t.Fatalf("Allows = %v", got)
			}
		})
	}
	if r, err := ParseRole(" Editor "); err != nil || r != RoleEditor {
		t.Fatalf("ParseRole = %v, %v", r, err)
	}
	if _, err := ParseRole("owner"); !errors.Is(err, ErrInvalid) {
		t.Fatalf("ParseRole(owner): %v", err)
	}
}

func TestErrVersionMismatchIsConflict(t *testing.T) {
	err := fmt.Errorf("region x: %w", ErrVersionMismatch)
	if !errors.Is(err, ErrConflict) || !errors.Is(err, ErrVersionMismatch) {
		t.Fatal("a version mismatch must match both ErrVersionMismatch and ErrConflict")
	}
	if errors.Is(fmt.Errorf("dup: %w", ErrConflict), ErrVersionMismatch) {
		t.Fatal("a plain conflict must not match ErrVersionMismatch")
	}
}

func TestIDs(t *testing.T) {
	id := NewID(PrefixRegion)
	if err := ValidateID(id); err != nil || len(id) != len(PrefixRegion)+16 {
		t.Fatalf("NewID = %q, %v", id, err)
	}
	for _, bad := range []string{"", "a b", "a/b", "ä", string(make([]byte, MaxIDLen+1))} {
		if err := ValidateID(bad); !errors.Is(err, ErrInvalid) {
			t.Errorf("ValidateID(%q) = %v", bad, err)
		}
	}
}

func TestConfigBackend(t *testing.T) {
	cases := []struct {
		url, want string
		err       bool
	}{
		{"", BackendSQLite, false},
		{"postgres://u@h/db", BackendPostGIS, false},
		{"postgresql://u@h/db", BackendPostGIS, false},
		{"host=db.example dbname=x", BackendPostGIS, false},
		{"sqlite:///x.db", "", true},
	}
	for _, c := range cases {
		got, err := Config{DatabaseURL: c.url}.BackendFor()
		if got != c.want || (err != nil) != c.err {
			t.Errorf("BackendFor(%q) = %q, %v", c.url, got, err)
		}
	}
	if _, err := Open(context.Background(), Config{DatabaseURL: "postgres://x"}); err == nil {
		t.Error("Open without registered backends must fail")
	}
}

func TestGridFilesForeignDirectoryIsNotSwept(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	gf, err := NewGridFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	nothing := func(context.Context) (map[string]bool, error) { return map[string]bool{}, nil }
	if _, err := gf.Sweep(ctx, "catalogue-A", nothing); err != nil {
		t.Fatal(err)
	}
	info, err := gf.Put(ctx, "", func(p string) error { return os.WriteFile(p, []byte("A's grid"), 0o644) })
	if err != nil {
		t.Fatal(err)
	}
	// Another catalogue pointed at the same directory must not delete A's files.
	removed, err := gf.Sweep(ctx, "catalogue-B", nothing)
	if !errors.Is(err, ErrConflict) || len(removed) != 0 {
		t.Fatalf("foreign sweep = %v, %v; want ErrConflict and nothing removed", removed, err)
	}
	if _, err := os.Stat(filepath.Join(dir, info.Key)); err != nil {
		t.Fatalf("A's file is gone: %v", err)
	}
	// A directory with grid files but no marker is not adopted silently either.
	os.Remove(filepath.Join(dir, ".catalogue"))
	if _, err := gf.Sweep(ctx, "catalogue-B", nothing); !errors.Is(err, ErrConflict) {
		t.Fatalf("unmarked directory with files: %v, want ErrConflict", err)
	}
	// The owner sweeps normally once the marker is back.
	os.WriteFile(filepath.Join(dir, ".catalogue"), []byte("catalogue-A\n"), 0o644)
	removed, err = gf.Sweep(ctx, "catalogue-A", nothing)
	if err != nil || !slices.Equal(removed, []string{info.Key}) {
		t.Fatalf("owner sweep = %v, %v", removed, err)
	}
}

func TestGridFilesPut(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	gf, err := NewGridFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	abc := "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" // FIPS 180-2 B.1
	// Claim the empty directory for catalogue "c".
	if _, err := gf.Sweep(ctx, "c", nil); err != nil {
		t.Fatal(err)
	}
	info, err := gf.Put(ctx, "", func(p string) error { return os.WriteFile(p, []byte("abc"), 0o644) })
	if err != nil || info.SHA256 != abc || info.Key != abc+".tif" || info.SizeBytes != 3 || info.Existed {
		t.Fatalf("Put = %+v, %v", info, err)
	}
	// Known hash present: the writer is skipped.
	info, err = gf.Put(ctx, abc, func(string) error { t.Error("writer called"); return nil })
	if err != nil || !info.Existed {
		t.Fatalf("Put known hash = %+v, %v", info, err)
	}
	// Same bytes again without a hash: stored once.
	info, err = gf.Put(ctx, "", func(p string) error { return os.WriteFile(p, []byte("abc"), 0o644) })
	if err != nil || !info.Existed {
		t.Fatalf("Put same bytes = %+v, %v", info, err)
	}
	entries, _ := os.ReadDir(dir)
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	if !slices.Equal(names, []string{".catalogue", ".lock", abc + ".tif"}) {
		t.Fatalf("directory holds %v", names)
	}
	// Other files in the directory are never swept.
	os.WriteFile(filepath.Join(dir, "README"), []byte("notes"), 0o644)
	removed, err := gf.Sweep(ctx, "c", func(context.Context) (map[string]bool, error) { return map[string]bool{abc + ".tif": true}, nil })
	if err != nil || len(removed) != 0 {
		t.Fatalf("Sweep = %v, %v", removed, err)
	}
	// A failing catalogue read aborts the sweep rather than deleting everything.
	removed, err = gf.Sweep(ctx, "c", func(context.Context) (map[string]bool, error) { return nil, errors.New("db down") })
	if err == nil || len(removed) != 0 {
		t.Fatalf("Sweep with a failing catalogue = %v, %v", removed, err)
	}
	if _, err := os.Stat(filepath.Join(dir, abc+".tif")); err != nil {
		t.Fatal("file removed although the catalogue could not be read")
	}
}

func ExampleSplitBBox() {
	// A box from 170°E eastwards to 170°W crosses the antimeridian.
	boxes, _ := SplitBBox(orb.Bound{Min: orb.Point{170, -5}, Max: orb.Point{-170, 5}})
	for _, b := range boxes {
		fmt.Println(b.Min, b.Max)
	}
	// Output:
	// [170 -5] [180 5]
	// [-180 -5] [-170 5]
}

func ExampleRole_Allows() {
	fmt.Println(RoleEditor.Allows(RoleReader), RoleEditor.Allows(RoleAdmin))
	// Output: true false
}

func BenchmarkHashToken(b *testing.B) {
	p, _ := NewTokenSecret()
	b.ReportAllocs()
	for b.Loop() {
		HashToken(p)
	}
}
