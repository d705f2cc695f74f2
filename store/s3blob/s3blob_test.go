package s3blob_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"ridgeflank/store"
	"ridgeflank/store/s3blob"
	"ridgeflank/store/s3blob/s3test"
	"ridgeflank/store/storetest"
)

func TestMain(m *testing.M) {
	code := m.Run()
	s3test.StopSeaweed()
	os.Exit(code)
}

var prefixes atomic.Int64

// open returns a grid store on a fresh prefix of srv's bucket.
func open(t *testing.T, srv *s3test.Server, mod func(*store.ObjectStoreConfig)) *s3blob.Blobs {
	t.Helper()
	url, cfg := srv.Config(fmt.Sprintf("t%d/grids", prefixes.Add(1)))
	if mod != nil {
		mod(&cfg)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	b, err := s3blob.Open(ctx, url, cfg, slog.New(slog.DiscardHandler))
	if err != nil {
		t.Fatalf("opening the grid store: %v", err)
	}
	return b
}

// The tests below that take a server run once against the in-process fake (gofakes3) and
// once against a real S3-compatible server, SeaweedFS's S3 gateway (s3test.Each).

func TestContract(t *testing.T) {
	s3test.Each(t, "contract", func(t *testing.T, srv *s3test.Server) {
		storetest.RunBlobs(t, func(t *testing.T) store.Blobs { return open(t, srv, nil) })
	})
}

func TestThroughStoreOpen(t *testing.T) {
	srv := s3test.Start(t, "viaopen")
	url, cfg := srv.Config("a/b")
	b, err := store.OpenBlobs(context.Background(), store.Config{GridStore: url, ObjectStore: cfg, GridDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	s3b, ok := b.(*s3blob.Blobs)
	if !ok || s3b.Bucket() != "viaopen" || s3b.Prefix() != "a/b/" {
		t.Fatalf("OpenBlobs(%s) = %T %+v", url, b, b)
	}
	info, err := b.Put(context.Background(), "", func(p string) error { return os.WriteFile(p, []byte("abc"), 0o644) })
	if err != nil {
		t.Fatal(err)
	}
	// SHA-256("abc"): FIPS 180-2 Appendix B.1.
	want := "/vsis3/viaopen/a/b/ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad.tif"
	if p, err := b.Path(info.Key); err != nil || p != want {
		t.Fatalf("Path = %q, %v; want %q", p, err, want)
	}
}

func TestCreateBucket(t *testing.T) {
	s3test.Each(t, "existing", testCreateBucket)
}

func testCreateBucket(t *testing.T, srv *s3test.Server) {
	_, cfg := srv.Config("")
	ctx := context.Background()
	// A bucket name of its own for each run: a SeaweedFS server outlives one test.
	fresh := fmt.Sprintf("s3://fresh-%d/g", prefixes.Add(1))
	if _, err := s3blob.Open(ctx, fresh, cfg, slog.New(slog.DiscardHandler)); !errors.Is(err, store.ErrInvalid) {
		t.Fatalf("Open of a missing bucket = %v; want ErrInvalid", err)
	}
	cfg.CreateBucket = true
	b, err := s3blob.Open(ctx, fresh, cfg, slog.New(slog.DiscardHandler))
	if err != nil {
		t.Fatalf("Open with CreateBucket: %v", err)
	}
	if _, err := b.Put(ctx, "", func(p string) error { return os.WriteFile(p, []byte("abc"), 0o644) }); err != nil {
		t.Fatalf("Put into the created bucket: %v", err)
	}
	if _, err := s3blob.Open(ctx, fresh, cfg, slog.New(slog.DiscardHandler)); err != nil {
		t.Fatalf("second Open with CreateBucket (bucket exists): %v", err)
	}
}

// TestMultipart uploads a file larger than one part: it arrives in parts, whole, and the
// temporary file is gone.
func TestMultipart(t *testing.T) {
	s3test.Each(t, "multipart", testMultipart)
}

func testMultipart(t *testing.T, srv *s3test.Server) {
	const part = 5 << 20 // the S3 minimum part size
	b := open(t, srv, func(c *store.ObjectStoreConfig) { c.PartSizeBytes = part })
	data := make([]byte, 2*part+12345)
	for i := range data {
		data[i] = byte(i*7 + i/251)
	}
	var tmpPath string
	info, err := b.Put(context.Background(), "", func(p string) error { tmpPath = p; return os.WriteFile(p, data, 0o644) })
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(data)
	if info.SHA256 != hex.EncodeToString(sum[:]) || info.SizeBytes != int64(len(data)) {
		t.Fatalf("Put = %+v", info)
	}
	if _, err := os.Stat(tmpPath); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("temporary file %s left behind (%v)", tmpPath, err)
	}
	parts := 0
	for _, r := range srv.Requests() {
		if r.Method == "PUT" && strings.Contains(r.Query, "partNumber=") {
			parts++
		}
	}
	if parts != 3 {
		t.Errorf("%d parts uploaded, want 3 (2 full 5 MiB parts and the rest)", parts)
	}
	f, err := b.Open(context.Background(), info.Key)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var got bytes.Buffer
	if _, err := got.ReadFrom(f); err != nil || !bytes.Equal(got.Bytes(), data) {
		t.Fatalf("read back %d bytes (%v), want the %d uploaded", got.Len(), err, len(data))
	}
}

func TestOpenRefuses(t *testing.T) {
	s3test.Each(t, "refuse", testOpenRefuses)
}

func testOpenRefuses(t *testing.T, srv *s3test.Server) {
	ctx := context.Background()
	url, cfg := srv.Config("p")
	for _, c := range []struct {
		name string
		url  string
		mod  func(*store.ObjectStoreConfig)
	}{
		{"no bucket", "s3:///p", nil},
		{"another scheme", "gs://refuse/p", nil},
		{"query", "s3://refuse/p?x=1", nil},
		{"missing bucket", "s3://nobucket/p", nil},
		{"endpoint with a path", url, func(c *store.ObjectStoreConfig) { c.Endpoint += "/sub" }},
		{"endpoint without scheme", url, func(c *store.ObjectStoreConfig) { c.Endpoint = strings.TrimPrefix(c.Endpoint, "http://") }},
		{"half the credentials", url, func(c *store.ObjectStoreConfig) { c.SecretAccessKey = "" }},
		{"tiny parts", url, func(c *store.ObjectStoreConfig) { c.PartSizeBytes = 1 << 20 }},
	} {
		t.Run(c.name, func(t *testing.T) {
			cc := cfg
			if c.mod != nil {
				c.mod(&cc)
			}
			_, err := s3blob.Open(ctx, c.url, cc, slog.New(slog.DiscardHandler))
			if !errors.Is(err, store.ErrInvalid) {
				t.Fatalf("Open(%s) = %v; want ErrInvalid", c.url, err)
			}
		})
	}
	// Wrong credentials are an error, and its text does not carry the secret.
	cc := cfg
	cc.AccessKeyID, cc.SecretAccessKey = "RFWRONGKEY", "wrong-secret-value"
	_, err := s3blob.Open(ctx, url, cc, slog.New(slog.DiscardHandler))
	if err == nil || strings.Contains(err.Error(), "wrong-secret-value") {
		t.Fatalf("Open with wrong credentials = %v; want an error without the secret", err)
	}
}

func TestSecretNeverFormatted(t *testing.T) {
	_, cfg := (&s3test.Server{AccessKeyID: "K", SecretAccessKey: "s3cr3t-value"}).Config("")
	var buf bytes.Buffer
	log := slog.New(slog.NewJSONHandler(&buf, nil))
	log.Info("config", "cfg", cfg, "secret", cfg.SecretAccessKey)
	slog.New(slog.NewTextHandler(&buf, nil)).Info("config", "cfg", cfg)
	out := buf.String() + fmt.Sprintf("%v %+v %#v %s", cfg, cfg, cfg, cfg.SecretAccessKey)
	if strings.Contains(out, "s3cr3t-value") || !strings.Contains(out, "[redacted]") {
		t.Fatalf("secret formatted: %s", out)
	}
	if cfg.SecretAccessKey.Reveal() != "s3cr3t-value" {
		t.Fatal("Reveal lost the value")
	}
}

// TestSharedFiles: uploads and exports kept beside the grid files, invisible to List and
// never removed by a sweep of the grid files.
func TestSharedFiles(t *testing.T) {
	s3test.Each(t, "shared", testSharedFiles)
}

func testSharedFiles(t *testing.T, srv *s3test.Server) {
	b := open(t, srv, nil)
	ctx := context.Background()
	src := t.TempDir() + "/upload.nc"
	if err := os.WriteFile(src, []byte("uploaded bytes"), 0o644); err != nil {
		t.Fatal(err)
	}
	const name = "uploads/upload-1234.nc"
	if err := b.PutFile(ctx, name, src); err != nil {
		t.Fatal(err)
	}
	if keys, err := b.List(ctx); err != nil || len(keys) != 0 {
		t.Fatalf("List = %v, %v; shared files are not grid files", keys, err)
	}
	if removed, err := b.Sweep(ctx, "cat_shared", func(context.Context) (map[string]bool, error) { return nil, nil }); err != nil || len(removed) != 0 {
		t.Fatalf("grid sweep removed %v, %v", removed, err)
	}
	dst := t.TempDir() + "/copy.nc"
	if err := b.GetFile(ctx, name, dst); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(dst); string(got) != "uploaded bytes" {
		t.Fatalf("GetFile wrote %q", got)
	}
	f, err := b.OpenFile(ctx, name)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	buf.ReadFrom(f)
	f.Close()
	if buf.String() != "uploaded bytes" {
		t.Fatalf("OpenFile read %q", buf.String())
	}
	if n, err := b.SweepFiles(ctx, "uploads", time.Hour); err != nil || n != 0 {
		t.Fatalf("SweepFiles of a fresh file removed %d, %v", n, err)
	}
	if n, err := b.SweepFiles(ctx, "uploads", 0); err != nil || n != 1 {
		t.Fatalf("SweepFiles(0) removed %d, %v; want 1", n, err)
	}
	if err := b.GetFile(ctx, name, dst); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("GetFile after the sweep = %v; want ErrNotFound", err)
	}
	if err := b.RemoveFile(ctx, name); err != nil {
		t.Fatalf("RemoveFile of an absent file: %v", err)
	}
	for _, bad := range []string{"uploads/../x", "grids/x.tif", "uploads/", "uploads/.hidden", "exports/a/b", "x"} {
		if err := b.PutFile(ctx, bad, src); !errors.Is(err, store.ErrInvalid) {
			t.Errorf("PutFile(%q) = %v; want ErrInvalid", bad, err)
		}
	}
}

func openBlobs(url string, cfg store.ObjectStoreConfig) (*s3blob.Blobs, error) {
	return s3blob.Open(context.Background(), url, cfg, slog.New(slog.DiscardHandler))
}
