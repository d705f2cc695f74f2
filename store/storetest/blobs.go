package storetest

import (
	"bytes"
	"context"
	"errors"
	"io"
	"os"
	"slices"
	"strings"
	"testing"

	"ridgeflank/store"
)

// RunBlobs runs the contract of store.Blobs (put, read, seek, list, delete, leases and sweeps)
// against one implementation. fresh returns an empty grid store for each subtest.
func RunBlobs(t *testing.T, fresh func(t *testing.T) store.Blobs) {
	tests := []struct {
		name string
		fn   func(t *testing.T, b store.Blobs)
	}{
		{"PutReadListDelete", testBlobsPutReadListDelete},
		{"PutDeduplicates", testBlobsDedup},
		{"PutFailures", testBlobsPutFailures},
		{"Keys", testBlobsKeys},
		{"Sweep", testBlobsSweep},
		{"SweepWaitsForLease", testBlobsLease},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) { tc.fn(t, fresh(t)) })
	}
}

func listBlobs(t *testing.T, b store.Blobs) []string {
	t.Helper()
	keys, err := b.List(ctxT(t))
	if err != nil {
		t.Fatalf("List: %v", err)
	}
	return keys
}

func readAll(t *testing.T, b store.Blobs, key string) []byte {
	t.Helper()
	f, err := b.Open(ctxT(t), key)
	if err != nil {
		t.Fatalf("Open %s: %v", key, err)
	}
	defer f.Close()
	got, err := io.ReadAll(f)
	if err != nil {
		t.Fatalf("reading %s: %v", key, err)
	}
	return got
}

func testBlobsPutReadListDelete(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	if keys := listBlobs(t, b); len(keys) != 0 {
		t.Fatalf("a new grid store lists %v", keys)
	}
	// Writers such as GDAL may leave side files beside the file (tmp.aux.xml): not stored.
	info, err := b.Put(ctx, "", func(tmp string) error {
		if err := os.WriteFile(tmp+".aux.xml", []byte("<side/>"), 0o644); err != nil {
			return err
		}
		return os.WriteFile(tmp, []byte("abc"), 0o644)
	})
	if err != nil {
		t.Fatalf("Put: %v", err)
	}
	// SHA-256("abc"): FIPS 180-2 Appendix B.1.
	if info.Key != abcSHA256+".tif" || info.SHA256 != abcSHA256 || info.SizeBytes != 3 || info.Existed {
		t.Fatalf("Put = %+v; want key %s.tif, 3 bytes, new", info, abcSHA256)
	}
	if keys := listBlobs(t, b); !slices.Equal(keys, []string{info.Key}) {
		t.Fatalf("List = %v, want only %s", keys, info.Key)
	}
	if got := readAll(t, b, info.Key); string(got) != "abc" {
		t.Fatalf("read back %q", got)
	}
	// Seeking: ranges of the object.
	big := bytes.Repeat([]byte("0123456789"), 1000)
	bi, err := b.Put(ctx, "", writeBytes(big))
	if err != nil {
		t.Fatal(err)
	}
	f, err := b.Open(ctx, bi.Key)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	buf := make([]byte, 4)
	for _, c := range []struct {
		off    int64
		whence int
		want   string
		pos    int64
	}{
		{5003, io.SeekStart, "3456", 5003},
		{2, io.SeekCurrent, "9012", 5009},
		{-3, io.SeekEnd, "789", 9997},
	} {
		pos, err := f.Seek(c.off, c.whence)
		if err != nil || pos != c.pos {
			t.Fatalf("Seek(%d, %d) = %d, %v; want %d", c.off, c.whence, pos, err, c.pos)
		}
		n, err := io.ReadFull(f, buf[:len(c.want)])
		if err != nil || string(buf[:n]) != c.want {
			t.Fatalf("after Seek(%d, %d) read %q, %v; want %q", c.off, c.whence, buf[:n], err, c.want)
		}
	}
	if n, err := f.Read(buf); n != 0 || err != io.EOF {
		t.Fatalf("read at the end = %d, %v; want 0, EOF", n, err)
	}
	if p, err := b.Path(info.Key); err != nil || !strings.HasSuffix(p, info.Key) {
		t.Fatalf("Path = %q, %v", p, err)
	}
	if err := b.Delete(ctx, info.Key); err != nil {
		t.Fatalf("Delete: %v", err)
	}
	if keys := listBlobs(t, b); !slices.Equal(keys, []string{bi.Key}) {
		t.Fatalf("after Delete List = %v, want only %s", keys, bi.Key)
	}
	_, err = b.Open(ctx, info.Key)
	wantErr(t, "Open deleted", err, store.ErrNotFound)
	if err := b.Delete(ctx, info.Key); err != nil {
		t.Fatalf("Delete of an absent blob: %v; want nil", err)
	}
}

func testBlobsDedup(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	first, err := b.Put(ctx, "", writeBytes([]byte("abc")))
	if err != nil {
		t.Fatal(err)
	}
	called := false
	again, err := b.Put(ctx, abcSHA256, func(tmp string) error { called = true; return os.WriteFile(tmp, []byte("abc"), 0o644) })
	if err != nil || called || !again.Existed || again.Key != first.Key || again.SizeBytes != 3 {
		t.Fatalf("Put with a known hash = %+v, %v (writer called: %v); want the existing blob without writing", again, err, called)
	}
	same, err := b.Put(ctx, "", writeBytes([]byte("abc")))
	if err != nil || !same.Existed || same.Key != first.Key {
		t.Fatalf("Put of the same content = %+v, %v; want Existed", same, err)
	}
	if keys := listBlobs(t, b); !slices.Equal(keys, []string{first.Key}) {
		t.Fatalf("List = %v, want one blob", keys)
	}
}

