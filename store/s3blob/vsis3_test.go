package s3blob_test

import (
	"context"
	"math"
	"math/rand/v2"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/store/s3blob/s3test"
)

// noiseCOG writes a global COG of nx × ny Float32 cells of uniform noise in [lo, lo+span)
// (seeded) and returns its path.
func noiseCOG(tb testing.TB, nx, ny int, seed uint64, lo, span float32) string {
	tb.Helper()
	g := geo.NewGrid(nx, ny, -180+0.5*360.0/float64(nx), 90-0.5*180.0/float64(ny), 360.0/float64(nx), 180.0/float64(ny), geo.CellCentre)
	r := rand.New(rand.NewPCG(seed, seed+1))
	for i := range g.Data {
		g.Data[i] = lo + r.Float32()*span
	}
	src := filepath.Join(tb.TempDir(), "noise.tif")
	if err := gdal.WriteCOG(src, g, gdal.Meta{Units: "m", Name: "noise"}); err != nil {
		tb.Fatal(err)
	}
	return src
}

// TestGDALRangeRead stores a COG in the bucket and reads windows of it in place through
// GDAL's /vsis3/: the values equal those read from the local file, and every GET of the object
// asks for a byte range (HTTP Range, RFC 9110 §14) and is answered 206 Partial Content, so the
// file is never downloaded whole.
func TestGDALRangeRead(t *testing.T) {
	// 1024 × 512 Float32 cells of noise (2 MiB before compression, 512 × 512 tiles): several
	// tiles, so a window needs only some of the file's bytes.
	src := noiseCOG(t, 1024, 512, 3, -6000, 5000)
	local, err := gdal.Open(src, gdal.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer local.Close()
	windows := [][4]int{{0, 0, 64, 64}, {700, 300, 200, 100}, {1024 - 33, 512 - 17, 33, 17}}
	want := make([][]float32, len(windows))
	for i, w := range windows {
		want[i] = make([]float32, w[2]*w[3])
		if err := local.ReadWindow(0, w[0], w[1], w[2], w[3], want[i]); err != nil {
			t.Fatal(err)
		}
	}

	s3test.Each(t, "ranges", func(t *testing.T, srv *s3test.Server) {
		b := open(t, srv, nil)
		info, err := b.Put(context.Background(), "", store.CopyFile(src))
		if err != nil {
			t.Fatal(err)
		}
		path, err := b.Path(info.Key)
		if err != nil {
			t.Fatal(err)
		}
		if !strings.HasPrefix(path, "/vsis3/"+srv.Bucket+"/") {
			t.Fatalf("Path = %q; want a /vsis3/ path in bucket %s", path, srv.Bucket)
		}
		before := len(srv.Requests())
		d, err := gdal.Open(path, gdal.ReadOptions{})
		if err != nil {
			t.Fatalf("GDAL opening %s: %v", path, err)
		}
		defer d.Close()
		if h, lh := d.Header(), local.Header(); h.NX != lh.NX || h.NY != lh.NY || h.West != lh.West || h.North != lh.North || h.DX != lh.DX || h.DY != lh.DY {
			t.Fatalf("header through /vsis3/ %+v; the local file's %+v", h, lh)
		}
		for i, w := range windows {
			got := make([]float32, w[2]*w[3])
			if err := d.ReadWindow(0, w[0], w[1], w[2], w[3], got); err != nil {
				t.Fatalf("window %v: %v", w, err)
			}
			for j := range got {
				if math.Float32bits(got[j]) != math.Float32bits(want[i][j]) {
					t.Fatalf("window %v value %d = %v; the local file has %v", w, j, got[j], want[i][j])
				}
			}
		}
		gets, ranged := 0, 0
		for _, rq := range srv.Requests()[before:] {
			if !strings.HasSuffix(rq.Path, "/"+info.Key) {
				continue
			}
			if rq.Method == http.MethodGet {
				gets++
				if rq.Range != "" && rq.Status == http.StatusPartialContent {
					ranged++
				} else {
					t.Errorf("GET %s (Range %q) answered %d; want a range answered 206", rq.Path, rq.Range, rq.Status)
				}
			}
		}
		if gets == 0 || ranged != gets {
			t.Fatalf("%d GETs of the object, %d of them ranges answered 206; want at least one, all ranges", gets, ranged)
		}
	})
}

// TestUnsignedRefused: a request without a signature is refused (403) by both servers.
func TestUnsignedRefused(t *testing.T) {
	s3test.Each(t, "unsigned", func(t *testing.T, srv *s3test.Server) {
		b := open(t, srv, nil)
		info, err := b.Put(context.Background(), "", store.CopyFile(writeTemp(t, "abc")))
		if err != nil {
			t.Fatal(err)
		}
		resp, err := http.Get(srv.URL + "/" + srv.Bucket + "/" + b.Prefix() + info.Key)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != http.StatusForbidden {
			t.Fatalf("unsigned GET answered %d; want 403", resp.StatusCode)
		}
	})
}

// TestSignatureChecked: with the right access key id but a wrong secret, the SeaweedFS gateway
// refuses the SDK's requests and GDAL's, as it checks each AWS Signature Version 4 (the fake
// checks only the key id, so this runs against SeaweedFS alone).
func TestSignatureChecked(t *testing.T) {
	srv := s3test.StartSeaweed(t, "signed")
	b := open(t, srv, nil)
	info, err := b.Put(context.Background(), "", store.CopyFile(writeTemp(t, "signed bytes")))
	if err != nil {
		t.Fatal(err)
	}
	path, err := b.Path(info.Key)
	if err != nil {
		t.Fatal(err)
	}
	url, cfg := srv.Config("wrongsecret")
	cfg.SecretAccessKey = store.Secret(srv.SecretAccessKey + "x")
	if _, err := openBlobs(url, cfg); err == nil || strings.Contains(err.Error(), srv.SecretAccessKey) {
		t.Fatalf("Open with a wrong secret = %v; want an error without the secret", err)
	}
	// GDAL with the wrong secret (this object was never read, so nothing of it is cached).
	gdal.SetConfigOptions(map[string]string{"AWS_SECRET_ACCESS_KEY": srv.SecretAccessKey + "x", "GDAL_HTTP_MAX_RETRY": "0"})
	t.Cleanup(func() { open(t, srv, nil) }) // puts the right options back
	before := len(srv.Requests())
	if d, err := gdal.Open(path, gdal.ReadOptions{}); err == nil {
		d.Close()
		t.Fatalf("GDAL opened %s with a wrong secret", path)
	}
	refused := 0
	for _, rq := range srv.Requests()[before:] {
		if rq.Status == http.StatusForbidden {
			refused++
		} else if rq.Status < 400 {
			t.Errorf("%s %s with a wrong secret answered %d", rq.Method, rq.Path, rq.Status)
		}
	}
	if refused == 0 {
		t.Fatalf("no request refused with 403 (requests: %v)", srv.Requests()[before:])
	}
}

func writeTemp(t *testing.T, content string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "f")
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}