func testBlobsPutFailures(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	boom := errors.New("writer failed")
	if _, err := b.Put(ctx, "", func(tmp string) error {
		_ = os.WriteFile(tmp, []byte("half"), 0o644)
		return boom
	}); !errors.Is(err, boom) {
		t.Fatalf("Put with a failing writer: %v; want the writer's error", err)
	}
	_, err := b.Put(ctx, sha([]byte("expected")), writeBytes([]byte("something else")))
	wantErr(t, "Put with a wrong hash", err, store.ErrInvalid)
	_, err = b.Put(ctx, "", func(string) error { return nil })
	wantErr(t, "Put whose writer wrote nothing", err, store.ErrInvalid)
	_, err = b.Put(ctx, "ABC", writeBytes([]byte("abc")))
	wantErr(t, "Put with a malformed hash", err, store.ErrInvalid)
	if keys := listBlobs(t, b); len(keys) != 0 {
		t.Fatalf("failed puts left %v", keys)
	}
}

func testBlobsKeys(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	for _, bad := range []string{"../../etc/passwd", "abc.tif", strings.ToUpper(abcSHA256) + ".tif", abcSHA256, abcSHA256 + ".tif/x", ""} {
		_, err := b.Open(ctx, bad)
		wantErr(t, "Open "+bad, err, store.ErrInvalid)
		_, err = b.Path(bad)
		wantErr(t, "Path "+bad, err, store.ErrInvalid)
		wantErr(t, "Delete "+bad, b.Delete(ctx, bad), store.ErrInvalid)
	}
	_, err := b.Open(ctx, sha([]byte("never stored"))+".tif")
	wantErr(t, "Open absent", err, store.ErrNotFound)
}

func testBlobsSweep(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	kept, err := b.Put(ctx, "", writeBytes([]byte("catalogued")))
	if err != nil {
		t.Fatal(err)
	}
	orphan, err := b.Put(ctx, "", writeBytes([]byte("never catalogued")))
	if err != nil {
		t.Fatal(err)
	}
	refs := func(context.Context) (map[string]bool, error) { return map[string]bool{kept.Key: true}, nil }
	// Files but no owner: a store never swept that already holds files is not adopted.
	_, err = b.Sweep(ctx, "cat_first", refs)
	wantErr(t, "Sweep of an unclaimed store holding files", err, store.ErrConflict)
	if keys := listBlobs(t, b); len(keys) != 2 {
		t.Fatalf("refused sweep changed the store: %v", keys)
	}
	if err := b.Delete(ctx, kept.Key); err != nil {
		t.Fatal(err)
	}
	if err := b.Delete(ctx, orphan.Key); err != nil {
		t.Fatal(err)
	}
	if removed, err := b.Sweep(ctx, "cat_first", refs); err != nil || len(removed) != 0 {
		t.Fatalf("first sweep of an empty store = %v, %v", removed, err)
	}
	for _, c := range [][]byte{[]byte("catalogued"), []byte("never catalogued")} {
		if _, err := b.Put(ctx, "", writeBytes(c)); err != nil {
			t.Fatal(err)
		}
	}
	_, err = b.Sweep(ctx, "cat_other", refs)
	wantErr(t, "Sweep for another catalogue", err, store.ErrConflict)
	removed, err := b.Sweep(ctx, "cat_first", refs)
	if err != nil || !slices.Equal(removed, []string{orphan.Key}) {
		t.Fatalf("Sweep = %v, %v; want [%s]", removed, err, orphan.Key)
	}
	if keys := listBlobs(t, b); !slices.Equal(keys, []string{kept.Key}) {
		t.Fatalf("after the sweep List = %v, want [%s]", keys, kept.Key)
	}
	failing := errors.New("catalogue down")
	if _, err := b.Sweep(ctx, "cat_first", func(context.Context) (map[string]bool, error) { return nil, failing }); !errors.Is(err, failing) {
		t.Fatalf("Sweep with an unreadable catalogue: %v", err)
	}
	if keys := listBlobs(t, b); !slices.Equal(keys, []string{kept.Key}) {
		t.Fatalf("a sweep that could not read the catalogue removed files: %v", keys)
	}
}

func testBlobsLease(t *testing.T, b store.Blobs) {
	ctx := ctxT(t)
	if _, err := b.Sweep(ctx, "cat_lease", func(context.Context) (map[string]bool, error) { return nil, nil }); err != nil {
		t.Fatal(err)
	}
	release, err := b.Hold(ctx)
	if err != nil {
		t.Fatal(err)
	}
	orphan, err := b.Put(ctx, "", writeBytes([]byte("import in progress")))
	if err != nil {
		t.Fatal(err)
	}
	none := func(context.Context) (map[string]bool, error) { return map[string]bool{}, nil }
	if removed, err := b.Sweep(ctx, "cat_lease", none); err != nil || len(removed) != 0 {
		t.Fatalf("Sweep during a lease removed %v (err %v); it must wait", removed, err)
	}
	release()
	release() // a second release is harmless
	removed, err := b.Sweep(ctx, "cat_lease", none)
	if err != nil || !slices.Equal(removed, []string{orphan.Key}) {
		t.Fatalf("Sweep after the lease = %v, %v; want [%s]", removed, err, orphan.Key)
	}
}
